package fdd

import "math"

// loopAcc accumulates one loop's terminals during a step.
type loopAcc struct {
	seen     bool
	plantOn  bool
	n, short int
	perfSum  float64
	hwSum    float64
	hwN      int
	score    float64
}

// Cold-loop isolation [I]: a loop is judged only with at least
// minLoopTerminals terminals giving recent heating evidence; the score rises
// from 0 to 1 as the short share goes from 30 % to 60 % ("many boxes lose
// capacity at the same time" is a plant-level diagnosis, not one fault per
// box). A measured supply 5–10 K below the design value adds evidence.
const (
	minLoopTerminals = 3
	loopShortLo      = 0.3
	loopShortHi      = 0.6
	loopLowSupplyLo  = 5.0
	loopLowSupplyHi  = 10.0
)

// aggregateLoops computes LoopEvidence for the loops present in ev and
// re-attributes terminal shortfall to a cold loop where the loop score says
// the loop, not the coil, is short.
func (en *Engine) aggregateLoops(ev []Evidence) {
	en.resetLoops()
	for k := range ev {
		e := &ev[k]
		en.accumulate(e, &en.terms[e.Terminal])
	}
	en.finishLoops(ev)
}

func (en *Engine) resetLoops() {
	for i := range en.loops {
		en.loops[i] = loopAcc{}
	}
}

// accumulate adds one terminal's evidence to its loop's sums, for
// AggregateLoops over records gathered from StepTerminals (Step and
// StepView add to the sums inside process, with the same result: see
// TestStepViewSameAsStep). x−x == 0 is finite(x).
func (en *Engine) accumulate(e *Evidence, t *termStatic) {
	a := t.acc
	if a == nil {
		return
	}
	a.seen = true
	a.plantOn = a.plantOn || e.PlantOn
	if e.Usable {
		if t.hwPoint && e.HotWaterC-e.HotWaterC == 0 {
			a.hwSum += e.HotWaterC
			a.hwN++
		}
		if p := e.DesignPerfIndex; p-p == 0 {
			a.n++
			a.perfSum += p
			if e.LoopShort {
				a.short++
			}
		}
	}
}

// finishLoops turns the accumulated sums into LoopEvidence and applies the
// cold-loop isolation to ev; it reports whether any loop scored cold (the
// isolation then rewrote scores in ev).
func (en *Engine) finishLoops(ev []Evidence) bool {
	at := en.lastStep
	if len(ev) > 0 {
		at = ev[len(ev)-1].At
	}
	en.lastStep = at
	en.loopOut = en.loopOut[:0]
	for li := range en.loops {
		a := &en.loops[li]
		if !a.seen {
			continue
		}
		l := &en.site.Loops[li]
		le := LoopEvidence{Loop: li, At: at, PlantOn: a.plantOn, ExpectedC: l.DesignSupplyC,
			Terminals: a.n, Short: a.short, SupplyC: nan, LowSupplyK: nan, ShortFraction: nan, MeanPerfIndex: nan}
		if a.hwN > 0 {
			le.SupplyC = a.hwSum / float64(a.hwN)
			le.Measured = true
			if l.DesignSupplyC > 0 {
				le.LowSupplyK = l.DesignSupplyC - le.SupplyC
			}
		}
		if a.n > 0 {
			le.ShortFraction = float64(a.short) / float64(a.n)
			le.MeanPerfIndex = a.perfSum / float64(a.n)
		}
		if a.n >= minLoopTerminals && a.plantOn {
			s := ramp(le.ShortFraction, loopShortLo, loopShortHi)
			if finite(le.LowSupplyK) {
				s = math.Max(s, ramp(le.LowSupplyK, loopLowSupplyLo, loopLowSupplyHi)*ramp(le.ShortFraction, 0.5*loopShortLo, loopShortLo))
			}
			le.Score = s
			a.score = s
		}
		en.loopOut = append(en.loopOut, le)
	}
	// Isolation: shortfall on a cold loop belongs to the loop.
	anyCold := false
	for li := range en.loops {
		anyCold = anyCold || en.loops[li].score > 0
	}
	if !anyCold {
		return false
	}
	for k := range ev {
		e := &ev[k]
		li := en.terms[e.Terminal].loop
		if li < 0 || !e.Usable {
			continue
		}
		s := en.loops[li].score
		if s <= 0 {
			continue
		}
		if e.LoopShort {
			e.Scores[KindColdLoop] = s
		}
		keep := 1 - s
		e.Scores[KindFouledCoil] *= keep
		e.Scores[KindStarvedCoil] *= keep
		e.Scores[KindLowDischarge] *= keep
		e.Best = bestKind(&e.Scores, en.cfg.ScoreThreshold)
	}
	return true
}
