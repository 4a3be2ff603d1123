package fdd

import (
	"math"
	"time"

	"risewatch/collector"
)

// modelSample compares a steady sample (plant on, heat available) with the
// calibrated coil model: expected rise at the measured airflow, EAT and HW
// temperature and the water flow from the installed valve curve, its
// uncertainty, the residual and everything that feeds on it. The sample's
// values go to v.
func (en *Engine) modelSample(st *termState, t *termStatic, in *inputs, at time.Time, v *stepVals) {
	cfg := &en.cfg
	eat, obs := v.eat, v.obs
	mw := t.flow.at(in.u) * st.flowScale
	ev := en.evaluationNear(st, in.v, eat, mw, in.hw)
	if !ev.ok {
		return
	}
	f := ev.taylor(in.v, eat, mw, in.hw)
	s2 := en.residualVar(ev, in, f, mw, st.base.ResidualSigmaK)
	sigma := math.Sqrt(s2)
	res := obs - f
	z := res / sigma
	v.f, v.sigma, v.res, v.z = f, sigma, res, z
	st.resp.add(in.u, obs, f, res, cfg.ClosedValveFrac)
	if in.u <= heatingMinFrac {
		return
	}
	st.midGen++ // perf, chart
	if f > minExpectedRiseK {
		v.pi = obs / f
		st.perf.add(v.pi, en.perfAlpha)
		if !finite(st.respStats.perfHigh) { // PerfAvg stands in for PerfHigh in the scores
			st.scoreGen++
		}
		// Rise at the design HW temperature: at fixed flows the e-NTU rise
		// scales with the inlet temperature difference, ΔT_air = ε·(C_min/C_air)·(T_hw − EAT).
		if d := in.hw - eat; d > offsetNoHeatK {
			fd := f * (t.designHWC - eat) / d
			if fd > minExpectedRiseK {
				st.designPerf.add(obs/fd, en.perfAlpha)
				st.perfAge = 0
				st.saturated = in.u >= saturatedFrac
			}
		}
	}
	st.chart.add(z, cfg.ChartBlock, cfg.CUSUMK, cfg.EWMALambda)
	if st.chart.blockN == 0 { // a block mean went to the charts
		st.scoreGen++
		if st.chart.cusumLow > 1e6 {
			st.chart.cusumLow = 1e6
		}
	}
	en.updateFactors(st, ev.dLU, ev.dM*mw, res, s2)
	st.cmp.add(res, ev.dLU, ev.dM*mw, restrictionSens(ev.dM, mw, st.designFlow), 1/s2, en.facAlpha)
	if v.learning {
		l := &en.learn[t.idx]
		l.add(learnPoint{at: at, v: in.v, eat: eat, u: in.u, thw: in.hw, obsRise: obs})
		if l.ready(cfg.LearnMinPoints, time.Duration(cfg.LearnMinHours*float64(time.Hour)), at) {
			en.finishLearning(st, t)
		}
	}
}

// evaluationNear returns a model evaluation whose trust region holds the
// inputs: the current one, else one of the few kept from recent operating
// points (a box returns to the same few: closed, minimum, full open, the
// morning warm-up), else a new evaluation replacing the oldest.
func (en *Engine) evaluationNear(st *termState, v, eat, mw, thw float64) *evaluation {
	if ev := &st.evals[st.evalCur]; ev.near(v, eat, mw, thw) {
		return ev
	}
	for k := range st.evals {
		if st.evals[k].near(v, eat, mw, thw) {
			st.evalCur = k
			return &st.evals[k]
		}
	}
	k := st.evalNext
	st.evalNext = (k + 1) & (evalCache - 1)
	st.evalCur = k
	ev := &st.evals[k]
	*ev = evaluate(st.r, st.rUA, v, eat, mw, thw)
	st.evalSteps++
	if ev.ok {
		en.relinearise(st, ev)
	}
	return ev
}

// evalCache is the number of model evaluations kept per terminal [I]: a
// box returns to a few operating points (closed, minimum, full open, the
// morning warm-up), and within one command bin the water flow moves beyond
// the trust region more often than any other input (a steady window allows
// a few per cent of command, a large share of a small flow), so a bin needs
// more than one anchor. On the demo campus over distinct days (days 3-8 of
// the scenario) 16 slots need 0.010 evaluations per terminal-sample where
// one per bin and two spare (8) needed 0.017; an evaluation costs about 1.8
// model runs (RiseSensitivities). Power of two: the index wraps with a mask.
const evalCache = 16

// residualVar is the variance of the residual r = DAT − SAT − g − f(V, SAT+g,
// ṁ, T_hw), first-order propagation of independent input errors (GUM, JCGM
// 100:2008, eq. 10):
//
//	σ² = σ_DAT² + (1+∂f/∂EAT)²·(σ_SAT² + σ_g²) + (∂f/∂V·σ_V)² + (∂f/∂T_hw·σ_hw)²
//	   + (∂f/∂ṁ·ṁ·σ_ṁ,rel)² + (f·σ_model,rel)² + s_baseline²
//
// The constant parts σ_DAT² and σ_SAT² + σ_g² are the engine's sig2DAT and
// sig2EAT.
func (en *Engine) residualVar(ev *evaluation, in *inputs, f, mw, baseSig float64) float64 {
	a := &en.cfg.Accuracy
	sV := fmax(a.AirflowFrac*in.v, a.AirflowFloorM3s) // airflow is gated finite and ≥ 0
	one := 1 + ev.dE
	hwK := a.HotWaterK
	if in.hwAssumed {
		hwK = 3 * a.HotWaterK // design value standing in for a measurement [I]
	}
	return en.sig2DAT + one*one*en.sig2EAT +
		sq(ev.dV*sV) + sq(ev.dT*hwK) + sq(ev.dM*mw*a.WaterFlowFrac) + sq(f*a.ModelFrac) + baseSig*baseSig
}

func sq(x float64) float64 { return x * x }

// updateFactors adds one linearised observation r ≈ g_U·δlnUA + g_F·δlnF
// (weight 1/σ²) to the exponentially forgotten normal equations. The slopes
// are secants through the running estimate rather than tangents at the
// baseline (st.secU, st.secF, see relinearise), so a large fault is not
// distorted by the curvature of the rise in ln UA and ln F: the
// least-squares estimate is then a fixed point of Gauss-Newton iterations
// spread over the samples (Bard 1974, ch. 5).
func (en *Engine) updateFactors(st *termState, gU, gF, res, s2 float64) {
	gU *= st.secU
	gF *= st.secF
	fs := &st.fac
	d := 1 - en.facAlpha
	w := 1 / s2
	fs.a00 = d*fs.a00 + w*gU*gU
	fs.a01 = d*fs.a01 + w*gU*gF
	fs.a11 = d*fs.a11 + w*gF*gF
	fs.b0 = d*fs.b0 + w*gU*res
	fs.b1 = d*fs.b1 + w*gF*res
	fs.n = d*fs.n + 1
}

// solveFactors solves the 2×2 normal equations with the weak prior of the
// baseline fit; the covariance is inflated by ChartBlock for the serial
// correlation of 1-min samples. Called on the response cadence: the factors
// move on the FactorHours time scale.
func (en *Engine) solveFactors(st *termState) {
	fs := &st.fac
	if fs.n == 0 {
		return
	}
	p := 1 / (priorSigmaLog * priorSigmaLog)
	m00, m01, m11 := fs.a00+p, fs.a01, fs.a11+p
	det := m00*m11 - m01*m01
	if !(det > 0) {
		return
	}
	du := (m11*fs.b0 - m01*fs.b1) / det
	df := (m00*fs.b1 - m01*fs.b0) / det
	infl := float64(en.cfg.ChartBlock)
	cu, cf := infl*m11/det, infl*m00/det
	ua, fl := math.Exp(du), math.Exp(df)
	st.facOut = factorOut{ua: ua, uaSig: ua * math.Sqrt(cu), fl: fl, flSig: fl * math.Sqrt(cf)}
}

// relinearise updates the secant-to-tangent slope ratios at the current
// model evaluation: ρ_U = (f(UA·e^δu) − f)/(δu·∂f/∂lnUA) and likewise for
// the flow factor, each at the running estimate (1 while the estimate is
// within secantMinLog of the baseline). Two model evaluations, done every
// secantEvery evaluations.
func (en *Engine) relinearise(st *termState, ev *evaluation) {
	st.secAge++
	if st.secAge < secantEvery || !(st.facOut.ua > 0) {
		return
	}
	st.secAge = 0
	op := coilOp(ev.v, ev.eat, ev.mw, ev.thw)
	if du := math.Log(st.facOut.ua); math.Abs(du) > secantMinLog && math.Abs(ev.dLU) > 1e-6 {
		fU := st.r.ExpectedRiseWith(op, st.r.UAMultiplier()*st.facOut.ua, 1)
		st.secU = clampRatio((fU - ev.f) / (du * ev.dLU))
	} else {
		st.secU = 1
	}
	if df := math.Log(st.facOut.fl); math.Abs(df) > secantMinLog && math.Abs(ev.dM*ev.mw) > 1e-6 {
		fF := st.r.ExpectedRiseWith(op, st.r.UAMultiplier(), st.facOut.fl)
		st.secF = clampRatio((fF - ev.f) / (df * ev.dM * ev.mw))
	} else {
		st.secF = 1
	}
}

// Secant re-linearisation cadence and limits [I].
const (
	secantEvery  = 4    // model evaluations between secant updates
	secantMinLog = 0.03 // |ln factor| below which the tangent is used
)

func clampRatio(x float64) float64 {
	if !(x > 0.2) {
		return 0.2
	}
	if x > 5 {
		return 5
	}
	return x
}

// leakFlow runs, every few steps of steady operation at zero command held
// for the closed time with heat available (between 0 and the closed
// threshold a valve with a small dead band may already pass water, and that
// heat follows the command, not the operating point), the closed-valve
// evidence that needs the coil model:
//
//   - the reference leak flow that explains the raw rise (bisection on water
//     flow), smoothed; it only shapes the closed-valve fit (closedfit.go);
//   - one point of the closed-valve fit, rise = a + s·h, with h the model
//     rise at the reference leak flow;
//   - the closed-valve rise as a fraction of the full-open rise at the same
//     airflow and temperatures (a reversed valve heats at 0 % command with
//     close to full-open capacity);
//   - the leak flow that explains the rise left after the sensor offset, as
//     a fraction of the full-open installed flow.
//
// The rise is the DAT mean over the last half window at the current
// airflow (the rise scales about as 1/V, so a smoothed rise must not be
// paired with today's airflow).
func (en *Engine) leakFlow(st *termState, t *termStatic, in *inputs, eat float64) {
	st.leakAge++
	if t.modelErr != nil || st.leakAge < leakInvertEvery {
		return
	}
	st.leakAge = 0
	st.pubGen++ // closedCap, closedEst
	rise := st.dat.mean() - eat
	design := t.flow.design() * st.flowScale
	op := coilOp(in.v, eat, design, in.hw)
	full := st.r.ExpectedRise(op)
	if full > minExpectedRiseK {
		st.closedCap.add(math.Max(0, rise)/full, 0.3)
		st.slow.update(st)
	}
	// Reference leak flow from the raw rise (no offset removed: the fit's
	// shape must not depend on its own result).
	ref := leakRefMin * design
	rawM := 0.0
	if rise > 0.3 {
		rawM = invertFlow(st.r, in.v, eat, in.hw, rise, design)
		if !finite(rawM) {
			rawM = design
		}
		ref = math.Max(ref, rawM)
	}
	// Slow: h must follow the operating point, not the rise it is fitted
	// to (a reference tracking each rise would make h ≈ rise and hide an
	// offset in the slope).
	if st.leakRef <= 0 {
		st.leakRef = ref
	} else {
		st.leakRef += (ref - st.leakRef) / closedFitTau
	}
	op.WaterFlowM3s = st.leakRef
	st.closed.add(st.r.ExpectedRise(op), rise)
	ce := &st.closedEst
	ce.a, ce.sig, ce.heat, ce.ok = st.closed.estimate(en.cfg.Accuracy.ModelFrac)

	off := en.offsetUsed(st)
	heat := rise - off
	frac := 0.0
	switch {
	case heat <= 0.3:
	case math.Abs(off) < 0.05 && rawM > 0: // no offset: the raw inversion is the answer
		frac = rawM / design
	default:
		m := invertFlow(st.r, in.v, eat, in.hw, heat, design)
		frac = 1 // more than the open valve gives: reported as full flow
		if finite(m) {
			frac = m / design
		}
	}
	if st.leakFlow < 0 {
		st.leakFlow = frac
	} else {
		st.leakFlow += 0.3 * (frac - st.leakFlow)
	}
}

// leakRefMin is the smallest reference leak flow of the closed-valve fit, as
// a fraction of design flow: it keeps the shape h defined when the closed
// rise is near zero [I].
const leakRefMin = 0.005

// offsetUsed is the sensor offset to take off a closed-valve rise: the
// plant-off offset when one was measured, else the closed-valve fit's
// intercept when it is identified.
func (en *Engine) offsetUsed(st *termState) float64 {
	if off := st.offset.value(); finite(off) {
		return off
	}
	if ce := &st.closedEst; ce.ok && ce.sig <= closedFitSigmaMax {
		return ce.a
	}
	return 0
}

// publish writes every field of e, in field order, from the sample's
// values v and the running state (the running statistics include this
// sample). Scores and Best are left to scoreSignatures. Energy impact and
// the steady-only values are written past the start-up lockout (v.past).
// When sl says e already holds this terminal's published evidence, the
// slow fields (publishSlow) are written only if st.pubGen moved since.
func (en *Engine) publish(e *Evidence, s *collector.Sample, st *termState, t *termStatic, in *inputs, v *stepVals, sl *viewSlot, acc *loopAcc) {
	fresh := sl.kind != recActive
	if fresh {
		// Constant on this path: the next active write to this record
		// for the same terminal leaves them.
		e.Terminal, e.Usable, e.FanOn = s.Terminal, true, true
	}
	e.At, e.Gates = s.At, v.gates
	e.Steady, e.PlantOn, e.Occupied = v.steady, in.plantOn, s.Occupied
	e.ValveFrac, e.AirflowM3s, e.SupplyC, e.DischargeC, e.HotWaterC = in.u, in.v, in.sat, in.dat, in.hw
	e.ObservedRiseK, e.ExpectedRiseK, e.SigmaK, e.ResidualK, e.PerfIndex = v.obs, v.f, v.sigma, v.res, v.pi
	if fresh || sl.gen != st.pubGen {
		en.publishSlow(e, st)
		sl.gen = st.pubGen
	}
	if fresh || sl.mid != st.midGen {
		publishMid(e, st)
		sl.mid = st.midGen
	}
	sl.kind = recActive
	e.ClosedMinutes = float64(st.closedRun) * en.minPerStep
	e.ReversalsPerHour = st.rev.rate * en.stepsPerHour
	e.DATFlatMinutes = float64(st.flatRun) * en.minPerStep
	e.WastedHeatW, e.AddedCoolingW, e.ShortfallW = 0, 0, 0
	e.LeakFlowM3s, e.LeakSigmaK = nan, nan
	if v.past {
		// energy's own conditions, first tested here so that most
		// samples (neither closed long nor short of heat) make no call.
		if st.closedRun >= en.closedSteps || in.u > heatingMinFrac && v.res < 0 {
			en.energy(st, in, v, e)
		}
		if lf := e.LeakFlowFrac; lf-lf == 0 { // set only with st.leak.ok
			e.LeakFlowM3s = lf * st.designFlow
		}
		e.LeakSigmaK = en.leakSigma
	}
	e.Learning = v.learning
	e.DATMinusSATK = in.dat - in.sat
	e.DesignPerfIndex, e.LoopShort = nan, false
	if st.perfAge < perfExpireSteps && st.designPerf.ok {
		e.DesignPerfIndex = st.designPerf.v
		// Saturated now, short at the design temperature, and (when zone
		// points exist) the zone below its heating setpoint: a reset loop
		// whose boxes still meet their zones is not a cold loop.
		unmet := !st.zoneDef.ok || st.zoneDef.v > en.cfg.ZoneUnmetK
		e.LoopShort = st.saturated && in.u >= saturatedFrac && unmet && st.designPerf.v < loopShortPerf
		if p := e.DesignPerfIndex; acc != nil && p-p == 0 { // accumulate's performance sums
			acc.n++
			acc.perfSum += p
			if e.LoopShort {
				acc.short++
			}
		}
	}
	e.ZScore = v.z
	e.DATBadMinutes = 0 // a usable sample's DAT is present and in range (process reset the run)
	e.ZoneDeficitK = st.zoneDef.v
	en.zoneOut(e, s, st)
}

// publishMid writes the fields of publish that change only with
// st.midGen: the closed-valve and offset statistics (leak, leak flow,
// offset, raw closed rise), the control charts and the performance mean.
func publishMid(e *Evidence, st *termState) {
	e.LeakRiseK = st.leak.v
	e.LeakFlowFrac = nan
	if st.leak.ok && st.leakFlowSet() {
		e.LeakFlowFrac = st.leakFlow
	}
	e.OffsetK = st.offset.v
	if st.chart.started {
		e.CUSUMLowK, e.EWMAResid = st.chart.cusumLow, st.chart.ewma
	} else {
		e.CUSUMLowK, e.EWMAResid = nan, nan
	}
	e.PerfAvg = st.perf.v
	e.ClosedRiseK = st.closedRaw.v
}

// maxShownFlowFactor is the largest apparent water-flow factor published.
// When a coil gives almost no heat (a valve stuck shut) the two factors
// cannot be told apart: the fit drives UA down and lets the flow factor run
// off (6.3·10⁴ on the demo's stuck valve), and a factor of many times the
// flow the valve and branch can pass means nothing. Above 4 the flow is
// published as unknown; the running estimate itself is kept. [I]
const maxShownFlowFactor = 4

// publishSlow writes the fields of publish that change only with
// st.pubGen (or never): the response statistics, the running factors, the
// closed-valve fit and capacity, the last high-command performance, the
// shape share, the onset, a rejected UA factor, the EWMA limit and the
// (unknown) discharge setpoint.
func (en *Engine) publishSlow(e *Evidence, st *termState) {
	r := &st.respStats
	e.DATSetC = nan
	if fo := &st.facOut; fo.ua > 0 {
		e.UAFactor, e.UAFactorSigma, e.FlowFactor, e.FlowFactorSigma = fo.ua, fo.uaSig, fo.fl, fo.flSig
		if !(fo.fl <= maxShownFlowFactor) {
			e.FlowFactor, e.FlowFactorSigma = nan, nan
		}
	} else {
		e.UAFactor, e.UAFactorSigma, e.FlowFactor, e.FlowFactorSigma = nan, nan, nan, nan
	}
	e.ShortfallHighK, e.ShortfallLowK = r.shortHigh, r.shortLow
	e.RiseValveCorr, e.RiseSpanK, e.ValveSpan = r.corr, r.riseSpan, r.valveSpan
	e.ExpectedSpanK = r.expSpan
	e.EWMALimit = en.ewmaLim
	e.PerfHigh, e.PerfLow = r.perfHigh, r.perfLow
	e.PerfHighRef = st.perfRef.level()
	e.PerfHighRel = r.perfHigh / e.PerfHighRef
	if ce := &st.closedEst; ce.ok {
		e.ClosedOffsetK, e.ClosedOffsetSigmaK, e.ClosedHeatK = ce.a, ce.sig, ce.heat
	} else {
		e.ClosedOffsetK, e.ClosedOffsetSigmaK, e.ClosedHeatK = nan, nan, nan
	}
	e.ClosedCapacityFrac = st.closedCap.v
	e.PerfHighLast = st.perfHighLast
	e.StarvedShare = st.cmpShare
	e.OnsetHours = st.onsetH
	e.RejectedUAFactor = nan
	if st.learnedUA > 0 {
		e.RejectedUAFactor = st.learnedUA
	}
}

func (st *termState) leakFlowSet() bool { return st.leakFlow >= 0 }

// energy fills the energy impact: leak heat (and the cooling spent removing
// it, taken equal; the box must offset it with cold air) and heating
// shortfall, Q = ṁ_da·c_p·ΔT with moist-air properties (energy.go). e's
// LeakRiseK is written. The leak flow in m³/s is publish's (LeakFlowFrac ×
// the design flow).
func (en *Engine) energy(st *termState, in *inputs, v *stepVals, e *Evidence) {
	if st.closedRun >= en.closedSteps && in.plantOn && finite(e.LeakRiseK) && st.dat.full() {
		ex := st.dat.mean() - v.eat
		ex -= en.offsetUsed(st)
		if ex > 0 {
			e.WastedHeatW = en.air.heatW(in.v, ex, in.dat)
			e.AddedCoolingW = e.WastedHeatW
		}
	}
	if in.u > heatingMinFrac && finite(v.res) && v.res < 0 {
		e.ShortfallW = en.air.heatW(in.v, -v.res, in.dat)
	}
}

// evalCache is a power of two (evaluationNear wraps with a mask).
var _ [0]struct{} = [evalCache & (evalCache - 1)]struct{}{}
