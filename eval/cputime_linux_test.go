package eval

import (
	"syscall"
	"time"
)

// threadCPUTime is the calling OS thread's user+system CPU time
// (getrusage RUSAGE_THREAD, Linux), or 0. Callers lock the goroutine to its
// thread.
func threadCPUTime() time.Duration {
	var ru syscall.Rusage
	const rusageThread = 1 // RUSAGE_THREAD, getrusage(2)
	if syscall.Getrusage(rusageThread, &ru) != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
