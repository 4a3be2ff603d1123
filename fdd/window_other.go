//go:build !amd64 || purego

package fdd

func pushWindowsAsm(st *termState, in *inputs) { pushWindowsGo(&st.in, &st.dat, in) }

func steadinessAsm(st *termState, en *Engine) (datSteady, steady bool) {
	return steadinessGo(&st.in, &st.dat, en)
}

// pushWindows adds an active sample's inputs to the steady-state windows:
// valve, airflow, SAT and HW temperature over the full window, DAT over its
// last half.
func (st *termState) pushWindows(in *inputs) { pushWindowsGo(&st.in, &st.dat, in) }

// steadiness reports whether the DAT is steady over its window (full,
// |slope| and variance within the limits) and whether the whole sample is
// steady (the DAT and every input; see steadinessGo).
func (en *Engine) steadiness(st *termState) (datSteady, steady bool) {
	return steadinessGo(&st.in, &st.dat, en)
}

const haveWindowAsm = false
