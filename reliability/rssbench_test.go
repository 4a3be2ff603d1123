package reliability

import (
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync/atomic"
	"testing"
	"time"
)

// rssDaemon is the daemon section of the memory benchmark: every output on
// (InfluxDB sink, e-mail into a spool, the weekly report on its schedule,
// the dashboard), a 5 s poll and a 10 s analysis step as in the daemon soak.
const rssDaemon = `
daemon:
  data_dir: %DIR%/data
  step: 10s
  persist_every: 30s
  influx: {url: %INFLUX%, bucket: risewatch/autogen}
  mail_spool: %DIR%/spool
  notify:
    from: risewatch@test.example
    group_wait: 1s
    routes:
      - {name: operators, to: [ops@test.example]}
  report:
    to: [contractor@test.example]
  memory_limit: %MEMLIMIT%
`

// statusKiB reads one "Name:   N kB" line of /proc/pid/status (VmRSS,
// VmHWM, RssAnon, RssFile, ...), in KiB.
func statusKiB(b testing.TB, pid int, field string) float64 {
	b.Helper()
	raw, err := os.ReadFile(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		b.Fatalf("/proc/%d/status: %v", pid, err)
	}
	for _, line := range strings.Split(string(raw), "\n") {
		if rest, ok := strings.CutPrefix(line, field+":"); ok {
			f := strings.Fields(rest)
			kb, err := strconv.ParseFloat(f[0], 64)
			if err != nil || len(f) != 2 || f[1] != "kB" {
				b.Fatalf("/proc/%d/status: %s line %q", pid, field, line)
			}
			return kb
		}
	}
	b.Fatalf("/proc/%d/status: no %s", pid, field)
	return 0
}

// influxStub accepts InfluxDB v2 writes on loopback and counts their bytes:
// the daemon's sink runs its real path (outbox, client, HTTP) without an
// InfluxDB server sharing the machine's memory and cores.
func influxStub(b testing.TB) (url string, bytes *atomic.Int64) {
	b.Helper()
	bytes = new(atomic.Int64)
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		n, _ := io.Copy(io.Discard, r.Body)
		bytes.Add(n)
		w.WriteHeader(http.StatusNoContent)
	}))
	b.Cleanup(srv.Close)
	return srv.URL, bytes
}

// BenchmarkDaemonRSS5000 is the daemon's resident memory with 5,000
// terminals (issue #6: at most 20 KiB per terminal): `risewatch run` as a
// child process polls the simulated campus (50 groups of 100 terminal
// controllers behind simulated routers, 30,152 points) on loopback every
// 5 s, analyses every 10 s, with /metrics and the dashboard overview
// fetched every poll and every output on. After the first two analysis
// steps and a 10 s warm-up it samples /proc/PID/status every poll for 40 s.
//
// Reported per terminal (KiB = 1024 octets): RSS-peak is VmHWM (the
// highest resident set since start, start-up included), RSS-steady the
// mean VmRSS over the samples, heap-live the mean of the Go heap's live
// objects at the last GC (see liveHeap), and the /metrics text size;
// cpu-% is the child's CPU (user + system) over the measurement in % of
// one core. One run takes about 1.5 minutes; -benchtime 1x.
func BenchmarkDaemonRSS5000(b *testing.B) { benchDaemonRSS(b, 50, 100) }

// BenchmarkDaemonRSS10000 is BenchmarkDaemonRSS5000 at 10,000 terminals.
func BenchmarkDaemonRSS10000(b *testing.B) { benchDaemonRSS(b, 100, 100) }

func benchDaemonRSS(b *testing.B, groups, per int) {
	const poll, step, wall = 5 * time.Second, 10 * time.Second, 40 * time.Second
	c := startCampus(b, CampusConfig{Groups: groups, PerGroup: per, PollInterval: poll, Timeout: 2 * time.Second, Retries: 2})
	ifx, written := influxStub(b)
	dir := b.TempDir()
	cfg := filepath.Join(dir, "site.yaml")
	// RISEWATCH_BENCH_MEMLIMIT sets daemon.memory_limit (default auto),
	// e.g. "off" to see the collector's own headroom.
	memLimit := os.Getenv("RISEWATCH_BENCH_MEMLIMIT")
	if memLimit == "" {
		memLimit = "auto"
	}
	section := strings.NewReplacer("%DIR%", dir, "%INFLUX%", ifx, "%MEMLIMIT%", memLimit).Replace(rssDaemon)
	if err := os.WriteFile(cfg, []byte(c.SiteYAML(section)), 0o644); err != nil {
		b.Fatal(err)
	}
	logFile := filepath.Join(dir, "risewatch.log")
	// RISEWATCH_BENCH_HEAP=FILE saves the child's heap profile (after a GC)
	// at the end of the measurement, through its loopback debug listener.
	var extra []string
	heapFile, debugAddr := os.Getenv("RISEWATCH_BENCH_HEAP"), ""
	if heapFile != "" {
		debugAddr = fmt.Sprintf("127.0.0.1:%d", freePort(b))
		extra = append(extra, "--debug-listen", debugAddr)
	}
	ch := startChild(b, cfg, logFile, extra...)
	pid := ch.cmd.Process.Pid
	metric := func(name string, labels ...string) float64 { v, _ := ch.metric(name, labels...); return v }
	waitFor(b, 3*time.Minute, "the first analysis steps", func() bool {
		time.Sleep(time.Second)
		return metric("risewatch_analysis_steps_total") >= 2
	}, logFile)
	time.Sleep(step)

	n := float64(len(c.Terminals))
	var rss, heapLive, scrapeBytes []float64
	var last string // the last /metrics text
	steps0 := metric("risewatch_analysis_steps_total")
	b.ResetTimer()
	cpu0, t0 := procCPU(b, pid), time.Now()
	for i := 0; i < b.N; i++ {
		tick := time.NewTicker(poll)
		for m0 := time.Now(); time.Since(m0) < wall; {
			<-tick.C
			text, err := ch.scrape()
			if err != nil {
				b.Fatal(err)
			}
			if stale, _ := sumMetric(text, "risewatch_source_stale_points", `source="bas"`); stale != 0 {
				b.Errorf("%g stale points: polls fall behind", stale)
			}
			scrapeBytes, last = append(scrapeBytes, float64(len(text))), text
			heapLive = append(heapLive, liveHeap(text))
			resp, err := http.Get(ch.url + "/")
			if err != nil {
				b.Fatal(err)
			}
			_, _ = io.Copy(io.Discard, resp.Body)
			resp.Body.Close()
			rss = append(rss, statusKiB(b, pid, "VmRSS"))
		}
		tick.Stop()
	}
	b.StopTimer()
	cpu := procCPU(b, pid) - cpu0
	cpuShare := 100 * cpu.Seconds() / time.Since(t0).Seconds()
	peak := statusKiB(b, pid, "VmHWM")
	anon, file := statusKiB(b, pid, "RssAnon"), statusKiB(b, pid, "RssFile")
	if heapFile != "" {
		saveProfile(b, "http://"+debugAddr+"/debug/pprof/heap?gc=1", heapFile)
	}
	steps := metric("risewatch_analysis_steps_total") - steps0
	if want := float64(int(wall/step)-1) * float64(b.N); steps < want {
		b.Errorf("%g analysis steps while measuring, want at least %g", steps, want)
	}
	if written.Load() == 0 {
		b.Errorf("nothing reached the InfluxDB stub")
	}
	ch.stop()
	mean := func(xs []float64) float64 {
		s := 0.0
		for _, x := range xs {
			s += x
		}
		return s / float64(len(xs))
	}
	b.ReportMetric(peak/n, "KiB-RSS-peak/terminal")
	b.ReportMetric(mean(rss)/n, "KiB-RSS-steady/terminal")
	b.ReportMetric(mean(heapLive)/1024/n, "KiB-heap-live/terminal")
	b.ReportMetric(mean(scrapeBytes)/(1<<20), "MiB-scrape")
	b.ReportMetric(cpuShare, "cpu-%")
	b.Logf("%d terminals, memory_limit %s: RSS peak %.1f MiB, steady %.1f MiB, live heap %.1f MiB, /metrics %.2f MiB, %g steps, CPU %.0f %% of one core",
		len(c.Terminals), memLimit, peak/1024, mean(rss)/1024, mean(heapLive)/(1<<20), mean(scrapeBytes)/(1<<20), steps, cpuShare)
	mib := func(name string) float64 { v, _ := sumMetric(last, name); return v / (1 << 20) }
	b.Logf("at the end: RssAnon %.1f MiB, RssFile %.1f MiB; Go heap in use %.1f MiB, idle %.1f MiB (released %.1f MiB), stacks %.1f MiB, runtime total %.1f MiB, next GC %.1f MiB, memory limit %.0f MiB",
		anon/1024, file/1024, mib("go_memstats_heap_inuse_bytes"), mib("go_memstats_heap_idle_bytes"), mib("go_memstats_heap_released_bytes"),
		mib("go_memstats_stack_inuse_bytes"), mib("go_memstats_sys_bytes"), mib("go_memstats_next_gc_bytes"), mib("go_gc_gomemlimit_bytes"))
	b.Logf("runtime metadata: GC %.1f MiB, spans %.1f MiB, profiling buckets %.1f MiB, other %.1f MiB",
		mib("go_memstats_gc_sys_bytes"), mib("go_memstats_mspan_sys_bytes"), mib("go_memstats_buck_hash_sys_bytes"), mib("go_memstats_other_sys_bytes"))
}

// saveProfile writes the profile at url to file.
func saveProfile(b testing.TB, url, file string) {
	b.Helper()
	resp, err := http.Get(url)
	if err != nil {
		b.Fatalf("heap profile: %v", err)
	}
	defer resp.Body.Close()
	raw, err := io.ReadAll(resp.Body)
	if err != nil || resp.StatusCode != http.StatusOK {
		b.Fatalf("heap profile: %v %s", err, resp.Status)
	}
	if err := os.WriteFile(file, raw, 0o644); err != nil {
		b.Fatal(err)
	}
	b.Logf("heap profile of the child in %s (go tool pprof -sample_index=inuse_space %s)", file, file)
}

// liveHeap is the child's live heap from its /metrics text: the runtime's
// /gc/heap/live:bytes (go_gc_heap_live_bytes) when exported, else estimated
// from the next GC goal, which the runtime sets to live × (1 + GOGC/100).
func liveHeap(text string) float64 {
	if live, ok := sumMetric(text, "go_gc_heap_live_bytes"); ok {
		return live
	}
	goal, _ := sumMetric(text, "go_memstats_next_gc_bytes")
	gogc, ok := sumMetric(text, "go_gc_gogc_percent")
	if !ok || gogc <= 0 {
		gogc = 100
	}
	return goal / (1 + gogc/100)
}
