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
