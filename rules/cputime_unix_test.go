//go:build unix

package rules

import (
	"syscall"
	"time"
)

// cpuTime is the process's user+system CPU time (getrusage), or 0. With
// -cpu 1 it is the benchmark's own work plus the runtime's, which on a
// shared machine is a steadier figure than wall time.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
