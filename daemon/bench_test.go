package daemon

import (
	"fmt"
	"os"
	"runtime"
	"runtime/debug"
	"strconv"
	"strings"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/sim"
	"risewatch/site"
)

// bigSite replicates the demo campus's terminals k times (fresh IDs and
// point names), for memory and throughput figures at campus scale.
func bigSite(b *testing.B, k int) *site.Site {
	sc, err := sim.DemoScenario()
	if err != nil {
		b.Fatal(err)
	}
	sm, err := sim.New(sc)
	if err != nil {
		b.Fatal(err)
	}
	s := sm.Site(b.TempDir())
	base := s.Terminals
	s.Terminals = nil
	for c := 0; c < k; c++ {
		for _, t := range base {
			t.ID = fmt.Sprintf("%s-%d", t.ID, c)
			p := &t.Points
			for _, r := range []*site.PointRef{&p.Airflow, &p.AirflowSetpoint, &p.Discharge, &p.Valve, &p.ZoneTemp, &p.ZoneSetpoint} {
				if r.Defined() {
					r.Name, r.Column = t.ID+"."+r.Column, t.ID+"."+r.Column
				}
			}
			s.Terminals = append(s.Terminals, t)
		}
	}
	s.Index()
	return s
}

func heap() uint64 {
	runtime.GC()
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return m.HeapAlloc
}

// rss is the process's resident set (VmRSS of /proc/self/status, Linux), bytes.
func rss() uint64 {
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return 0
	}
	for _, l := range strings.Split(string(b), "\n") {
		if f := strings.Fields(l); len(f) >= 2 && f[0] == "VmRSS:" {
			kb, _ := strconv.ParseUint(f[1], 10, 64)
			return kb << 10
		}
	}
	return 0
}

// BenchmarkPipelineStep: one analysis step of 5,040 terminals (the demo
// campus 84 times) through the engine, the rules and the daemon's in-memory
// outputs (metrics, plot ring, newest evidence); reports heap bytes per
// terminal of the whole pipeline, the process's resident set per terminal
// (all of it, test binary included) and the resident set the pipeline
// added per terminal.
func BenchmarkPipelineStep(b *testing.B) {
	s := bigSite(b, 84)
	n := len(s.Terminals)
	rs, err := rules.Default()
	if err != nil {
		b.Fatal(err)
	}
	h0, r0 := heap(), rss()
	d := &Daemon{log: quietLog(), opts: Options{}}
	cfg := &Config{Listen: "127.0.0.1:0", Step: time.Minute}
	cfg.defaults()
	pl, err := newPipeline(d, &plan{name: s.Name, site: s, cfg: cfg, rules: rs}, nil, true)
	if err != nil {
		b.Fatal(err)
	}
	batch := make([]collector.Sample, n)
	t0 := time.Date(2025, 1, 14, 8, 0, 0, 0, time.UTC)
	var evs []fdd.Evidence
	var trs []rules.Transition
	step := func(i int) {
		at := t0.Add(time.Duration(i) * time.Minute)
		for ti := range batch {
			batch[ti] = collector.Sample{Terminal: ti, At: at, AirflowM3s: 0.15, AirflowSetM3s: 0.15, DischargeC: 30 + float64(i%7)*0.1,
				SupplyC: 13, ValveFrac: 0.4, HotWaterC: 75, ZoneC: 21, ZoneSetC: 21, PlantOn: true, FanOn: true, Occupied: true}
		}
		evs = pl.eng.Step(batch, evs[:0])
		trs = pl.ev.Step(evs, pl.eng.Loops(), trs[:0])
		for j := range evs {
			pl.met.ObserveEvidence(&evs[j])
		}
		pl.ring.add(evs)
		pl.view.set(evs)
	}
	for i := 0; i < 60; i++ {
		step(i)
	}
	perTerminal := float64(heap()-h0) / float64(n)
	// An hour of plot series and a scrape, as a running daemon has.
	if _, err := pl.met.Registry().Gather(); err != nil {
		b.Fatal(err)
	}
	debug.FreeOSMemory()
	r1 := rss()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		step(60 + i)
	}
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "terminal-steps/s")
	b.ReportMetric(perTerminal, "heapB/terminal")
	b.ReportMetric(float64(r1)/float64(n), "rssB/terminal")
	b.ReportMetric(float64(r1-r0)/float64(n), "addedRssB/terminal")
}
