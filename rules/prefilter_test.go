package rules

import (
	"math"
	"math/rand/v2"
	"testing"
	"unsafe"

	"risewatch/fdd"
)

// TestPrefilterScoreRunExact: skipping the signature-score literals on the
// OR of the scores' bit patterns gives the same prefilter bits as
// evaluating every literal, for scores at, just below and just above the
// thresholds, zero of either sign, negative, NaN and infinite.
func TestPrefilterScoreRunExact(t *testing.T) {
	e := mustEval(t, testSite(1, 2))
	w := &e.pf.words[0]
	if len(w.scoreGE) == 0 {
		t.Fatal("built-in rules: no signature-score literals taken apart in the prefilter")
	}
	tMin := math.Float64frombits(w.scoreMinBits)
	vals := []float64{0, math.Copysign(0, -1), 1e-300, math.Nextafter(tMin, 0), tMin, math.Nextafter(tMin, 1), 0.3, 0.5,
		0.49999999999999994, 0.9, 1, -0.1, -1, math.NaN(), -math.NaN(), math.Inf(1), math.Inf(-1)}
	rng := rand.New(rand.NewPCG(5, 9))
	var ev fdd.Evidence
	skipped := 0
	for i := 0; i < 20000; i++ {
		randEvidence(rng, &ev, 0.1)
		for k := range ev.Scores {
			ev.Scores[k] = 0
			if rng.IntN(3) == 0 {
				ev.Scores[k] = vals[rng.IntN(len(vals))]
			}
		}
		p := unsafe.Pointer(&ev)
		if got, want := w.pass(p), w.plainPass(p); got != want {
			t.Fatalf("scores %v: prefilter bits %#x, every literal gives %#x", ev.Scores, got, want)
		}
		var or uint64
		for _, s := range ev.Scores {
			or |= math.Float64bits(s)
		}
		if or < w.scoreMinBits {
			skipped++
		}
	}
	if skipped == 0 {
		t.Fatal("the score shortcut was never taken")
	}
}

// TestFlagMask checks the word-gather gate mask against the truth values
// one by one, for every combination, with every byte after the flags set.
func TestFlagMask(t *testing.T) {
	for c := 0; c < 1<<5; c++ {
		var x fdd.Evidence
		w := (*[8]byte)(unsafe.Pointer(&x.Usable))
		w[5], w[6], w[7] = 0xff, 0xff, 0xff // the bytes after the flags (padding): all ones
		b := func(i int) bool { return c&(1<<i) != 0 }
		x.Usable, x.Steady, x.PlantOn, x.FanOn, x.Occupied = b(0), b(1), b(2), b(3), b(4)
		var want gateMask
		for i, v := range []bool{x.Usable, x.Steady, x.PlantOn, x.FanOn, x.Occupied} {
			if v {
				want |= []gateMask{gUsable, gSteady, gPlant, gFan, gOccupied}[i]
			}
		}
		if got := flagMask(&x); got != want {
			t.Errorf("flags %05b: mask %06b, want %06b", c, got, want)
		}
	}
}
