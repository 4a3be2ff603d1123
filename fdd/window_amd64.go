//go:build !purego

package fdd

// pushWindowsAsm is pushWindowsGo in SSE2 assembly (window_amd64.s): the
// same IEEE operations in the same order per channel, valve and airflow in
// one register, SAT and HW temperature in the other, so the sums agree bit
// for bit (TestWindowForms, FuzzWindowForms). It needs windows set up by
// initRing. It takes the termState (one pointer to pass) and works on its
// in and dat windows.
//
//go:noescape
func pushWindowsAsm(st *termState, in *inputs)

// steadinessAsm is steadinessGo in SSE2 assembly: the same slopes and
// variances, every comparison with the Go form's operands and NaN outcome.
//
//go:noescape
func steadinessAsm(st *termState, en *Engine) (datSteady, steady bool)

// pushWindows adds an active sample's inputs to the steady-state windows:
// valve, airflow, SAT and HW temperature over the full window, DAT over its
// last half.
func (st *termState) pushWindows(in *inputs) { pushWindowsAsm(st, in) }

// steadiness reports whether the DAT is steady over its window (full,
// |slope| and variance within the limits) and whether the whole sample is
// steady (the DAT and every input; see steadinessGo).
func (en *Engine) steadiness(st *termState) (datSteady, steady bool) {
	return steadinessAsm(st, en)
}

const haveWindowAsm = true
