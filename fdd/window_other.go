//go:build !amd64 || purego

package fdd

func pushWindowsAsm(st *termState, in *inputs) { pushWindowsGo(&st.in, &st.dat, in) }

// pushWindows adds an active sample's inputs to the steady-state windows
// (valve, airflow, SAT and HW temperature over the full window, DAT over its
// last half) and makes the steady checks that steadiness returns.
func (st *termState) pushWindows(in *inputs) { pushWindowsGo(&st.in, &st.dat, in) }

const haveWindowAsm = false
