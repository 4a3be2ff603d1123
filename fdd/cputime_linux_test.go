package fdd

import "syscall"

// threadCPU returns the calling OS thread's CPU time (user + system) in ns,
// or −1 when unavailable. RUSAGE_THREAD (1) is Linux-specific (getrusage(2)).
func threadCPU() int64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(1, &ru); err != nil {
		return -1
	}
	return ru.Utime.Nano() + ru.Stime.Nano()
}
