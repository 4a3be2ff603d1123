package daemon

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Soft memory limit of the Go runtime (runtime/debug.SetMemoryLimit, the
// GOMEMLIMIT setting). Without one the collector lets the heap grow to twice
// the live heap (GOGC=100) and keeps freed pages for a while, so a daemon
// with a large, static per-terminal state and a periodic burst of garbage
// (a poll, a step, a scrape) sits at two to three times its live heap. A
// limit near the live heap makes the collector run earlier and return freed
// pages to the system sooner; it is soft (the runtime exceeds it rather than
// stop), and the runtime bounds the collector's CPU share when the live heap
// itself reaches it.
//
// The daemon: section's memory_limit is "auto" (default), "off", or a size
// ("160MiB", "1GiB", "200MB"). Auto is MemLimitBase + MemLimitPerTerminal ×
// terminals of the shard, at least MemLimitFloor, from `risewatch run` with
// every output on (reliability.BenchmarkDaemonRSS5000 and ...10000): the
// live heap is about 4 MiB + 8.4 KiB per terminal (45 MiB at 5,000, 87 MiB
// at 10,000 terminals), and the runtime's own metadata (GC, spans,
// profiling buckets, stacks: 7 to 8 MiB) counts against the limit too, so
// auto leaves the collector about 3 KiB per terminal of headroom for the
// garbage of a poll, a step and a scrape (67.3 MiB at 5,000, 118.5 MiB at
// 10,000 terminals; the daemon's CPU 5-6 % and 10 % of one core there). A site whose live heap still reaches 90 % of the
// automatic limit has it raised (risewatch run logs that). A GOMEMLIMIT
// environment variable wins over the file (the runtime has already
// applied it).
const (
	// MemLimitBase covers the fixed live heap (runtime, store, renderers,
	// fonts) and the runtime's metadata.
	MemLimitBase = 16 << 20
	// MemLimitPerTerminal is about 1.3 × the measured live heap per
	// terminal. The collector's headroom is what matters: at 5,000
	// terminals, 3 MiB less of it than auto leaves raised the daemon's CPU
	// from 6 % to 9.5 % of one core.
	MemLimitPerTerminal = 21 << 9 // 10.5 KiB
	// MemLimitFloor keeps small sites (below about 1,500 terminals, where
	// the fixed part dominates) clear of back-to-back collections.
	MemLimitFloor = 32 << 20
)

// memLimit is a decoded memory_limit: the zero value is auto.
type memLimit struct {
	off   bool
	bytes int64 // explicit limit; 0 = auto
}

// parseMemLimit reads "auto" (or empty), "off" or a size with a unit (B,
// KB, MB, GB in powers of 1000; KiB, MiB, GiB in powers of 1024).
func parseMemLimit(s string) (memLimit, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "", "auto":
		return memLimit{}, nil
	case "off":
		return memLimit{off: true}, nil
	}
	n, err := parseSize(s)
	if err != nil {
		return memLimit{}, err
	}
	if n < 16<<20 {
		return memLimit{}, fmt.Errorf("%q: below 16MiB the daemon would spend its time collecting garbage", s)
	}
	return memLimit{bytes: n}, nil
}

var sizeUnits = []struct {
	suffix string
	mult   float64
}{ // longest suffixes first
	{"kib", 1 << 10}, {"mib", 1 << 20}, {"gib", 1 << 30},
	{"kb", 1e3}, {"mb", 1e6}, {"gb", 1e9}, {"b", 1},
}

// parseSize reads "160MiB", "1.5 GiB", "200MB" or "1048576B".
func parseSize(s string) (int64, error) {
	low := strings.ToLower(strings.TrimSpace(s))
	for _, u := range sizeUnits {
		num, ok := strings.CutSuffix(low, u.suffix)
		if !ok {
			continue
		}
		v, err := strconv.ParseFloat(strings.TrimSpace(num), 64)
		if err != nil || v < 0 || math.IsInf(v, 0) || math.IsNaN(v) {
			break
		}
		return int64(v * u.mult), nil
	}
	return 0, fmt.Errorf("%q: expected auto, off or a size such as 160MiB, 1GiB or 200MB", s)
}

// MemoryLimitFor returns the soft memory limit for a shard of terminals
// (memory_limit, see MemLimitBase), and false when it is off.
func (c *Config) MemoryLimitFor(terminals int) (int64, bool) {
	switch {
	case c.memLimit.off:
		return 0, false
	case c.memLimit.bytes > 0:
		return c.memLimit.bytes, true
	}
	return max(MemLimitFloor, MemLimitBase+MemLimitPerTerminal*int64(max(terminals, 0))), true
}
