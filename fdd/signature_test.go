package fdd

import (
	"testing"
	"time"
)

var t0 = time.Date(2025, 1, 6, 0, 0, 0, 0, time.UTC)

// TestSignaturesSynthetic runs one terminal per fault (faults from day 1 on
// the rated model, no learning) next to a fault-free twin and checks that
// each faulted terminal's most frequent Best is its own kind, and that the
// twin never has a Best.
func TestSignaturesSynthetic(t *testing.T) {
	faults := []fault{fNone, fLeak, fStuck, fFouled, fStarved, fOffset, fFailed, fReversed, fHunting, fNone}
	s := testSite(t, len(faults), true)
	cfg := DefaultConfig()
	cfg.LearnMinPoints = -1 // rated model only: the generator is the model
	en, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	for i, e := range en.TerminalErrors() {
		if e != nil {
			t.Fatalf("terminal %d: %v", i, e)
		}
	}
	onset := t0.Add(24 * time.Hour)
	gens := make([]*gen, len(faults))
	for i, f := range faults {
		on := onset
		if f == fFouled {
			// Fouling builds up over months: the coil is already fouled when
			// monitoring starts (a step within a day would be a lost circuit).
			on = t0.Add(-24 * time.Hour)
		}
		gens[i] = newGen(t, f, uint64(i+1), on)
	}
	days := 4.0
	res := runSynthetic(t, en, gens, t0, days, t0.Add(12*time.Hour))
	for i, f := range faults {
		want := faultKind[f]
		got, n := res.top(i)
		ev := res.evidence[i]
		t.Logf("terminal %d %-15v top %-15v n=%4d hist=%v first=%v | UA %.2f±%.2f F %.2f±%.2f perfH %.2f perfL %.2f leak %.2f lf %.2f off %.2f corr %.2f span %.2f/%.2f rev/h %.1f cusum %.1f",
			i, want, got, n, res.hist[i], res.firstHit[i].Sub(onset), ev.UAFactor, ev.UAFactorSigma, ev.FlowFactor, ev.FlowFactorSigma,
			ev.PerfHigh, ev.PerfLow, ev.LeakRiseK, ev.LeakFlowFrac, ev.OffsetK, ev.RiseValveCorr, ev.RiseSpanK, ev.ExpectedSpanK, ev.ReversalsPerHour, ev.CUSUMLowK)
		if want == KindNone {
			if n != 0 {
				t.Errorf("fault-free terminal %d: Best %v for %d steps, want never", i, got, n)
			}
			continue
		}
		if got != want || n < 30 {
			t.Errorf("terminal %d with %v: most frequent Best %v (%d steps), want %v", i, f, got, n, want)
		}
	}
}

// TestBestKindFollowsBestOrder: the written-out bestKind is the loop over
// bestOrder (first kind with the maximum score at or above the threshold),
// on random scores with many ties, and bestOrder lists every scored kind
// but KindNone once.
func TestBestKindFollowsBestOrder(t *testing.T) {
	seen := map[Kind]bool{}
	for _, k := range bestOrder {
		if k == KindNone || k >= scoredKinds || seen[k] {
			t.Fatalf("bestOrder holds %v out of place", k)
		}
		seen[k] = true
	}
	if len(seen) != int(scoredKinds)-1 {
		t.Fatalf("bestOrder has %d kinds, want %d", len(seen), scoredKinds-1)
	}
	ref := func(sc *[scoredKinds]float64, threshold float64) Kind {
		best, bs := KindNone, 0.0
		for _, k := range bestOrder {
			if sc[k] > bs {
				best, bs = k, sc[k]
			}
		}
		if bs < threshold {
			return KindNone
		}
		return best
	}
	levels := []float64{0, 0.2, 0.5, 0.5, 0.7, 1}
	x := uint64(12345)
	for n := 0; n < 20000; n++ {
		var sc [scoredKinds]float64
		for k := range sc {
			x = x*6364136223846793005 + 1442695040888963407 // LCG (Knuth MMIX)
			sc[k] = levels[(x>>33)%uint64(len(levels))]
		}
		if got, want := bestKind(&sc, 0.5), ref(&sc, 0.5); got != want {
			t.Fatalf("scores %v: bestKind %v, the order gives %v", sc, got, want)
		}
	}
}
