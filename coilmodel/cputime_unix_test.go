//go:build unix

package coilmodel

import (
	"syscall"
	"testing"
	"time"
)

// processCPU is the user + system CPU time of the process so far
// (getrusage(RUSAGE_SELF)); ok is false if the call failed.
func processCPU() (d time.Duration, ok bool) {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0, false
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano()), true
}

// cpuMeter reports the process CPU time per iteration as "cpu-ns/op" next
// to the wall-clock ns/op. On a shared machine wall time includes time the
// benchmark waited for a core; CPU time does not (run with -cpu 1 so the
// process does little else). Start it after the set-up, before b.Loop.
type cpuMeter struct {
	start time.Duration
	ok    bool
}

func startCPU() cpuMeter {
	d, ok := processCPU()
	return cpuMeter{start: d, ok: ok}
}

func (m cpuMeter) report(b *testing.B) {
	d, ok := processCPU()
	if !m.ok || !ok || b.N == 0 {
		return
	}
	b.ReportMetric(float64(d-m.start)/float64(b.N), "cpu-ns/op")
}
