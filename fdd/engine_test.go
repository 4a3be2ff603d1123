package fdd

import (
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// TestGatesAbsurdValues: absurd sensor values never produce fault evidence
// (only data-quality kinds), and flags mark the right gates.
func TestGatesAbsurdValues(t *testing.T) {
	s := testSite(t, 1, true)
	cfg := DefaultConfig()
	cfg.LearnMinPoints = -1
	en, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	good := collector.Sample{AirflowM3s: 0.1, DischargeC: 30, SupplyC: 13, ValveFrac: 0.5, HotWaterC: 80, PlantOn: true, FanOn: true}
	cases := []struct {
		name string
		mod  func(*collector.Sample)
		want Gate
	}{
		{"DAT open circuit −40 °C", func(s *collector.Sample) { s.DischargeC = -40 }, GateRange},
		{"DAT short +150 °C", func(s *collector.Sample) { s.DischargeC = 150 }, GateRange},
		{"DAT NaN", func(s *collector.Sample) { s.DischargeC = math.NaN() }, GateMissing},
		{"SAT in °F read as °C", func(s *collector.Sample) { s.SupplyC = 55 }, GateRange},
		{"SAT flagged", func(s *collector.Sample) { s.Flags |= collector.FlagSupply }, GateNoAHU},
		{"HW flagged with a point", func(s *collector.Sample) { s.Flags |= collector.FlagHotWater }, GateNoLoop},
		{"HW infinite", func(s *collector.Sample) { s.HotWaterC = math.Inf(1) }, GateNoLoop},
		{"airflow negative", func(s *collector.Sample) { s.AirflowM3s = -1 }, GateRange},
		{"airflow absurd", func(s *collector.Sample) { s.AirflowM3s = 50 }, GateRange},
		{"valve 250 %", func(s *collector.Sample) { s.ValveFrac = 2.5 }, GateRange},
		{"valve flagged", func(s *collector.Sample) { s.Flags |= collector.FlagValve }, GateMissing},
		{"fan status flagged with a point", func(s *collector.Sample) { s.Flags |= collector.FlagFan }, GateMissing},
	}
	var out []Evidence
	for _, c := range cases {
		// Many steps, so a persistent absurd value has every chance to leak into evidence.
		for step := 0; step < 200; step++ {
			smp := good
			smp.At = t0.Add(time.Duration(step) * time.Minute)
			c.mod(&smp)
			out = en.Step([]collector.Sample{smp}, out[:0])
			e := out[0]
			if e.Gates&c.want == 0 {
				t.Fatalf("%s: gates %b, want bit %b", c.name, e.Gates, c.want)
			}
			if e.Usable {
				t.Fatalf("%s: sample marked usable", c.name)
			}
			for k := KindLeakingValve; k < scoredKinds; k++ {
				if k == KindDataQuality || k == KindDATFailed {
					continue
				}
				if e.Scores[k] != 0 {
					t.Fatalf("%s: fault score %v = %g on a gated sample", c.name, k, e.Scores[k])
				}
			}
			if e.Best != KindDataQuality && e.Best != KindDATFailed {
				t.Fatalf("%s: Best %v, want a data-quality kind", c.name, e.Best)
			}
		}
	}
	// A DAT out of range for an hour while the other points are fine is a failed sensor.
	smp := good
	for step := 0; step < 90; step++ {
		smp.At = t0.Add(time.Duration(1000+step) * time.Minute)
		smp.DischargeC = -40
		out = en.Step([]collector.Sample{smp}, out[:0])
	}
	if out[0].Best != KindDATFailed {
		t.Errorf("DAT at −40 °C for 90 min: Best %v, want %v", out[0].Best, KindDATFailed)
	}
}

// TestWindowSlope checks the running least-squares slope and variance against
// a direct computation on a known line plus alternating noise.
func TestWindowSlope(t *testing.T) {
	var w window
	w.init(10)
	for i := 0; i < 1000; i++ {
		x := 3 + 0.25*float64(i)
		if i%2 == 1 {
			x += 0.1
		}
		w.push(x)
	}
	// Exact for alternating ±0.05 about a line of slope 0.25 over an even
	// window: the noise is orthogonal to j only approximately; compute directly.
	var xs []float64
	for k := 9; k >= 0; k-- {
		xs = append(xs, w.ago(k))
	}
	var sj, sx, sjj, sjx float64
	for j, x := range xs {
		fj := float64(j)
		sj += fj
		sx += x
		sjj += fj * fj
		sjx += fj * x
	}
	want := (10*sjx - sj*sx) / (10*sjj - sj*sj)
	if math.Abs(w.slope()-want) > 1e-9 {
		t.Errorf("slope %g, direct %g", w.slope(), want)
	}
	mean := sx / 10
	var v float64
	for _, x := range xs {
		v += (x - mean) * (x - mean)
	}
	if math.Abs(w.variance()-v/10) > 1e-9 {
		t.Errorf("variance %g, direct %g", w.variance(), v/10)
	}
}

// TestLeakGuideline36Threshold: the leak score reaches 1 at the ASHRAE
// Guideline 36 §5.6.6 leaking-valve margin of 3 °C (5 °F) with the valve
// closed for 15 min, and is 0 at half of it.
func TestLeakGuideline36Threshold(t *testing.T) {
	cfg := DefaultConfig()
	if cfg.LeakThresholdK != 3 || cfg.ClosedMinutes != 15 {
		t.Fatalf("defaults: leak threshold %g K, closed %g min; Guideline 36 §5.6.6 gives 3 K (5 °F), 15 min", cfg.LeakThresholdK, cfg.ClosedMinutes)
	}
	s := testSite(t, 1, true)
	en, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	var st termState
	for _, c := range []struct{ rise, want float64 }{{3.0, 1}, {1.5, 0}, {2.25, 0.5}} {
		e := Evidence{ClosedMinutes: 15, PlantOn: true, LeakRiseK: c.rise, LeakFlowFrac: 0.05}
		setNaN(&e)
		e.ClosedMinutes, e.LeakRiseK, e.LeakFlowFrac = 15, c.rise, 0.05
		scoreSignatures(&e, en, &st)
		if math.Abs(e.Scores[KindLeakingValve]-c.want) > 1e-9 {
			t.Errorf("leak rise %g K: score %g, want %g", c.rise, e.Scores[KindLeakingValve], c.want)
		}
	}
}

// TestSensibleHeat checks the energy relation against the IP shorthand
// Q = 1.08·cfm·ΔT°F (ASHRAE Handbook—Fundamentals, ch. 1; 0.075 lb/ft³ ×
// 0.24 Btu/lb·°F × 60): 300 cfm and 5 °F give 1620 Btu/h. Moist air
// (W = 0.008) has c_p ≈ 0.2436, so the exact figure is about 1.0 % higher.
func TestSensibleHeat(t *testing.T) {
	a := newAirProps(0, 0.008, false)
	v := 300 * 0.028316846592 / 60 // 300 cfm in m³/s (NIST SP 811)
	q := a.heatW(v, 5.0/1.8, 20)
	btuh := q * 3600 / 1055.05585262
	if btuh < 1620 || btuh > 1620*1.02 {
		t.Errorf("300 cfm × 5 °F: %.0f Btu/h, want 1620 Btu/h to +2 %% (1.08 rule, dry standard air)", btuh)
	}
}

// TestBaselineLearning: a healthy coil 15 % better in UA and with 20 % less
// water flow than the rated model is learned within its confidence
// intervals, and afterwards nothing is flagged.
func TestBaselineLearning(t *testing.T) {
	s, cfg, en, g := learningSetUp(t)
	g.valve.Cv *= 0.8 // less flow at every command (valve-dominated branch)
	res := runSynthetic(t, en, []*gen{g}, t0, 4, t0.Add(48*time.Hour))
	b := en.Baselines()[0]
	t.Logf("baseline %+v", b)
	if b.Source != "learned" {
		t.Fatalf("baseline source %q (rejected: %s), want learned", b.Source, b.Rejected)
	}
	uaLo, uaHi, flLo, flHi := b.CI95()
	// Check values are the generator's own multipliers (this test's invented case).
	if b.UAFactor < 1.05 || b.UAFactor > 1.25 || uaLo > b.UAFactor || uaHi < b.UAFactor {
		t.Errorf("UA factor %.3f (95 %% CI %.3f..%.3f), want ≈ 1.15", b.UAFactor, uaLo, uaHi)
	}
	if b.FlowFactor > 0.92 || b.FlowFactor < 0.6 || flLo > b.FlowFactor || flHi < b.FlowFactor {
		t.Errorf("flow factor %.3f (95 %% CI %.3f..%.3f), want below 1 (Cv × 0.8)", b.FlowFactor, flLo, flHi)
	}
	if k, n := res.top(0); n > 0 {
		t.Errorf("after learning: Best %v for %d steps, want none", k, n)
	}
	// Round trip through LoadBaselines on a fresh engine.
	en2, _ := NewEngine(s, cfg)
	if err := en2.LoadBaselines(en.Baselines()); err != nil {
		t.Fatal(err)
	}
	if got := en2.Baselines()[0]; got != b {
		t.Errorf("loaded baseline %+v, want %+v", got, b)
	}
	if err := en2.LoadBaselines([]Baseline{{Terminal: "nope", UAFactor: 1, FlowFactor: 1}}); err == nil {
		t.Error("baseline for an unknown terminal: no error")
	}
}

// TestColdLoop: every terminal on a loop short at once (supply 25 K below
// design, not measured) is one loop-level finding, not terminal faults.
func TestColdLoop(t *testing.T) {
	const n = 6
	s := testSite(t, n, false)
	cfg := DefaultConfig()
	cfg.LearnMinPoints = -1
	en, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	onset := t0.Add(24 * time.Hour)
	gens := make([]*gen, n)
	for i := range gens {
		gens[i] = newGen(t, fColdLoop, uint64(10+i), onset)
	}
	res := runSynthetic(t, en, gens, t0, 3, onset.Add(6*time.Hour))
	if res.maxLoop < 0.9 {
		t.Errorf("cold loop: max loop score %.2f, want ≥ 0.9", res.maxLoop)
	}
	for i := 0; i < n; i++ {
		h := res.hist[i]
		if h[KindFouledCoil]+h[KindStarvedCoil] > h[KindColdLoop] {
			t.Errorf("terminal %d on a cold loop: fouled %d, starved %d steps vs cold-loop %d", i, h[KindFouledCoil], h[KindStarvedCoil], h[KindColdLoop])
		}
	}
}

// FuzzStep feeds arbitrary values: no panic, no NaN score, Best valid.
func FuzzStep(f *testing.F) {
	f.Add(0.1, 30.0, 13.0, 0.5, 80.0, true, true, uint32(0))
	f.Add(math.NaN(), math.Inf(1), -1e308, 2.0, -5.0, false, true, uint32(0xffff))
	f.Add(0.0, 13.5, 13.0, 0.0, 80.0, true, true, uint32(collector.FlagPlant))
	s := testSite(f, 1, false)
	f.Fuzz(func(t *testing.T, v, dat, sat, u, hw float64, plant, fan bool, flags uint32) {
		en, err := NewEngine(s, Config{LearnMinPoints: 4, LearnMinHours: 0.01})
		if err != nil {
			t.Fatal(err)
		}
		var out []Evidence
		for i := 0; i < 60; i++ {
			smp := collector.Sample{At: t0.Add(time.Duration(i) * time.Minute), AirflowM3s: v, DischargeC: dat + float64(i%3)*0.01,
				SupplyC: sat, ValveFrac: u, HotWaterC: hw, PlantOn: plant, FanOn: fan, Flags: collector.Flags(flags)}
			if i%7 == 0 {
				smp.Terminal = 5 // unknown: skipped
			}
			out = en.Step([]collector.Sample{smp}, out[:0])
			for _, e := range out {
				for k, sc := range e.Scores {
					if math.IsNaN(sc) || sc < 0 || sc > 1 {
						t.Fatalf("score %v = %g", Kind(k), sc)
					}
				}
				if e.Best < KindNone || e.Best >= kindCount {
					t.Fatalf("Best %d", e.Best)
				}
				if math.IsNaN(e.WastedHeatW) || math.IsNaN(e.ShortfallW) {
					t.Fatal("NaN energy")
				}
			}
		}
	})
}

// TestRelearn: after Relearn a terminal with a learned baseline is back on
// the rated model and learning, then learns its coil again from the
// samples that follow (here a replaced coil 10 % weaker than the first);
// an unknown terminal is an error naming it.
func TestRelearn(t *testing.T) {
	s, _, en, g := learningSetUp(t)
	runSynthetic(t, en, []*gen{g}, t0, 3, t0)
	first := en.Baselines()[0]
	if first.Source != "learned" {
		t.Fatalf("first baseline %q (%s), want learned", first.Source, first.Rejected)
	}
	if err := en.Relearn(s.Terminals[0].ID); err != nil {
		t.Fatal(err)
	}
	if b := en.Baselines()[0]; b.Source != "rated" || b.UAFactor != 1 || b.PerfHighRefN != 0 {
		t.Fatalf("after Relearn: %+v, want the rated model with no healthy level", b)
	}
	g2 := newGen(t, fNone, 3, t0)
	g2.k = g2.k.WithUAMultiplier(1.15 * 0.9)
	start := t0.Add(3 * 24 * time.Hour)
	out := en.Step([]collector.Sample{g2.sample(0, start, 0)}, nil)
	if !out[0].Learning {
		t.Error("the sample after Relearn is not marked learning")
	}
	runSynthetic(t, en, []*gen{g2}, start.Add(time.Minute), 3, start)
	second := en.Baselines()[0]
	t.Logf("first UA factor %.3f, relearned %.3f", first.UAFactor, second.UAFactor)
	if second.Source != "learned" || !second.From.After(first.To) {
		t.Fatalf("relearned baseline %+v, want one learned after %v", second, first.To)
	}
	if r := second.UAFactor / first.UAFactor; r < 0.85 || r > 0.95 {
		t.Errorf("relearned UA factor %.3f is %.3f of the first %.3f, want ≈ 0.9 (the replaced coil)", second.UAFactor, r, first.UAFactor)
	}
	if err := en.Relearn("VAV-NOPE"); !errors.Is(err, ErrUnknownTerminal) || !strings.Contains(err.Error(), "VAV-NOPE") {
		t.Errorf("Relearn of an unknown terminal: %v", err)
	}
}

// learningSetUp is one terminal with learning after 40 points over 24 h and
// a healthy coil 15 % better in UA than its rating.
func learningSetUp(t *testing.T) (*site.Site, Config, *Engine, *gen) {
	t.Helper()
	s := testSite(t, 1, true)
	cfg := DefaultConfig()
	cfg.LearnMinPoints = 40
	cfg.LearnMinHours = 24
	en, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	g := newGen(t, fNone, 3, t0)
	g.k = g.k.WithUAMultiplier(1.15)
	return s, cfg, en, g
}

// TestFitFailureLearnsAgain: a learning period whose fit fails (here too
// few points kept for two factors; a fit that does not converge takes the
// same path) starts a new period rather than settling on the rated model
// for good; a later period with spread learns
// the coil; after fitAttempts failed periods the terminal stays rated, and
// Relearn gives it fresh attempts.
func TestFitFailureLearnsAgain(t *testing.T) {
	s, _, en, g := learningSetUp(t)
	alike := func() {
		l := &en.learn[0]
		for k := 0; k < 3; k++ {
			l.add(learnPoint{at: t0.Add(time.Duration(k) * time.Hour), v: 0.2, eat: 14, u: 0.55, thw: 80, obsRise: 10})
		}
		en.finishLearning(&en.state[0], &en.terms[0])
	}
	alike()
	b, learning := en.Baseline(0)
	if !learning || b.Source != "rated" || !strings.Contains(b.Rejected, "learning again (period 2 of 3)") {
		t.Fatalf("after a failed fit: learning %v, %+v; want learning again on the rated model", learning, b)
	}
	runSynthetic(t, en, []*gen{g}, t0, 3, t0)
	if b, learning := en.Baseline(0); learning || b.Source != "learned" || b.Rejected != "" {
		t.Fatalf("second period: learning %v, %+v; want a learned fit", learning, b)
	}
	if err := en.Relearn(s.Terminals[0].ID); err != nil {
		t.Fatal(err)
	}
	for k := 1; k <= fitAttempts; k++ {
		alike()
		b, learning := en.Baseline(0)
		if last := k == fitAttempts; learning == last || b.Rejected == "" || strings.Contains(b.Rejected, "learning again") == last {
			t.Fatalf("failed period %d of %d: learning %v, rejected %q", k, fitAttempts, learning, b.Rejected)
		}
	}
}
