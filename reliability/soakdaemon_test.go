package reliability

import (
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// procCPU is user+system CPU of process pid from /proc/pid/stat (fields
// 14 and 15, in clock ticks of USER_HZ = 100 on Linux, proc(5)).
func procCPU(t testing.TB, pid int) time.Duration {
	t.Helper()
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		t.Fatalf("cpu time: %v", err)
	}
	s := string(b)
	f := strings.Fields(s[strings.LastIndexByte(s, ')')+2:]) // after "pid (comm) "; field 3 is f[0]
	ut, err1 := strconv.ParseInt(f[11], 10, 64)
	st, err2 := strconv.ParseInt(f[12], 10, 64)
	if err1 != nil || err2 != nil {
		t.Fatalf("/proc/%d/stat: %q", pid, s)
	}
	return time.Duration(ut+st) * 10 * time.Millisecond
}

// TestSoakDaemonTenThousandTerminals runs `risewatch run` as a child
// process against the simulated 10,000-terminal campus (a 5 s poll, a 10 s
// analysis step) for about 45 s after warm-up (-short: 1,000 terminals,
// 20 s), sampling the daemon's resident memory and CPU from /proc and its
// /metrics. Every poll must complete (none skipped, no point stale), every
// analysis step must happen, and RSS must stay flat.
func TestSoakDaemonTenThousandTerminals(t *testing.T) {
	t.Parallel()
	groups, per, wall := 100, 100, 45*time.Second
	if testing.Short() {
		groups, per, wall = 10, 100, 20*time.Second
	}
	const poll, step = 5 * time.Second, 10 * time.Second
	c := startCampus(t, CampusConfig{Groups: groups, PerGroup: per, PollInterval: poll, Timeout: 2 * time.Second, Retries: 2})
	dir := t.TempDir()
	cfg := filepath.Join(dir, "site.yaml")
	section := fmt.Sprintf("daemon:\n  data_dir: %s\n  step: %s\n  persist_every: 30s\n  report: {disabled: true}\n", filepath.Join(dir, "data"), step)
	if err := os.WriteFile(cfg, []byte(c.SiteYAML(section)), 0o644); err != nil {
		t.Fatal(err)
	}
	logFile := filepath.Join(dir, "risewatch.log")
	t0 := time.Now()
	ch := startChild(t, cfg, logFile)
	pid := ch.cmd.Process.Pid
	metric := func(name string, labels ...string) float64 { v, _ := ch.metric(name, labels...); return v }
	waitFor(t, 3*time.Minute, "the first analysis steps", func() bool {
		time.Sleep(time.Second) // each scrape is large at this size
		return metric("risewatch_analysis_steps_total") >= 2
	}, logFile)
	startUp := time.Since(t0)
	time.Sleep(step) // warm-up: heap and buffers settle

	type point struct {
		rss   int64
		stale float64
	}
	var pts []point
	text, err := ch.scrape()
	if err != nil {
		t.Fatal(err)
	}
	reads0, _ := sumMetric(text, "risewatch_source_reads_total", `source="bas"`)
	steps0, _ := sumMetric(text, "risewatch_analysis_steps_total")
	cpu0, m0 := procCPU(t, pid), time.Now()
	scrapeBytes := len(text)
	tick := time.NewTicker(poll)
	defer tick.Stop()
	var reads, steps float64
	for time.Since(m0) < wall {
		<-tick.C
		text, err := ch.scrape()
		if err != nil {
			t.Fatal(err)
		}
		stale, _ := sumMetric(text, "risewatch_source_stale_points", `source="bas"`)
		if stale != 0 {
			t.Errorf("%s into the soak: %g stale points", time.Since(m0).Round(time.Second), stale)
		}
		r, _ := sumMetric(text, "risewatch_source_reads_total", `source="bas"`)
		s, _ := sumMetric(text, "risewatch_analysis_steps_total")
		reads, steps = r-reads0, s-steps0
		pts = append(pts, point{rss: rssBytes(t, strconv.Itoa(pid)), stale: stale})
	}
	measured := time.Since(m0)
	cpu := procCPU(t, pid) - cpu0
	ts := time.Now()
	ch.stop()
	stopTook := time.Since(ts)

	// No missed polls or steps: one read per poll interval and one step per
	// analysis step over the measured time, less one for the phase.
	if want := float64(int(measured/poll) - 1); reads < want {
		t.Errorf("%g polls in %s, want at least %g (one per %s): polls were skipped", reads, measured.Round(time.Second), want, poll)
	}
	if want := float64(int(measured/step) - 1); steps < want {
		t.Errorf("%g analysis steps in %s, want at least %g", steps, measured.Round(time.Second), want)
	}
	third := len(pts) / 3
	if third < 1 {
		t.Fatalf("only %d samples", len(pts))
	}
	mean := func(ps []point) float64 {
		s := 0.0
		for _, p := range ps {
			s += float64(p.rss)
		}
		return s / float64(len(ps))
	}
	// Middle third against last third, after the engine's first window has
	// filled its per-terminal state (see TestSoakTenThousandTerminals); only
	// RSS is visible from outside the child, so the looser RSS tolerance.
	r1, r3 := mean(pts[third:2*third]), mean(pts[len(pts)-third:])
	if tol := max(0.2*r1, 32<<20); r3-r1 > tol {
		t.Errorf("daemon RSS grew from %.1f MiB to %.1f MiB (tolerance %.1f MiB): a leak", r1/(1<<20), r3/(1<<20), tol/(1<<20))
	}
	n := len(c.Terminals)
	t.Logf("daemon soak: %d terminals, %d points; start-up to the first steps %s", n, c.Points(), startUp.Round(time.Second))
	t.Logf("daemon soak: %g polls and %g steps in %s (poll %s, step %s)", reads, steps, measured.Round(time.Second), poll, step)
	t.Logf("daemon soak: RSS first third %.1f MiB, last third %.1f MiB = %.1f KiB per terminal", r1/(1<<20), r3/(1<<20), r3/float64(n)/1024)
	t.Logf("daemon soak: CPU %s in %s = %.0f %% of one core, %.2f µs per point polled (poll, assemble, analyse, metrics)",
		cpu.Round(10*time.Millisecond), measured.Round(time.Second), 100*cpu.Seconds()/measured.Seconds(), float64(cpu.Microseconds())/(reads*float64(c.Points())))
	t.Logf("daemon soak: /metrics is %.1f MiB; SIGTERM to exit (state stored) %s", float64(scrapeBytes)/(1<<20), stopTook.Round(100*time.Millisecond))
}
