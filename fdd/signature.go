package fdd

import "math"

// Signature scores: each fault kind gets a score in 0..1 from the evidence
// that separates it from the others (fault-signature table: leak ∝ heat with
// the valve closed and the plant on; stuck = rise does not follow command;
// fouled = UA down, shortfall at all commands; starved = flow down, shortfall
// flow-limited; DAT offset = rise with no heat available; reversed = rise
// falls as command rises; hunting = many reversals). The ramps' end points
// are engineering judgement [I] unless a source is named. The rules layer
// applies persistence and its own thresholds; the scores are fdd's isolation.

// ramp maps x linearly from 0 at lo to 1 at hi, clamped; NaN gives 0.
func ramp(x, lo, hi float64) float64 {
	if !(x > lo) {
		return 0
	}
	if x >= hi {
		return 1
	}
	return (x - lo) / (hi - lo)
}

// Score end points [I] unless noted.
const (
	stuckOpenLo, stuckOpenHi   = 0.4, 0.7 // leak flow fraction beyond which "leak" becomes "stuck open"
	respValveSpanMin           = 0.25     // command span needed to judge the response
	respExpSpanMinK            = 2.0      // model rise span needed to judge the response
	respRatioLo, respRatioHi   = 0.2, 0.5 // observed/expected span: unresponsive below
	revCorrLo, revCorrHi       = 0.3, 0.6 // negative correlation for reversed action
	revRatioLo, revRatioHi     = 0.3, 0.6 // observed/expected span below −0.3…−0.6: reversed
	revCapLo, revCapHi         = 0.4, 0.7 // closed-valve rise / full-open rise for a reversed valve
	noHeatPerfLo, noHeatPerfHi = 0.1, 0.25
	capLossLo, capLossHi       = 0.12, 0.25 // 1 − performance at high command
	cusumLo, cusumHi           = 4.0, 8.0   // CUSUM decision interval h = 4–5σ for k = 0.5 (Montgomery) [P], ramped to 8
	offsetLoK, offsetHiK       = 1.2, 2.2   // |offset| ≈ 1.5–3 σ of the closed-valve rise with default accuracies
	huntLo, huntHi             = 8.0, 14.0  // valve reversals per hour
	datBadLoMin, datBadHiMin   = 30.0, 60.0
	shapeLo, shapeHi           = 0.55, 0.7   // SSR share: a flow limit fits clearly better
	abruptLoH, abruptHiH       = 72.0, 240.0 // onset hours: a loss within 3 days is abrupt, beyond 10 days gradual
)

// slowScores are the score terms whose inputs change only on the response
// cadence (the response statistics, the last high-command performance) or
// with a leak inversion (the closed-valve capacity): recomputed there, not
// on every sample.
type slowScores struct {
	unresp, rev float64 // unresponsive (stuck) and reversed valve
}

// update recomputes the slow terms from st.
//
// Response to command: unresponsive (stuck) or reversed. A reversed valve
// delivers at low command what a healthy one delivers at high command: the
// observed span is the expected span with the sign turned. A stuck valve's
// span is near zero (only the 1/V effect of the airflow changing with the
// command remains).
func (ss *slowScores) update(st *termState) {
	r := &st.respStats
	var unresp, rev float64
	if r.valveSpan >= respValveSpanMin && r.expSpan >= respExpSpanMinK && finite(r.riseSpan) {
		ratio := r.riseSpan / r.expSpan
		unresp = 1 - ramp(ratio, respRatioLo, respRatioHi)
		rev = ramp(-r.corr, revCorrLo, revCorrHi) * ramp(-ratio, revRatioLo, revRatioHi)
	}
	// Both ends of the command range: heat at 0 % close to the full-open
	// capacity and no heat at high command is what only a reversed valve
	// (or reversed signal) does; a valve stuck open also heats at high command.
	if c := st.closedCap.v; finite(c) && finite(st.perfHighLast) {
		rev = fmax(rev, ramp(c, revCapLo, revCapHi)*(1-ramp(st.perfHighLast, noHeatPerfLo, noHeatPerfHi)))
	}
	ss.unresp, ss.rev = unresp*(1-rev), rev
}

// sharp turns a 0..1 share into a near step around one half.
func sharp(x float64) float64 { return ramp(x, 0.35, 0.65) }

// scoreSignatures fills e.Scores (every kind) and e.Best for a usable
// sample, computing every term; the response terms come from st.slow.
// process calls scoreActive, which gives the same scores.
func scoreSignatures(e *Evidence, en *Engine, st *termState) {
	var c scoreCache
	c.compute(e, en, st)
	c.finish(e, en, st)
}

// scoreCache holds the score terms of a terminal that depend only on
// values that move with st.pubGen (the response statistics, closed-valve
// fit, running factors, onset), st.scoreGen (the closed-valve and offset
// means, the CUSUM, the performance mean while the high-command
// performance is unknown) and three truth values of the sample (plant on,
// closed long enough for the leak test, learning), with what they were
// computed at.
// On a fan-on sample most of these do not move (measured on the demo
// campus: the key changes on about 40 % of them).
type scoreCache struct {
	pub, gen                                  uint32 // st.pubGen and st.scoreGen of the terms
	flags                                     uint8  // scoreFlags of the terms (0: none)
	leak, stuck, fouled, starved, offset, rev float64
	or                                        uint64 // bitwise OR of their IEEE 754 bit patterns (finish)
}

// scoreFlags packs the truth values the cached terms depend on; bit 3 is
// always set, so a zero scoreCache holds nothing.
func scoreFlags(e *Evidence, closedMin float64) uint8 {
	f := uint8(8)
	if e.PlantOn {
		f |= 1
	}
	if e.ClosedMinutes >= closedMin {
		f |= 2
	}
	if e.Learning {
		f |= 4
	}
	return f
}

// scoreActive is scoreSignatures for process: the cached terms are
// recomputed only when what they depend on moved.
func (en *Engine) scoreActive(e *Evidence, st *termState) {
	c := &st.sc
	if f := scoreFlags(e, en.cfg.ClosedMinutes); f != c.flags || st.pubGen != c.pub || st.scoreGen != c.gen {
		c.compute(e, en, st)
		c.pub, c.gen, c.flags = st.pubGen, st.scoreGen, f
	}
	c.finish(e, en, st)
}

// compute sets the cached terms from e and st.
func (c *scoreCache) compute(e *Evidence, en *Engine, st *termState) {
	cfg := &en.cfg
	unresp, rev := st.slow.unresp, st.slow.rev

	// Sensor offset: measured with the plant off, else the intercept of the
	// closed-valve fit when it is identified.
	off := e.OffsetK
	if !finite(off) && finite(e.ClosedOffsetK) && e.ClosedOffsetSigmaK <= closedFitSigmaMax {
		off = e.ClosedOffsetK
	}

	// Leak (Guideline 36: closed ≥ 15 min, DAT above SAT by 3 K / 5 °F),
	// after the sensor offset.
	var leak, stuckOpen float64
	if e.ClosedMinutes >= cfg.ClosedMinutes && e.PlantOn && finite(e.LeakRiseK) {
		ex := e.LeakRiseK
		if finite(off) {
			ex -= off
		}
		s := ramp(ex, 0.5*cfg.LeakThresholdK, cfg.LeakThresholdK)
		open := ramp(e.LeakFlowFrac, stuckOpenLo, stuckOpenHi)
		leak = s * (1 - open) * (1 - rev) * (1 - unresp)
		stuckOpen = s * open * (1 - rev)
	}

	// Capacity at high command: no heat (stuck closed), or reduced.
	p := e.PerfHigh
	if !finite(p) {
		p = e.PerfAvg
	}
	var noHeat, capLoss float64
	if finite(p) {
		noHeat = 1 - ramp(p, noHeatPerfLo, noHeatPerfHi)
		capLoss = fmax(ramp(1-p, capLossLo, capLossHi),
			0.8*ramp(e.CUSUMLowK, cusumLo, cusumHi)*ramp(1-p, 0.5*capLossLo, capLossLo))
		capLoss *= 1 - noHeat
	}
	// Which cause explains the loss: UA (fouled) or water flow (starved).
	//   - The response shape: a flow limit (series restriction, low branch
	//     pressure) against a UA loss, compared by residuals (faultfit.go).
	//     It needs a learned flow factor: with the rated flow curve the
	//     low-command expectation carries the whole flow-model uncertainty,
	//     larger than the difference between the two shapes.
	//   - The onset: fouling builds up over months; the same UA-type loss
	//     appearing within days on a coil that was performing is a lost
	//     circuit (blocked, air-bound) or a new restriction.
	var fouled, starved float64
	if capLoss > 0 {
		var sv float64
		if finite(e.StarvedShare) && !e.Learning && st.learnedBase {
			sv = ramp(e.StarvedShare, shapeLo, shapeHi)
		}
		if finite(e.OnsetHours) {
			sv = fmax(sv, 1-ramp(e.OnsetHours, abruptLoH, abruptHiH))
		}
		fouled = capLoss * sharp(1-sv) * (1 - unresp)
		starved = capLoss * sharp(sv) * (1 - unresp)
	}

	neg := ramp(-e.ClosedRiseK, offsetLoK, offsetHiK) // DAT below SAT with the fan on and the valve closed: impossible
	c.leak, c.stuck, c.fouled, c.starved = leak, fmax(fmax(unresp, stuckOpen), noHeat), fouled, starved
	c.offset = fmax(ramp(math.Abs(off), offsetLoK, offsetHiK), neg)
	c.rev = rev
	c.or = math.Float64bits(c.leak) | math.Float64bits(c.stuck) | math.Float64bits(c.fouled) | math.Float64bits(c.starved) |
		math.Float64bits(c.offset) | math.Float64bits(c.rev)
}

// finish adds the terms that move every sample (frozen DAT, hunting, low
// DAT) to the cached ones and writes e.Scores and e.Best.
func (c *scoreCache) finish(e *Evidence, en *Engine, st *termState) {
	cfg := &en.cfg
	// A usable sample's DAT is present and in range (DATBadMinutes 0):
	// only the frozen-value part of datFailedScore can score.
	datFailed := datFlatScore(e, st, cfg.FlatlineMinutes)
	hunting := ramp(e.ReversalsPerHour, huntLo, huntHi)
	var lowDAT float64
	if finite(e.DATSetC) && e.PlantOn {
		// Guideline 36 §5.6.6 low-DAT alarm: ≥ 8 K (15 °F) below setpoint.
		lowDAT = ramp(e.DATSetC-e.DischargeC, 0.5*cfg.LowDischargeK, cfg.LowDischargeK)
	}
	sc := &e.Scores
	sc[KindNone], sc[KindLeakingValve], sc[KindStuckValve], sc[KindFouledCoil] = 0, c.leak, c.stuck, c.fouled
	sc[KindStarvedCoil], sc[KindColdLoop], sc[KindDATOffset], sc[KindDATFailed] = c.starved, 0, c.offset, datFailed
	sc[KindReversedValve], sc[KindHunting], sc[KindLowDischarge], sc[KindDataQuality] = c.rev, hunting, lowDAT, 0
	// A branch-free pre-test for bestKind on scores that are all finite and
	// ≥ 0: their IEEE 754 bit patterns order like the values, and the
	// bitwise OR of several patterns is at least the largest, so an OR below
	// the threshold's pattern (or zero: every score 0) means no score
	// reaches it and Best is KindNone. The kinds scored 0 here add nothing
	// to the OR.
	e.Best = KindNone
	or := c.or | math.Float64bits(datFailed) | math.Float64bits(hunting) | math.Float64bits(lowDAT)
	if or != 0 && or >= en.thresholdBits {
		e.Best = bestKind(sc, cfg.ScoreThreshold)
	}
}

// scoreSignatures writes all scoredKinds = 12 scores by hand: these fail to
// compile when a scored kind is added, so the assignments above are kept
// complete.
var (
	_ [scoredKinds - 12]struct{}
	_ [12 - scoredKinds]struct{}
)

// datFailedScore: a DAT frozen at one value while the valve or SAT moved, or
// missing/out of range while the other points are fine.
func datFailedScore(e *Evidence, st *termState, flatMin float64) float64 {
	return fmax(datFlatScore(e, st, flatMin), ramp(e.DATBadMinutes, datBadLoMin, datBadHiMin))
}

// datFlatScore is the frozen-value part of datFailedScore: its ramp runs
// from a quarter to half of FlatlineMinutes.
func datFlatScore(e *Evidence, st *termState, flatMin float64) float64 {
	flat := ramp(e.DATFlatMinutes, 0.25*flatMin, 0.5*flatMin)
	if flat > 0 && !(st.flatUMax-st.flatUMin >= 0.2 || st.flatSMax-st.flatSMin >= 1) {
		flat = 0 // neither valve nor SAT moved: a steady DAT may repeat
	}
	return flat
}

// scoreDataQuality scores a sample with a data gate: only data-quality kinds.
func scoreDataQuality(e *Evidence, en *Engine, st *termState) {
	e.Scores[KindDataQuality] = 1
	e.Scores[KindDATFailed] = datFailedScore(e, st, en.cfg.FlatlineMinutes)
	e.Best = bestKind(&e.Scores, en.cfg.ScoreThreshold)
}

// bestKind is the kind with the highest score at or above threshold; the
// sensor kinds win ties (a failed sensor explains everything else). One pass
// in the order of bestOrder keeps the first kind holding the maximum
// (written out: this runs for every sample with a score near threshold).
func bestKind(sc *[scoredKinds]float64, threshold float64) Kind {
	best, bs := KindNone, 0.0
	if s := sc[KindDATFailed]; s > bs {
		best, bs = KindDATFailed, s
	}
	if s := sc[KindDATOffset]; s > bs {
		best, bs = KindDATOffset, s
	}
	if s := sc[KindColdLoop]; s > bs {
		best, bs = KindColdLoop, s
	}
	if s := sc[KindReversedValve]; s > bs {
		best, bs = KindReversedValve, s
	}
	if s := sc[KindStuckValve]; s > bs {
		best, bs = KindStuckValve, s
	}
	if s := sc[KindLeakingValve]; s > bs {
		best, bs = KindLeakingValve, s
	}
	if s := sc[KindStarvedCoil]; s > bs {
		best, bs = KindStarvedCoil, s
	}
	if s := sc[KindFouledCoil]; s > bs {
		best, bs = KindFouledCoil, s
	}
	if s := sc[KindHunting]; s > bs {
		best, bs = KindHunting, s
	}
	if s := sc[KindLowDischarge]; s > bs {
		best, bs = KindLowDischarge, s
	}
	if s := sc[KindDataQuality]; s > bs {
		best, bs = KindDataQuality, s
	}
	if bs < threshold {
		return KindNone
	}
	return best
}

// bestOrder is the tie-break order of bestKind (every scored kind but
// KindNone).
var bestOrder = [...]Kind{KindDATFailed, KindDATOffset, KindColdLoop, KindReversedValve, KindStuckValve,
	KindLeakingValve, KindStarvedCoil, KindFouledCoil, KindHunting, KindLowDischarge, KindDataQuality}
