package eval

import (
	"syscall"
	"time"
	"unsafe"
)

// threadCPUTime is the calling OS thread's CPU time from
// clock_gettime(CLOCK_THREAD_CPUTIME_ID) (Linux, clock_gettime(2)), exact to
// the scheduler's accounting rather than to the tick as getrusage's
// RUSAGE_THREAD is, or 0. Callers lock the goroutine to its thread.
func threadCPUTime() time.Duration {
	const clockThreadCPUTime = 3 // CLOCK_THREAD_CPUTIME_ID
	var ts syscall.Timespec
	if _, _, e := syscall.Syscall(syscall.SYS_CLOCK_GETTIME, clockThreadCPUTime, uintptr(unsafe.Pointer(&ts)), 0); e != 0 {
		return 0
	}
	return time.Duration(ts.Nano())
}
