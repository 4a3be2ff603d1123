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
