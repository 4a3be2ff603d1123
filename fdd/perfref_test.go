package fdd

import (
	"math"
	"testing"
	"time"

	"risewatch/collector"
)

// TestPerfHighRelativeToOwnHealthyLevel: with the rated model in use
// (learning off) on a coil that performs better than its rating, the
// high-command performance of the healthy coil reads above 1; PerfHighRef
// takes that level, and after a capacity loss PerfHighRel states the loss
// against the coil's own level, so the model's calibration bias cancels.
func TestPerfHighRelativeToOwnHealthyLevel(t *testing.T) {
	s := testSite(t, 1, true)
	cfg := DefaultConfig()
	cfg.LearnMinPoints = -1 // rated model throughout, as after a rejected fit
	en, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	g := newGen(t, fFouled, 3, time.Time{}) // the UA factor applies from the start
	start := time.Date(2025, 1, 13, 0, 0, 0, 0, time.UTC)
	var healthy, lossy Evidence
	minutesRun := 0
	phase := func(ua float64, days int, last *Evidence) {
		g.foulUA = ua
		for k := 0; k < days*24*60; k++ {
			at := start.Add(time.Duration(minutesRun) * time.Minute)
			minutesRun++
			out := en.Step([]collector.Sample{g.sample(0, at, 0)}, nil)
			if e := out[0]; e.PlantOn && e.FanOn && !math.IsNaN(e.PerfHigh) {
				*last = e
			}
		}
	}
	phase(1.25, 3, &healthy) // a coil 25 % better (UA) than its rating
	phase(0.7, 3, &lossy)    // then a loss of UA to 70 % of the rating
	t.Logf("healthy: perf_high %.3f ref %.3f rel %.3f; after loss: perf_high %.3f ref %.3f rel %.3f",
		healthy.PerfHigh, healthy.PerfHighRef, healthy.PerfHighRel, lossy.PerfHigh, lossy.PerfHighRef, lossy.PerfHighRel)
	if !(healthy.PerfHigh > 1.02) {
		t.Fatalf("healthy perf_high %.3f: the set-up needs a coil the rated model under-rates", healthy.PerfHigh)
	}
	if math.Abs(healthy.PerfHighRef-healthy.PerfHigh) > 0.03 || math.Abs(healthy.PerfHighRel-1) > 0.03 {
		t.Errorf("healthy: ref %.3f rel %.3f, want the coil's own level %.3f and a ratio near 1",
			healthy.PerfHighRef, healthy.PerfHighRel, healthy.PerfHigh)
	}
	if math.Abs(lossy.PerfHighRel-lossy.PerfHigh/lossy.PerfHighRef) > 1e-12 {
		t.Errorf("after loss: rel %.4f, want perf_high / ref = %.4f", lossy.PerfHighRel, lossy.PerfHigh/lossy.PerfHighRef)
	}
	if math.Abs(lossy.PerfHighRef-healthy.PerfHighRef) > 0.02 {
		t.Errorf("after loss: ref %.3f moved from the healthy %.3f (a short coil must not lower its own reference)",
			lossy.PerfHighRef, healthy.PerfHighRef)
	}
	if !(lossy.PerfHighRel < lossy.PerfHigh-0.02) {
		t.Errorf("after loss: rel %.3f not below perf_high %.3f by the model's bias", lossy.PerfHighRel, lossy.PerfHigh)
	}
}

// TestPerfRefSurvivesRestart: the coil's healthy level travels with its
// baseline (Baselines, LoadBaselines), so an engine restarted after the
// healthy days still judges a later loss against the coil's own level, as
// the uninterrupted engine does; a rejected fit comes back as the rated
// model with its rejected UA factor.
func TestPerfRefSurvivesRestart(t *testing.T) {
	s := testSite(t, 1, true)
	cfg := DefaultConfig()
	cfg.LearnMinPoints = -1
	start := time.Date(2025, 1, 13, 0, 0, 0, 0, time.UTC)
	run := func(en *Engine, g *gen, from, minutes int) (last Evidence) {
		for k := from; k < from+minutes; k++ {
			at := start.Add(time.Duration(k) * time.Minute)
			out := en.Step([]collector.Sample{g.sample(0, at, 0)}, nil)
			if e := out[0]; e.PlantOn && e.FanOn && !math.IsNaN(e.PerfHigh) {
				last = e
			}
		}
		return last
	}
	const day = 24 * 60
	en, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	g := newGen(t, fFouled, 3, time.Time{})
	g.foulUA = 1.25
	healthy := run(en, g, 0, 3*day)
	b := en.Baselines()
	if b[0].PerfHighRefN == 0 || math.Abs(b[0].PerfHighRef-healthy.PerfHighRef) > 0.005 {
		t.Fatalf("baseline carries level %.4f over %d values, want the engine's %.4f", b[0].PerfHighRef, b[0].PerfHighRefN, healthy.PerfHighRef)
	}
	g.foulUA = 0.7
	want := run(en, g, 3*day, 2*day)

	en2, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	if err := en2.LoadBaselines(b); err != nil {
		t.Fatal(err)
	}
	g2 := newGen(t, fFouled, 3, time.Time{})
	g2.foulUA = 0.7
	got := run(en2, g2, 3*day, 2*day)
	t.Logf("after loss: uninterrupted ref %.3f rel %.3f; restarted ref %.3f perf_high %.3f rel %.3f", want.PerfHighRef, want.PerfHighRel, got.PerfHighRef, got.PerfHigh, got.PerfHighRel)
	// The response bins start afresh after a restart, so perf_high itself
	// differs; the reference and what it does to the ratio must not.
	if math.Abs(got.PerfHighRef-want.PerfHighRef) > 0.01 {
		t.Errorf("restarted engine: ref %.3f, want the uninterrupted %.3f", got.PerfHighRef, want.PerfHighRef)
	}
	if math.Abs(got.PerfHighRel-got.PerfHigh/got.PerfHighRef) > 1e-12 || !(got.PerfHighRel < got.PerfHigh-0.02) {
		t.Errorf("restarted engine: rel %.3f with perf_high %.3f and ref %.3f, want perf_high / ref, below perf_high", got.PerfHighRel, got.PerfHigh, got.PerfHighRef)
	}
	if !(got.PerfHighRef > 1.02) {
		t.Errorf("restarted engine's reference %.3f: the coil's own level (above 1) was lost", got.PerfHighRef)
	}

	rej := Baseline{Terminal: b[0].Terminal, Source: "rated", UAFactor: 1, FlowFactor: 1, Rejected: "learned UA factor 1.60 out of band", RejectedUAFactor: 1.6}
	en3, _ := NewEngine(s, DefaultConfig())
	if err := en3.LoadBaselines([]Baseline{rej}); err != nil {
		t.Fatal(err)
	}
	if e := run(en3, g2, 5*day, day); e.RejectedUAFactor != 1.6 || e.Learning {
		t.Errorf("after loading a rejected fit: rejected UA factor %g, learning %v; want 1.6 and learning over", e.RejectedUAFactor, e.Learning)
	}
	if got := en3.Baselines()[0]; got.Rejected != rej.Rejected || got.RejectedUAFactor != 1.6 {
		t.Errorf("rejected fit round trip: %+v", got)
	}
	bad := b[0]
	bad.PerfHighRef = math.NaN()
	if err := en3.LoadBaselines([]Baseline{bad}); err == nil {
		t.Error("a NaN healthy level was accepted")
	}
}
