//go:build !purego

package fdd

// pushWindowsAsm is pushWindowsGo in SSE2 assembly (window_amd64.s) on the
// termState's in and dat windows: the same IEEE operations in the same
// order per channel, valve and airflow in one register, SAT and HW
// temperature in the other, so the sums agree bit for bit, and the steady
// checks with the Go form's operands and NaN outcomes (TestWindowForms,
// FuzzWindowForms). It needs windows set up by initRing.
//
//go:noescape
func pushWindowsAsm(st *termState, in *inputs)

// pushWindows adds an active sample's inputs to the steady-state windows
// (valve, airflow, SAT and HW temperature over the full window, DAT over its
// last half) and makes the steady checks that steadiness returns.
func (st *termState) pushWindows(in *inputs) { pushWindowsAsm(st, in) }

const haveWindowAsm = true
