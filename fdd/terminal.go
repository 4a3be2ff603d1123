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
	loop, ahu  int // indices, −1 if unknown
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
}

// termState is the bounded running state of one terminal. Its size does not
// depend on how long the engine runs.
type termState struct {
	r, rUA      riser   // calibrated coil at the baseline UA (and UA × uaStep)
	flowScale   float64 // baseline flow factor
	base        Baseline
	learnedBase bool    // base.Source == "learned"
	learnDone   bool    // learning finished (or off)
	secU, secF  float64 // secant/tangent slope ratios of the running factor fit
	secAge      int     // model evaluations since the last secant update

	in  window4 // valve, airflow, SAT, HW temperature over the steady window
	dat window  // DAT over the last half window

	steps      int // samples processed
	lastDAT    float64
	flatRun    int
	flatUMin   float64
	flatUMax   float64
	flatSMin   float64
	flatSMax   float64
	datBadRun  int
	fanRun     int // consecutive fan-on steps
	plantRun   int // steps since the plant last changed state
	lastPlant  bool
	closedRun  int
	zeroRun    int                   // consecutive steps at zero command (≤ zeroCommandFrac)
	evals      [evalCache]evaluation // recent model evaluations (Taylor anchors)
	evalCur    int                   // index of the one in use
	evalNext   int                   // next slot to replace
	evalSteps  int                   // full model evaluations (diagnostic)
	leak       ewma
	offset     ewma
	leakFlow   float64 // leak flow / design flow; −1 until estimated
	designFlow float64 // full-open installed flow at the baseline flow factor, m³/s
	saturated  bool    // valve ≥ saturatedFrac at the last heating-steady sample
	leakAge    int
	chart      chart
	resp       response
	respStats  responseStats
	respAge    int
	rev        reversals
	fac        factorSums
	facOut     factorOut
	designPerf ewma
	perfAge    int // steps since the last heating-steady sample
	perf       ewma

	closed       closedFit // closed-valve rise = a + s·h (offset versus heat)
	closedEst    closedEstimate
	cmpShare     float64 // cached cmp.share()
	closedRaw    ewma    // raw steady closed-valve rise (no model correction)
	closedCap    ewma    // closed-valve rise / full-open rise
	leakRef      float64 // reference leak flow of the closed fit, m³/s (0 until set)
	perfHighLast float64 // last valid high-command performance (NaN until seen)
	cmp          faultCompare
	learnedUA    float64   // learned UA factor that was rejected (0 if none)
	zoneDef      ewma      // heating setpoint − zone temperature
	healthyAt    time.Time // last time the high-command performance was healthy
	shortSince   time.Time // first loss of high-command performance after healthyAt
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

// process turns one sample into evidence e (a copy of en.blank) for
// terminal t with state st.
func (en *Engine) process(s *collector.Sample, t *termStatic, st *termState, e *Evidence) {
	cfg := &en.cfg
	st.steps++
	e.Terminal, e.At = s.Terminal, s.At
	e.Learning = !st.learnedBase && cfg.LearnMinPoints > 0 && !st.learnDone

	var in inputs
	g := gate(s, t, &in)
	e.FanOn, e.PlantOn, e.Occupied = in.fanOn, in.plantOn, s.Occupied
	e.ValveFrac, e.AirflowM3s, e.SupplyC, e.DischargeC, e.HotWaterC = in.u, in.v, in.sat, in.dat, in.hw

	// DAT health (kept even on gated samples; it is data-quality evidence).
	othersOK := g&^(GateMissing|GateRange) == 0 && s.Flags&(collector.FlagAirflow|collector.FlagValve) == 0
	if !in.datOK && othersOK && in.fanOn {
		st.datBadRun++
	} else if in.datOK {
		st.datBadRun = 0
	}
	if in.datOK {
		en.trackFlat(st, in)
	}
	if t.modelErr != nil {
		g |= GateNoModel
	}
	e.DATBadMinutes = float64(st.datBadRun) * en.minPerStep
	e.DATFlatMinutes = float64(st.flatRun) * en.minPerStep
	if st.flatRun >= en.flatSteps {
		g |= GateStale
	}
	if g&dataGates != 0 {
		e.Gates = g
		st.resetWindows()
		scoreDataQuality(e, en, st)
		return
	}
	e.Usable = true

	// Operating state: fan, start-up, plant changes.
	if !in.fanOn {
		st.fanRun = 0
		e.Gates = g | GateFanOff
		st.resetWindows()
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
	e.ClosedMinutes = float64(st.closedRun) * en.minPerStep
	st.rev.add(in.u, cfg.HuntingDeadband, en.revAlpha)
	e.ReversalsPerHour = st.rev.rate * en.stepsPerHour

	if s.Flags&(collector.FlagZone|collector.FlagZoneSet) == 0 && finite(s.ZoneC) && finite(s.ZoneSetC) {
		st.zoneDef.add(s.ZoneSetC-s.ZoneC, en.leakAlpha)
	}
	eat := in.sat + t.ductGainK
	obs := in.dat - eat
	e.ObservedRiseK = obs
	e.DATMinusSATK = in.dat - in.sat

	st.in.push([nCh]float64{chValve: in.u, chAir: in.v, chSAT: in.sat, chHW: in.hw})
	st.dat.push(in.dat)
	st.respAge++
	if st.respAge >= respStatsEvery {
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
			case p < 1-capLossLo && st.shortSince.IsZero() && !st.healthyAt.IsZero():
				st.shortSince = s.At
			}
		}
	}
	en.copyResponse(st, e)
	if st.fanRun < en.startupSteps || st.plantRun < en.startupSteps {
		e.Gates = g | GateStartup
		en.copyRunning(st, e)
		scoreSignatures(e, en, st)
		return
	}
	datSteady := st.dat.full() && math.Abs(st.dat.slope()) <= en.tempSlope && st.dat.variance() <= en.tempVar
	steady := datSteady && en.inputsSteady(st)
	e.Steady = steady
	if !steady {
		g |= GateUnsteady
	}
	e.Gates = g
	e.LeakSigmaK = math.Sqrt(en.sig2Closed)

	noHeat := !in.plantOn || in.hw-eat < offsetNoHeatK
	closedLong := st.closedRun >= en.closedSteps
	// Sensor offset: steady, no heat available, valve closed (or no hot water).
	if datSteady && noHeat && (closedLong || in.hw-eat < offsetNoHeatK) {
		st.offset.add(obs, en.offAlpha)
	}
	if steady && in.plantOn && !noHeat && t.modelErr == nil {
		en.modelSample(st, t, in, eat, obs, e)
	}
	// Leak: heat beyond what the commanded opening gives. At zero command
	// that is the whole rise; between zero and the closed threshold a valve
	// may pass water by design, so the model's rise at the command is taken
	// off (and without a model value the sample says nothing).
	if datSteady && in.plantOn && !noHeat && closedLong {
		st.closedRaw.add(obs, en.leakAlpha)
		x := obs
		if in.u > zeroCommandFrac && t.modelErr == nil {
			x = nan
			if finite(e.ExpectedRiseK) {
				// Take off the commanded heat, but no more than the rise
				// itself (a dead band makes the model over-predict).
				x = obs - math.Min(math.Max(0, e.ExpectedRiseK), math.Max(0, obs))
			}
		}
		if finite(x) {
			st.leak.add(x, en.leakAlpha)
		}
		if st.zeroRun >= en.closedSteps {
			en.leakFlow(st, t, in, eat)
		}
	}
	if st.perfAge < perfExpireSteps {
		st.perfAge++
	}
	en.copyRunning(st, e)
	en.energy(st, in, eat, e)
	scoreSignatures(e, en, st)
}

// inputsSteady checks the full-window steadiness of valve, airflow, SAT and
// HW temperature.
func (en *Engine) inputsSteady(st *termState) bool {
	w4 := &st.in
	if !w4.full() {
		return false
	}
	w := float64(w4.n - 1)
	if math.Abs(w4.slope(chValve))*w > en.cfg.SteadyValveSpan || w4.variance(chValve) > en.valveVar {
		return false
	}
	ma := w4.mean(chAir)
	if w4.variance(chAir) > (en.cfg.SteadyAirflowFrac*ma)*(en.cfg.SteadyAirflowFrac*ma)+1e-6 ||
		math.Abs(w4.slope(chAir))*w > 2*en.cfg.SteadyAirflowFrac*ma+1e-3 {
		return false
	}
	if math.Abs(w4.slope(chSAT)) > en.tempSlope || w4.variance(chSAT) > en.tempVar {
		return false
	}
	return math.Abs(w4.slope(chHW)) <= en.hwSlope
}

// trackFlat follows how long the DAT has repeated exactly the same value and
// how far the valve and SAT moved meanwhile (a live sensor always jitters by
// at least its resolution when its inputs move).
func (en *Engine) trackFlat(st *termState, in inputs) {
	if st.flatRun > 0 && in.dat == st.lastDAT {
		st.flatRun++
		st.flatUMin, st.flatUMax = math.Min(st.flatUMin, in.u), math.Max(st.flatUMax, in.u)
		st.flatSMin, st.flatSMax = math.Min(st.flatSMin, in.sat), math.Max(st.flatSMax, in.sat)
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
}
