package reliability

import (
	"context"
	"fmt"
	"os"
	"runtime"
	"runtime/metrics"
	"sort"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet"
	"risewatch/fdd"
	"risewatch/rules"
)

// rssBytes is the process's resident set (VmRSS of /proc/self/status).
func rssBytes(t testing.TB, pid string) int64 {
	t.Helper()
	b, err := os.ReadFile("/proc/" + pid + "/status")
	if err != nil {
		t.Fatalf("resident memory: %v", err)
	}
	for _, line := range strings.Split(string(b), "\n") {
		if rest, ok := strings.CutPrefix(line, "VmRSS:"); ok {
			f := strings.Fields(rest)
			kb, err := strconv.ParseInt(f[0], 10, 64)
			if err != nil || len(f) != 2 || f[1] != "kB" {
				t.Fatalf("VmRSS line %q", line)
			}
			return kb << 10
		}
	}
	t.Fatal("no VmRSS in /proc/" + pid + "/status")
	return 0
}

// cpuTime is user+system CPU of this process (getrusage RUSAGE_SELF).
func cpuTime(t testing.TB) time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		t.Fatal(err)
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// soakSize is the campus and run length: 10,000 terminals for about 45 s
// of wall time (-short: 1,000 terminals, about 10 s). RELIABILITY_SOAK
// overrides the wall time (a Go duration) for a longer manual run.
func soakSize(t *testing.T) (groups, per int, wall, interval time.Duration) {
	groups, per, wall, interval = 100, 100, 45*time.Second, 2*time.Second
	if testing.Short() {
		groups, per, wall, interval = 10, 100, 10*time.Second, time.Second
	}
	if s := os.Getenv("RELIABILITY_SOAK"); s != "" {
		d, err := time.ParseDuration(s)
		if err != nil {
			t.Fatalf("RELIABILITY_SOAK=%q: %v", s, err)
		}
		wall = d
	}
	return
}

// sample is one measurement between sweeps.
type sample struct {
	at   time.Duration // since the measured phase began
	rss  int64
	heap uint64
}

// TestSoakTenThousandTerminals polls a simulated campus of 10,000 BACnet
// terminals (100 routers with 100 controllers each, six points per
// terminal plus AHU and loop points) through the real client, then feeds
// every sweep through the assembler, the evidence engine and the rules, one
// analysis step (1 min of data time) per sweep. It checks that no sweep is
// missed (every scheduled sweep completes, every point is read Good, every
// step reaches the engine with every terminal's fields present) and that
// resident memory stays flat after warm-up, and logs the figures for the
// README: RSS per terminal, sweep time, CPU per point.
func TestSoakTenThousandTerminals(t *testing.T) {
	groups, per, wall, interval := soakSize(t)
	c := startCampus(t, CampusConfig{Groups: groups, PerGroup: per, Timeout: 2 * time.Second, Retries: 2})
	s, _ := loadSite(t, c.SiteYAML(""))
	nT, nP := len(s.Terminals), c.Points()
	refs := bacnet.PointsFor(s, "bas")
	src, err := bacnet.NewSource("bas", *s.Sources[0].BACnet, refs, nil, time.UTC, quietLog())
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), wall+3*time.Minute)
	defer cancel()
	t0 := time.Now()
	if err := src.Start(ctx); err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	startUp := time.Since(t0)

	step := time.Minute
	asm, err := collector.NewAssembler(s, collector.AssembleConfig{Resample: collector.ResampleConfig{Interval: step},
		Lateness: 10 * step, Sources: []string{"bas"}, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	eng, err := fdd.NewEngine(s, fdd.Config{Step: step})
	if err != nil {
		t.Fatal(err)
	}
	rs, err := rules.Default()
	if err != nil {
		t.Fatal(err)
	}
	ev, err := rules.NewEvaluator(s, rs)
	if err != nil {
		t.Fatal(err)
	}
	var evs []fdd.Evidence
	var trs []rules.Transition
	steps, badSamples, opened := 0, 0, map[string]int{}
	want := collector.FlagAirflow | collector.FlagAirflowSet | collector.FlagDischarge | collector.FlagSupply | collector.FlagValve |
		collector.FlagHotWater | collector.FlagPlant | collector.FlagFan | collector.FlagZone | collector.FlagZoneSet | collector.FlagOccupied
	analyse := func(batch []collector.Sample) {
		steps++
		for i := range batch {
			if batch[i].Flags&want != 0 {
				badSamples++
			}
		}
		evs = eng.Step(batch, evs[:0])
		trs = ev.Step(evs, eng.Loops(), trs[:0])
		for _, tr := range trs {
			if tr.To == rules.StateOpen {
				opened[tr.Kind.String()]++
			}
		}
	}

	dataT0 := time.Date(2025, 1, 14, 8, 0, 0, 0, time.UTC) // an occupied winter morning
	pid := strconv.Itoa(os.Getpid())
	var samples []sample
	var sweepTimes []time.Duration
	var missed, late int
	var cpu0 time.Duration
	var measure0 time.Time
	// Live heap as of the last collection (no forced GC between sweeps).
	live := []metrics.Sample{{Name: "/gc/heap/live:bytes"}}
	warm := max(3, int(wall/interval)/5) // first fifth of the run: heap and buffers settle
	tick := time.NewTicker(interval)
	defer tick.Stop()
	begin := time.Now()
	for i := 0; ; i++ {
		if i == warm {
			runtime.GC()
			cpu0, measure0 = cpuTime(t), time.Now()
			sweepTimes = sweepTimes[:0]
		}
		if i > warm && time.Since(begin) >= wall {
			break
		}
		ts := time.Now()
		readings, err := src.PollOnce(ctx)
		if err != nil {
			t.Fatalf("sweep %d: %v", i, err)
		}
		good := 0
		for _, r := range readings {
			if r.Quality == collector.Good {
				good++
			}
		}
		if len(readings) != nP || good != nP {
			missed++
			t.Errorf("sweep %d: %d readings, %d good; want %d good", i, len(readings), good, nP)
		}
		at := dataT0.Add(time.Duration(i) * step)
		for k := range readings {
			readings[k].At = at
		}
		asm.Add("bas", readings, analyse)
		sweepTimes = append(sweepTimes, time.Since(ts))
		if i >= warm {
			metrics.Read(live)
			samples = append(samples, sample{at: time.Since(measure0), rss: rssBytes(t, pid), heap: live[0].Value.Uint64()})
		}
		select {
		case <-tick.C:
			late++ // the tick came during the sweep: it overran, the next starts at once
		default:
			<-tick.C
		}
	}
	measured := time.Since(measure0)
	cpu := cpuTime(t) - cpu0
	sweeps := len(sweepTimes)

	if missed > 0 {
		t.Errorf("%d of %d sweeps missed points", missed, sweeps+warm)
	}
	if wantSteps := sweeps + warm - 1; steps != wantSteps {
		t.Errorf("%d analysis steps for %d sweeps, want %d (one per sweep after the first)", steps, sweeps+warm, wantSteps)
	}
	if badSamples > 0 {
		t.Errorf("%d terminal samples had a configured field missing", badSamples)
	}
	if st := asm.Stats(); st.Late > 0 || st.UnknownPoint > 0 {
		t.Errorf("assembler: %d late and %d unknown readings", st.Late, st.UnknownPoint)
	}
	stats := &src.Client().Stats
	if n := stats.Timeouts.Load(); n > 0 {
		t.Errorf("%d request timeouts on loopback", n)
	}

	// Flat memory: the mean of the last third of the measured samples is
	// compared with the middle third (the first third still holds the
	// per-terminal state that fills over the engine's first window of
	// steps). The live heap after collection is the sharp test: at most 5 %
	// or 16 MiB (common practice for a soak after warm-up; a leak of one
	// reading per point per sweep would add about 3 MiB a sweep here). RSS
	// also holds garbage the collector has not yet returned (GOGC lets the
	// heap reach twice the live data), so it may grow by twice the live-heap
	// growth plus 20 % or 32 MiB, whichever is larger.
	third := len(samples) / 3
	if third < 2 {
		t.Fatalf("only %d samples after warm-up", len(samples))
	}
	mean := func(xs []sample) (rss, heap float64) {
		for _, x := range xs {
			rss += float64(x.rss)
			heap += float64(x.heap)
		}
		return rss / float64(len(xs)), heap / float64(len(xs))
	}
	r1, h1 := mean(samples[third : 2*third])
	r3, h3 := mean(samples[len(samples)-third:])
	tol := 2*max(0, h3-h1) + max(0.2*r1, 32<<20)
	if r3-r1 > tol {
		t.Errorf("RSS grew from %.1f MiB to %.1f MiB over the run (tolerance %.1f MiB): a leak", r1/(1<<20), r3/(1<<20), tol/(1<<20))
	}
	if htol := max(0.05*h1, 16<<20); h3-h1 > htol {
		t.Errorf("live heap grew from %.1f MiB to %.1f MiB over the run (tolerance %.1f MiB): a leak", h1/(1<<20), h3/(1<<20), htol/(1<<20))
	}
	sort.Slice(sweepTimes, func(i, j int) bool { return sweepTimes[i] < sweepTimes[j] })
	pct := func(p float64) time.Duration {
		return sweepTimes[min(len(sweepTimes)-1, int(p*float64(len(sweepTimes))))]
	}
	kinds := fmt.Sprint(opened)
	t.Logf("soak: %d terminals, %d points on %d routers; start-up (bind, resolve, units check) %s", nT, nP, groups, startUp.Round(time.Millisecond))
	t.Logf("soak: %d sweeps measured over %s after %d warm-up sweeps, interval %s, %d started late; %d analysis steps, opened %s",
		sweeps, measured.Round(time.Second), warm, interval, late, steps, kinds)
	t.Logf("soak: sweep (poll %d points + assemble + engine + rules) median %s, p90 %s, max %s",
		nP, pct(0.5).Round(time.Millisecond), pct(0.9).Round(time.Millisecond), pct(1).Round(time.Millisecond))
	t.Logf("soak: RSS middle third %.1f MiB, last third %.1f MiB (%.1f KiB per terminal, devices included); live Go heap %.1f → %.1f MiB",
		r1/(1<<20), r3/(1<<20), r3/float64(nT)/1024, h1/(1<<20), h3/(1<<20))
	t.Logf("soak: CPU %s over %s (%.0f %% of one core), %.2f µs per point read and analysed (client, devices and analysis in one process)",
		cpu.Round(time.Millisecond), measured.Round(time.Second), 100*cpu.Seconds()/measured.Seconds(),
		float64(cpu.Microseconds())/float64(sweeps*nP))
	t.Logf("soak: client requests %d, retries %d, malformed %d, unmatched %d", stats.Requests.Load(), stats.Retries.Load(),
		stats.Malformed.Load(), stats.Unmatched.Load())
}
