package fdd

import (
	"math"
	"time"

	"risewatch/collector"
)

// termStatic is what the engine knows about a terminal from the site.
type termStatic struct {
	idx        int
	id         string
	loop, ahu  int        // indices, −1 if unknown
	acc        *loopAcc   // the loop's sums in Engine.loops (nil without a loop)
	st         *termState // the terminal's running state in Engine.state
	phys       coilPhysics
	flow       flowCurve // installed flow at baseline (flow factor 1)
	modelErr   error
	ductGainK  float64
	designHWC  float64
	maxAirM3s  float64 // gating upper bound
	fanOnM3s   float64 // airflow above which the fan is inferred on
	fanPoint   bool    // AHU defines a fan status point
	plantPoint bool    // loop defines a plant-enabled point
	hwPoint    bool    // loop defines a supply temperature point

	zonePoint, zoneSetPoint bool // the site configures the zone temperature (heating setpoint) point
	// zoneStaleRun is the run of implausible zone readings (either one)
	// after which the zone deficit is forgotten (zoneRuns), in steps; a
	// uint16 fits the struct's padding.
	zoneStaleRun uint16
}

// termState is the bounded running state of one terminal. Its size does not
// depend on how long the engine runs. Fields are in the order a fan-on
// sample uses them, the per-sample ones first, so one sample touches few
// cache lines; what only the response cadence, the leak inversion, a model
// evaluation or learning needs comes after.
type termState struct {
	steps     int // samples processed
	flatRun   int
	datBadRun int
	fanRun    int // consecutive fan-on steps
	plantRun  int // steps since the plant last changed state
	closedRun int
	zeroRun   int // consecutive steps at zero command (≤ zeroCommandFrac)
	respAge   int
	perfAge   int // steps since the last heating-steady sample
	leakAge   int
	evalCur   int // index of the evaluation in use

	// zoneBadRun and zoneSetBadRun: consecutive samples with an
	// implausible zone temperature and heating setpoint (gate, zoneRuns).
	zoneBadRun, zoneSetBadRun int

	// pubGen counts changes of the published values that move only on
	// the response cadence, a leak inversion or a baseline change (the
	// slow fields of publish): StepView rewrites them when it moved.
	pubGen uint32
	// midGen counts changes of the closed-valve, offset, chart and
	// performance-mean values (publishMid).
	midGen uint32
	// scoreGen counts changes of the score inputs outside pubGen
	// (scoreCache): the closed-valve and offset means, the CUSUM, the
	// performance mean while the high-command performance is unknown.
	scoreGen  uint32
	lastDAT   float64
	flatUMin  float64
	flatUMax  float64
	flatSMin  float64
	flatSMax  float64
	lastPlant bool
	// learnedBase is base.Source == "learned"; learnDone: learning
	// finished (or off); saturated: valve ≥ saturatedFrac at the last
	// heating-steady sample.
	learnedBase, learnDone, saturated bool
	fitFails                          uint8   // learning periods whose fit failed (finishLearning)
	flowScale                         float64 // baseline flow factor
	secU, secF                        float64 // secant/tangent slope ratios of the running factor fit
	designFlow                        float64 // full-open installed flow at the baseline flow factor, m³/s
	leakFlow                          float64 // leak flow / design flow; −1 until estimated
	perfHighLast                      float64 // last valid high-command performance (NaN until seen)
	perfRef                           perfRef // the coil's own healthy high-command performance against the current model
	cmpShare                          float64 // cached cmp.share()
	onsetH                            float64 // OnsetHours of shortSince and healthyAt (NaN if no loss)
	learnedUA                         float64 // learned UA factor that was rejected (0 if none)
	rev                               reversals
	leak, offset, closedRaw           ewma // closed-valve rise net of command heat, no-heat offset, raw closed rise
	perf, designPerf, zoneDef         ewma // performance index, at design HW, heating setpoint − zone temperature
	closedCap                         ewma // closed-valve rise / full-open rise
	chart                             chart
	fac                               factorSums
	facOut                            factorOut
	cmp                               faultCompare
	closedEst                         closedEstimate
	respStats                         responseStats
	slow                              slowScores // score terms that change only with the response cadence or the leak inversion
	sc                                scoreCache // score terms that change only with pubGen, scoreGen and three truth values
	in                                window4    // valve, airflow, SAT, HW temperature over the steady window
	dat                               window     // DAT over the last half window
	resp                              response

	// Touched by model evaluations, the leak inversion, learning.
	evals      [evalCache]evaluation // recent model evaluations (Taylor anchors)
	evalNext   int                   // next slot to replace
	evalSteps  int                   // full model evaluations (diagnostic)
	secAge     int                   // model evaluations since the last secant update
	r, rUA     riser                 // calibrated coil at the baseline UA (and UA × uaStep)
	closed     closedFit             // closed-valve rise = a + s·h (offset versus heat)
	leakRef    float64               // reference leak flow of the closed fit, m³/s (0 until set)
	base       Baseline
	healthyAt  time.Time // last time the high-command performance was healthy
	shortSince time.Time // first loss of high-command performance after healthyAt
}

// perfRefMaxN is the number of healthy high-command performance values the
// reference averages before it becomes an exponentially weighted mean of
// about that many: one value per response cadence (16 steps), so at 1-minute
// steps about 17 h of high-command heating, several mornings' warm-ups [I].
const perfRefMaxN = 64

// perfRefSettle is the number of healthy values before the reference
// guards itself against a loss in progress (perfRef.add) [I].
const perfRefSettle = 8

// perfRef is a coil's demonstrated healthy high-command performance
// (observed / expected rise, response cadence values in the healthy band
// p ≥ 1 − capLossLo/2 of the onset logic). The expected rise comes from the
// rated calibration or a learned fit, either of which misjudges an
// individual coil by some percent (a learned fit is rejected when it lies
// outside the rating band, which leaves the rated model in use); dividing
// by the coil's own healthy level takes that calibration bias out of a
// later capacity loss.
type perfRef struct {
	mean float64
	n    int
}

// add takes one performance value of the healthy band. A value short of
// the coil's own level by more than the healthy margin (half the start of
// the capacity-loss ramp, as for the band) is a loss in progress against
// that level, not a new healthy level: it is left out, so a coil the model
// under-rates does not pull its reference down while it loses capacity.
// The first perfRefSettle values are all taken, so that one early value
// cannot hold the reference up.
func (r *perfRef) add(p float64) {
	if r.n >= perfRefSettle && p < r.mean*(1-capLossLo/2) {
		return
	}
	if r.n < perfRefMaxN {
		r.n++
	}
	r.mean += (p - r.mean) / float64(r.n)
}

// level is the reference: the healthy mean, or 1 (the model itself) while
// the coil has not yet been seen healthy against the current model.
func (r *perfRef) level() float64 {
	if r.n == 0 {
		return 1
	}
	return r.mean
}

// setOnset caches OnsetHours after healthyAt or shortSince changed.
func (st *termState) setOnset() {
	st.pubGen++
	st.onsetH = nan
	if !st.shortSince.IsZero() {
		st.onsetH = st.shortSince.Sub(st.healthyAt).Hours()
	}
}

// factorSums are the decayed normal equations of the running apparent
// UA/flow factor fit (see factors.go).
type factorSums struct{ a00, a01, a11, b0, b1, n float64 }

type factorOut struct{ ua, uaSig, fl, flSig float64 }

// Hysteresis and cadence constants [I].
const (
	heatingMinFrac   = 0.10  // command above which a sample is "heating" for UA/flow evidence
	saturatedFrac    = 0.90  // valve counts as saturated for the cold-loop count
	loopShortPerf    = 0.80  // design performance index below which a saturated box is short
	perfExpireSteps  = 120   // recent heating evidence expires after this many steps without any
	leakInvertEvery  = 30    // steps between leak-flow inversions
	respStatsEvery   = 16    // steps between response-bin statistics
	minExpectedRiseK = 1.0   // expected rise below which the performance index is not formed
	offsetNoHeatK    = 3.0   // HW within this of the entering air: no heat available
	zeroCommandFrac  = 0.005 // command counted as exactly zero (valve on its seat) for the closed-valve fit
)

// nan is a quiet NaN.
var nan = math.NaN()

// stepVals are the values of one active sample that are not running state:
// the published Evidence is written from them and the state in one pass.
type stepVals struct {
	gates                Gate
	learning             bool
	steady               bool
	past                 bool    // past the start-up lockout (full evidence)
	eat, obs             float64 // entering air temperature, observed rise
	f, sigma, res, z, pi float64 // model expected rise, σ, residual, z, performance index (NaN without a model value)
}

// process turns one sample into evidence e for terminal t with state st.
// sl says what e holds: with recNone every field of e is written (e need
// not be cleared); otherwise e is this terminal's record of the previous
// step, written by the path sl.kind names, and only what may differ is
// written. sl is updated. With acc (the terminal's loop sums, nil for
// none) the evidence is added to its loop's sums as accumulate does, from
// the values at hand on each path.
func (en *Engine) process(s *collector.Sample, t *termStatic, st *termState, e *Evidence, sl *viewSlot, acc *loopAcc) {
	cfg := &en.cfg
	st.steps++
	// Learning: no learned baseline yet and learning not finished
	// (initTerminal marks it finished when LearnMinPoints is 0).
	learning := !st.learnedBase && !st.learnDone

	var in inputs
	g := gate(s, t, st, &in) // and the zone sensor runs, on every path

	// DAT health (kept even on gated samples; it is data-quality evidence):
	// the run of a missing or out-of-range DAT while the other points are
	// fine and the fan runs.
	if in.datOK {
		st.datBadRun = 0
		en.trackFlat(st, &in)
	} else if g&^(GateMissing|GateRange) == 0 && s.Flags&(collector.FlagAirflow|collector.FlagValve) == 0 && in.fanOn {
		st.datBadRun++
	}
	if t.modelErr != nil {
		g |= GateNoModel
	}
	if st.flatRun >= en.flatSteps {
		g |= GateStale
	}
	if acc != nil {
		acc.seen = true
		acc.plantOn = acc.plantOn || in.plantOn
	}
	if g&dataGates != 0 {
		st.resetWindows()
		en.idle(e, s, st, &in, g, learning, sl.kind == recData)
		sl.kind = recData
		scoreDataQuality(e, en, st)
		return
	}

	// Usable from here on. A loop with a supply temperature point gives
	// every usable sample a finite HW temperature (gate: GateNoLoop, or
	// GateRange, otherwise): accumulate's finiteness test always holds.
	if acc != nil && t.hwPoint {
		acc.hwSum += in.hw
		acc.hwN++
	}

	// Operating state: fan, start-up, plant changes.
	if !in.fanOn {
		st.fanRun = 0
		st.resetWindows()
		en.idle(e, s, st, &in, g|GateFanOff, learning, sl.kind == recFanOff)
		sl.kind = recFanOff
		e.Usable = true
		return
	}
	st.fanRun++
	if in.plantOn != st.lastPlant {
		st.plantRun = 0
		st.lastPlant = in.plantOn
	}
	st.plantRun++
	if in.u <= cfg.ClosedValveFrac {
		st.closedRun++
	} else {
		st.closedRun = 0
	}
	if in.u <= zeroCommandFrac {
		st.zeroRun++
	} else {
		st.zeroRun = 0
	}
	st.rev.add(in.u, cfg.HuntingDeadband, en.revAlpha)

	if in.zoneOK {
		st.zoneDef.add(s.ZoneSetC-s.ZoneC, en.leakAlpha)
	}
	// Field by field: a composite literal is built in a temporary and copied.
	var v stepVals
	eat := in.sat + t.ductGainK
	obs := in.dat - eat
	n := nan
	v.learning, v.eat, v.obs, v.f, v.sigma, v.res, v.z, v.pi = learning, eat, obs, n, n, n, n, n

	st.pushWindows(&in)
	st.respAge++
	if st.respAge >= respStatsEvery {
		en.responseCadence(st, s)
	}
	if st.fanRun < en.startupSteps || st.plantRun < en.startupSteps {
		v.gates = g | GateStartup
		en.publish(e, s, st, t, &in, &v, sl, acc)
		en.scoreActive(e, st)
		return
	}
	datSteady, steady := en.steadiness(st)
	if !steady {
		g |= GateUnsteady
	}
	v.gates, v.steady, v.past = g, steady, true

	noHeat := !in.plantOn || in.hw-eat < offsetNoHeatK
	closedLong := st.closedRun >= en.closedSteps
	// Sensor offset: steady, no heat available, valve closed (or no hot water).
	if datSteady && noHeat && (closedLong || in.hw-eat < offsetNoHeatK) {
		st.offset.add(obs, en.offAlpha)
		st.midGen++
		st.scoreGen++
	}
	if steady && in.plantOn && !noHeat && t.modelErr == nil {
		en.modelSample(st, t, &in, s.At, &v)
	}
	// Leak: heat beyond what the commanded opening gives. At zero command
	// that is the whole rise; between zero and the closed threshold a valve
	// may pass water by design, so the model's rise at the command is taken
	// off (and without a model value the sample says nothing).
	if datSteady && in.plantOn && !noHeat && closedLong {
		st.midGen++ // closedRaw, leak, leak flow
		st.scoreGen++
		st.closedRaw.add(obs, en.leakAlpha)
		x := obs
		if in.u > zeroCommandFrac && t.modelErr == nil {
			x = nan
			if finite(v.f) {
				// Take off the commanded heat, but no more than the rise
				// itself (a dead band makes the model over-predict).
				x = obs - math.Min(math.Max(0, v.f), math.Max(0, obs))
			}
		}
		if finite(x) {
			st.leak.add(x, en.leakAlpha)
		}
		if st.zeroRun >= en.closedSteps {
			en.leakFlow(st, t, &in, eat)
		}
	}
	if st.perfAge < perfExpireSteps {
		st.perfAge++
	}
	en.publish(e, s, st, t, &in, &v, sl, acc)
	en.scoreActive(e, st)
}

// responseCadence runs every respStatsEvery fan-on steps: decay and
// statistics of the response bins, the running factor solve, the shape
// share and the onset of a capacity loss.
func (en *Engine) responseCadence(st *termState, s *collector.Sample) {
	st.resp.decay(en.respDecay)
	st.respStats = st.resp.stats()
	st.respAge = 0
	en.solveFactors(st)
	st.cmpShare = st.cmp.share()
	if p := st.respStats.perfHigh; finite(p) {
		st.perfHighLast = p
		// Onset of a capacity loss, with hysteresis between the start
		// of the loss ramp and half of it.
		switch {
		case p >= 1-capLossLo/2:
			st.healthyAt, st.shortSince = s.At, time.Time{}
			st.perfRef.add(p)
			st.setOnset()
		case p < 1-capLossLo && st.shortSince.IsZero() && !st.healthyAt.IsZero():
			st.shortSince = s.At
			st.setOnset()
		}
	}
	st.slow.update(st)
	st.pubGen++
}

// idle writes the evidence of a sample that gives no running evidence (a
// data gate or the fan off): the inputs and the data-quality counters over
// the engine's idle template (every computed value NaN or zero), one block
// copy and a few fields instead of a store per field. With same, e already
// holds idle evidence of this terminal from the same path, whose template
// part is unchanged: only the sample's own values are written.
func (en *Engine) idle(e *Evidence, s *collector.Sample, st *termState, in *inputs, g Gate, learning, same bool) {
	if !same {
		*e = en.idleTmpl
	}
	e.Terminal, e.At, e.Gates = s.Terminal, s.At, g
	e.PlantOn, e.FanOn, e.Occupied = in.plantOn, in.fanOn, s.Occupied
	e.ValveFrac, e.AirflowM3s, e.SupplyC, e.DischargeC, e.HotWaterC = in.u, in.v, in.sat, in.dat, in.hw
	e.DATFlatMinutes = float64(st.flatRun) * en.minPerStep
	e.Learning = learning
	e.DATBadMinutes = float64(st.datBadRun) * en.minPerStep
	en.zoneOut(e, s, st)
}

// zoneOut writes the zone readings (NaN when flagged missing) and the zone
// runs of gate, in minutes (every path, every sample). Both readings
// present and both runs 0 is the common case: it only copies and clears.
func (en *Engine) zoneOut(e *Evidence, s *collector.Sample, st *termState) {
	zc, zs, f := s.ZoneC, s.ZoneSetC, s.Flags
	if f&collector.FlagZone != 0 {
		zc = nan
	}
	if f&collector.FlagZoneSet != 0 {
		zs = nan
	}
	e.ZoneC, e.ZoneSetC = zc, zs
	e.ZoneBadMinutes, e.ZoneSetBadMinutes = 0, 0
	if st.zoneBadRun|st.zoneSetBadRun != 0 {
		e.ZoneBadMinutes = float64(st.zoneBadRun) * en.minPerStep
		e.ZoneSetBadMinutes = float64(st.zoneSetBadRun) * en.minPerStep
	}
}

// idleTemplate is the evidence of a sample without running evidence, less
// the sample's own values (idle fills those): every computed value NaN, the
// durations and energies 0, no score, the engine's EWMA limit.
func (en *Engine) idleTemplate() Evidence {
	var e Evidence
	setNaN(&e)
	e.ValveFrac, e.AirflowM3s, e.SupplyC, e.DischargeC, e.HotWaterC = nan, nan, nan, nan, nan
	e.ClosedMinutes, e.ReversalsPerHour, e.DATFlatMinutes, e.DATBadMinutes = 0, 0, 0, 0
	e.ZoneC, e.ZoneSetC, e.ZoneBadMinutes, e.ZoneSetBadMinutes = nan, nan, 0, 0
	e.Scores, e.Best = [scoredKinds]float64{}, KindNone
	e.WastedHeatW, e.AddedCoolingW, e.ShortfallW = 0, 0, 0
	e.EWMALimit = en.ewmaLim
	return e
}

// trackFlat follows how long the DAT has repeated exactly the same value and
// how far the valve and SAT moved meanwhile (a live sensor always jitters by
// at least its resolution when its inputs move).
func (en *Engine) trackFlat(st *termState, in *inputs) {
	if st.flatRun > 0 && in.dat == st.lastDAT {
		st.flatRun++
		st.flatUMin, st.flatUMax = nanMin(st.flatUMin, in.u), nanMax(st.flatUMax, in.u)
		st.flatSMin, st.flatSMax = nanMin(st.flatSMin, in.sat), nanMax(st.flatSMax, in.sat)
		return
	}
	st.flatRun = 1
	st.lastDAT = in.dat
	st.flatUMin, st.flatUMax = in.u, in.u
	st.flatSMin, st.flatSMax = in.sat, in.sat
}

func (st *termState) resetWindows() {
	st.in.reset()
	st.dat.reset()
	st.rev.reset()
}

// setNaN marks every computed value "not available".
func setNaN(e *Evidence) {
	e.DATSetC = nan
	e.ObservedRiseK, e.ExpectedRiseK, e.SigmaK, e.ResidualK, e.PerfIndex = nan, nan, nan, nan, nan
	e.UAFactor, e.UAFactorSigma, e.FlowFactor, e.FlowFactorSigma = nan, nan, nan, nan
	e.ShortfallHighK, e.ShortfallLowK = nan, nan
	e.LeakRiseK, e.LeakFlowFrac, e.OffsetK, e.RiseValveCorr, e.RiseSpanK, e.ValveSpan = nan, nan, nan, nan, nan, nan
	e.CUSUMLowK, e.EWMAResid = nan, nan
	e.DATMinusSATK, e.LeakSigmaK, e.ExpectedSpanK, e.DesignPerfIndex, e.ZScore, e.LeakFlowM3s = nan, nan, nan, nan, nan, nan
	e.PerfAvg, e.PerfHigh, e.PerfLow = nan, nan, nan
	e.ClosedOffsetK, e.ClosedOffsetSigmaK, e.ClosedHeatK, e.ClosedCapacityFrac = nan, nan, nan, nan
	e.PerfHighLast, e.StarvedShare, e.RejectedUAFactor, e.ZoneDeficitK, e.OnsetHours, e.ClosedRiseK = nan, nan, nan, nan, nan, nan
	e.PerfHighRef, e.PerfHighRel = nan, nan
}
