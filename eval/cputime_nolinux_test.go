//go:build !linux

package eval

import "time"

// threadCPUTime falls back to the process CPU time off Linux.
func threadCPUTime() time.Duration { return cpuTime() }
