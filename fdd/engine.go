// Package fdd turns assembled terminal samples into evidence: data-quality
// gates, steady-state detection, the expected rise of the calibrated coil
// model with its uncertainty, per-terminal baselines, control charts,
// response and leak statistics, signature scores per fault kind and the
// energy impact. The rules layer decides faults from this evidence.
package fdd

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// Engine computes Evidence for every terminal of a site, one Step per
// analysis interval. State is bounded per terminal (fixed windows and running
// sums). Step is not safe for concurrent use; to shard, call StepTerminals
// from several goroutines with disjoint terminal sets, then Loops once.
type Engine struct {
	site  *site.Site
	cfg   Config
	terms []termStatic
	state []termState
	air   airProps

	// Derived per-step constants.
	minPerStep, stepsPerHour                 float64
	startupSteps, closedSteps, flatSteps     int
	tempSlope, tempVar, valveVar, hwSlope    float64
	ewmaLim, sig2Closed, leakSigma           float64
	sig2DAT, sig2EAT                         float64 // σ_DAT² and σ_SAT² + σ_g² (residualVar)
	thresholdBits                            uint64  // bits of a positive ScoreThreshold (0 for a threshold ≤ 0: see scoreSignatures)
	revAlpha, leakAlpha, offAlpha, perfAlpha float64
	facAlpha, respDecay                      float64

	loops    []loopAcc
	loopOut  []LoopEvidence
	lastStep time.Time
	learn    []learner // learning reservoirs, apart from the hot per-sample state
	// The terminals' window rings, each exactly its window long (in a
	// termState a ring of maxWindow would leave most of it unused).
	ringIn   [][nCh]float64
	ringDAT  []float64
	idleTmpl Evidence // evidence without running values (idle)
	win      *winConsts

	// StepView's records, by position in the step, and what each holds.
	view  []Evidence
	slots []viewSlot
}

// winConsts are the constants every terminal's steady windows share (one
// window length, one set of limits): read on every active sample, they stay
// in cache rather than take lines of each terminal's state.
type winConsts struct {
	in  slopeConst2
	lim steadyLimits
	dat slopeConst
}

// viewSlot says what a record of the engine's view holds, so the next
// write to it for the same terminal can leave alone what did not change.
type viewSlot struct {
	rec  *Evidence // the record (Engine.view at the slot's position)
	term int       // terminal whose evidence the record holds (−1: none)
	kind uint8     // which path wrote it (rec*)
	gen  uint32    // termState.pubGen of its slow fields (kind recActive)
	mid  uint32    // termState.midGen of its publishMid fields (kind recActive)
}

// What the last write left in a record.
const (
	recNone   = iota // nothing known: write every field
	recData          // idle evidence of a data-gated sample (idleTmpl + inputs, data-quality scores)
	recFanOff        // idle evidence with the fan off (idleTmpl + inputs, Usable)
	recActive        // publish: the slow fields as of viewSlot.gen
)

// NewEngine builds the engine for s with cfg (zero fields take defaults).
// Terminals whose coil or valve model cannot be built still get
// data-quality, leak, offset, flatline and hunting evidence; their samples
// carry GateNoModel and TerminalErrors lists why.
func NewEngine(s *site.Site, cfg Config) (*Engine, error) {
	return newEngine(s, cfg, sharedPhysics())
}

func newEngine(s *site.Site, cfg Config, pf physicsFactory) (*Engine, error) {
	if s == nil {
		return nil, errors.New("fdd: nil site")
	}
	c, err := cfg.withDefaults()
	if err != nil {
		return nil, err
	}
	en := &Engine{site: s, cfg: c, air: newAirProps(s.ElevationM, c.HumidityRatio, c.AirflowActual)}
	en.minPerStep = c.Step.Minutes()
	en.stepsPerHour = float64(time.Hour) / float64(c.Step)
	en.startupSteps = c.stepsFor(c.StartupMinutes)
	en.closedSteps = c.stepsFor(c.ClosedMinutes)
	en.flatSteps = c.stepsFor(c.FlatlineMinutes)
	en.tempSlope = c.SteadyTempSlopeKMin * en.minPerStep
	en.tempVar = c.SteadyTempStdK * c.SteadyTempStdK
	en.valveVar = sq(c.SteadyValveSpan / 2)
	en.hwSlope = c.SteadyHWSlopeKMin * en.minPerStep
	en.ewmaLim = ewmaLimit(c.EWMALambda, c.EWMAL)
	a := c.Accuracy
	en.sig2Closed = a.DischargeK*a.DischargeK + a.SupplyK*a.SupplyK + a.DuctGainK*a.DuctGainK
	en.leakSigma = math.Sqrt(en.sig2Closed)
	en.sig2DAT = a.DischargeK * a.DischargeK
	en.sig2EAT = a.SupplyK*a.SupplyK + a.DuctGainK*a.DuctGainK
	if c.ScoreThreshold > 0 {
		en.thresholdBits = math.Float64bits(c.ScoreThreshold)
	}
	en.revAlpha = alphaFor(en.stepsPerHour)
	en.leakAlpha = alphaFor(float64(c.stepsFor(15)))
	en.offAlpha = alphaFor(float64(c.stepsFor(60)))
	en.perfAlpha = alphaFor(float64(c.stepsFor(30)))
	en.facAlpha = alphaFor(c.FactorHours * en.stepsPerHour)
	en.respDecay = math.Exp(-respStatsEvery / (c.ResponseHours * en.stepsPerHour))
	en.idleTmpl = en.idleTemplate()

	en.terms = make([]termStatic, len(s.Terminals))
	en.state = make([]termState, len(s.Terminals))
	en.learn = make([]learner, len(s.Terminals))
	en.loops = make([]loopAcc, len(s.Loops))
	en.loopOut = make([]LoopEvidence, 0, len(s.Loops))
	nIn, nDAT := c.SteadyWindow, datWindow(c.SteadyWindow)
	en.win = &winConsts{in: newSlopeConst2(nIn), lim: en.steadyLimits(), dat: newSlopeConst(nDAT)}
	en.ringIn = make([][nCh]float64, nIn*len(s.Terminals))
	en.ringDAT = make([]float64, nDAT*len(s.Terminals))
	for i := range s.Terminals {
		en.initTerminal(i, pf)
	}
	return en, nil
}

func (en *Engine) initTerminal(i int, pf physicsFactory) {
	s := en.site
	t := &s.Terminals[i]
	ts := &en.terms[i]
	*ts = termStatic{idx: i, id: t.ID, loop: -1, ahu: -1, designHWC: 80}
	var loop *site.Loop
	if li, ok := lookup(s.LoopIndex, t.Loop, len(s.Loops), func(k int) string { return s.Loops[k].ID }); ok {
		ts.loop, ts.acc = li, &en.loops[li]
		loop = &s.Loops[li]
		if loop.DesignSupplyC > 0 {
			ts.designHWC = loop.DesignSupplyC
		}
		ts.plantPoint = loop.PlantEnabled.Defined()
		ts.hwPoint = loop.SupplyTemp.Defined() && loop.SupplyTemp.Fixed == nil
	}
	if ai, ok := lookup(s.AHUIndex, t.AHU, len(s.AHUs), func(k int) string { return s.AHUs[k].ID }); ok {
		ts.ahu = ai
		ts.ductGainK = s.AHUs[ai].DuctGainK
		ts.fanPoint = s.AHUs[ai].FanStatus.Defined()
	}
	ts.zonePoint, ts.zoneSetPoint = t.Points.ZoneTemp.Defined(), t.Points.ZoneSetpoint.Defined()
	ts.zoneStaleRun = uint16(min(en.cfg.stepsFor(zoneStaleMinutes), math.MaxUint16))
	maxA := math.Max(t.MaxAirflowM3s, t.HeatingAirflowM3s)
	if maxA > 0 {
		ts.maxAirM3s = 3 * maxA // far above any box's cooling maximum [I]
	} else {
		ts.maxAirM3s = 10
	}
	ts.fanOnM3s = 0.02
	if t.MinAirflowM3s > 0 {
		ts.fanOnM3s = t.MinAirflowM3s / 3
	}
	st := &en.state[i]
	ts.st = st
	nIn, nDAT := en.cfg.SteadyWindow, datWindow(en.cfg.SteadyWindow)
	st.in.initShared(en.ringIn[i*nIn:(i+1)*nIn:(i+1)*nIn], &en.win.in, &en.win.lim)
	st.dat.initShared(en.ringDAT[i*nDAT:(i+1)*nDAT:(i+1)*nDAT], &en.win.dat)
	st.leakFlow = -1
	st.perfHighLast = nan
	st.cmpShare = nan
	st.onsetH = nan
	for _, w := range []*ewma{&st.leak, &st.offset, &st.closedRaw, &st.perf, &st.designPerf, &st.zoneDef, &st.closedCap} {
		*w = newEWMA()
	}
	st.base = ratedBaseline(t.ID)
	if en.cfg.LearnMinPoints == 0 {
		st.learnDone = true
	}
	phys, fc, err := pf(t, loop)
	if err == nil {
		ts.phys, ts.flow = phys, fc
		err = en.applyBaseline(i, st.base)
	}
	if err != nil {
		ts.modelErr = err
	}
}

// datWindow is the length of the DAT window for a steady window of n: the
// last half of it.
func datWindow(n int) int { return max(n/2, 2) }

// lookup resolves an ID through the site's index map, or by a linear scan
// when the map was not filled (sites built in code).
func lookup(idx map[string]int, id string, n int, name func(int) string) (int, bool) {
	if id == "" {
		return -1, false
	}
	if k, ok := idx[id]; ok && k >= 0 && k < n {
		return k, true
	}
	for k := 0; k < n; k++ {
		if name(k) == id {
			return k, true
		}
	}
	return -1, false
}

// applyBaseline rebuilds terminal i's model at the baseline factors and
// restarts the running statistics that are relative to the baseline.
func (en *Engine) applyBaseline(i int, b Baseline) error {
	ts, st := &en.terms[i], &en.state[i]
	if ts.phys == nil {
		return ts.modelErr
	}
	r, err := ts.phys.withUA(b.UAFactor)
	if err != nil {
		return fmt.Errorf("terminal %s: coil model at UA factor %.3g: %w", ts.id, b.UAFactor, err)
	}
	rUA, err := ts.phys.withUA(b.UAFactor * uaStep)
	if err != nil {
		return fmt.Errorf("terminal %s: coil model at UA factor %.3g: %w", ts.id, b.UAFactor*uaStep, err)
	}
	st.r, st.rUA, st.flowScale, st.base = r, rUA, b.FlowFactor, b
	st.learnedBase = b.Source == "learned"
	st.designFlow = ts.flow.design() * b.FlowFactor
	st.evals, st.evalCur, st.evalNext = [evalCache]evaluation{}, 0, 0
	st.fac, st.facOut = factorSums{}, factorOut{}
	st.secU, st.secF, st.secAge = 1, 1, 0
	st.cmp, st.cmpShare = faultCompare{}, nan
	st.chart = chart{}
	st.midGen++
	st.resp = response{}
	st.respStats = st.resp.stats()
	st.perfRef = perfRef{} // healthy performance against the previous model
	st.slow.update(st)
	st.pubGen++
	return nil
}

// fitAttempts is how many learning periods a terminal gets for a fit that
// does not converge (the points too alike to tell UA from water flow, say:
// a valve that sat at one command all period); after the last it stays on
// the rated model. A fit that converges outside the bands is not retried:
// the coil is not as rated, and a new period would say so again.
const fitAttempts = 3

// finishLearning fits the baseline from the learning reservoir and adopts it
// when plausible.
func (en *Engine) finishLearning(st *termState, t *termStatic) {
	st.learnDone = true
	i := t.idx
	l := &en.learn[i]
	b, err := fitBaseline(t.phys, &t.flow, l)
	l.release()
	if err != nil {
		st.fitFails++
		st.base.Rejected = err.Error()
		if st.fitFails < fitAttempts {
			st.base.Rejected = fmt.Sprintf("%v; learning again (period %d of %d)", err, st.fitFails+1, fitAttempts)
			st.learnDone = false
			en.learn[i] = learner{}
		}
		st.pubGen++
		return
	}
	b.Terminal = t.id
	band, uaBand := en.cfg.BaselineBand, en.cfg.BaselineUABand
	if b.UAFactor > uaBand || b.UAFactor < 1/uaBand || b.FlowFactor > band || b.FlowFactor < 1/band {
		rej := st.base
		rej.Rejected = fmt.Sprintf("learned UA factor %.2f (band 1/%.3g..%.3g), flow factor %.2f (band 1/%.2g..%.2g) against the rated model",
			b.UAFactor, uaBand, uaBand, b.FlowFactor, band, band)
		st.learnedUA = b.UAFactor
		st.pubGen++
		rej.Points, rej.From, rej.To = b.Points, b.From, b.To
		rej.RejectedUAFactor = b.UAFactor
		st.base = rej
		return
	}
	if err := en.applyBaseline(i, b); err != nil {
		st.base.Rejected = err.Error()
		return
	}
	// An adopted fit is a coil performing within the band of its rating at
	// the end of the learning period: the reference for the onset of a loss.
	st.healthyAt, st.shortSince = b.To, time.Time{}
	st.setOnset()
}

// Step processes one analysis step: samples for any subset of terminals (in
// any order), appending one Evidence per sample to out, then aggregates the
// loops (Loops returns them) and applies loop-level isolation to the
// terminal evidence it appended. Samples with an unknown terminal index are
// skipped. Every field of the appended evidence is written.
func (en *Engine) Step(samples []collector.Sample, out []Evidence) []Evidence {
	start := len(out)
	en.resetLoops()
	out = en.stepTerminals(samples, out, true)
	en.finishLoops(out[start:])
	return out
}

// StepView is Step with the evidence kept in the engine: it returns the
// engine's own records, one per sample with a known terminal in sample
// order, valid until the next StepView (copy what you keep; do not modify
// them). The evidence is the same as Step's. A record that held the same
// terminal at the previous StepView (an assembler emits a site's terminals
// in the same order every step) is updated in place: an idle terminal's
// record gets only its inputs and counters, an active one's the values
// that move every sample, and the values that change only on the response
// cadence, a leak inversion or a baseline change (termState.pubGen) when
// they changed. Step would write every field of every record (about 580
// bytes); the daemon runs StepView.
func (en *Engine) StepView(samples []collector.Sample) []Evidence {
	if len(samples) > len(en.slots) {
		en.view = make([]Evidence, len(samples))
		en.slots = make([]viewSlot, len(samples))
		for k := range en.slots {
			en.slots[k].rec, en.slots[k].term = &en.view[k], -1
		}
	}
	en.resetLoops()
	out := en.stepView(samples)
	if en.finishLoops(out) {
		// Loop isolation rewrote scores in place: write every field of
		// these records next time.
		for k := range out {
			en.slots[k].kind = recNone
		}
	}
	return out
}

// StepTerminals is the per-terminal part of Step, without loop aggregation.
// Calls for disjoint terminal sets may run concurrently. The evidence is
// written in place in out's backing array (grown once per call).
func (en *Engine) StepTerminals(samples []collector.Sample, out []Evidence) []Evidence {
	return en.stepTerminals(samples, out, false)
}

// stepTerminals processes samples into out; with loops it adds each
// evidence to its loop's sums as well (Step only: sharded calls must not
// share the loop sums).
func (en *Engine) stepTerminals(samples []collector.Sample, out []Evidence, loops bool) []Evidence {
	n := len(out)
	out = slices.Grow(out, len(samples))[:n+len(samples)]
	terms := en.terms
	for k := range samples {
		s := &samples[k]
		i := s.Terminal
		if uint(i) >= uint(len(terms)) {
			continue
		}
		t, e := &terms[i], &out[n]
		sl := viewSlot{term: -1} // a caller's record: nothing known
		var acc *loopAcc
		if loops {
			acc = t.acc
		}
		en.process(s, t, t.st, e, &sl, acc)
		n++
	}
	return out[:n]
}

// stepView is stepTerminals into the engine's records (StepView), with
// the loop sums. The terminal's state and the slot's record are reached
// through pointers (termStatic.st, viewSlot.rec): the loop keeps few
// values live across its call to process, so few are reloaded after it.
func (en *Engine) stepView(samples []collector.Sample) []Evidence {
	n := 0
	terms, slots := en.terms, en.slots[:len(samples)]
	for k := range samples {
		s := &samples[k]
		i := s.Terminal
		if uint(i) >= uint(len(terms)) {
			continue
		}
		t, sl := &terms[i], &slots[n]
		if sl.term != i {
			sl.term, sl.kind = i, recNone
		}
		en.process(s, t, t.st, sl.rec, sl, t.acc)
		n++
	}
	return en.view[:n]
}

// Loops returns the loop evidence of the last Step (or AggregateLoops call).
// The slice is reused by the next step; copy it to keep it.
func (en *Engine) Loops() []LoopEvidence { return en.loopOut }

// AggregateLoops computes loop evidence over the evidence of one step
// (possibly gathered from sharded StepTerminals calls) and applies loop-level
// isolation to it in place.
func (en *Engine) AggregateLoops(ev []Evidence) { en.aggregateLoops(ev) }

// TerminalErrors lists why terminals have no model (nil entries are fine).
func (en *Engine) TerminalErrors() []error {
	out := make([]error, len(en.terms))
	for i := range en.terms {
		out[i] = en.terms[i].modelErr
	}
	return out
}

// Baselines returns every terminal's current baseline, with the coil's
// healthy high-command level against it (PerfHighRef).
func (en *Engine) Baselines() []Baseline {
	out := make([]Baseline, len(en.state))
	for i := range en.state {
		out[i], _ = en.Baseline(i)
	}
	return out
}

// Baseline is terminal i's current baseline (Baselines for one terminal),
// and whether it is still learning; false for an index out of range.
func (en *Engine) Baseline(i int) (b Baseline, learning bool) {
	if i < 0 || i >= len(en.state) {
		return Baseline{}, false
	}
	st := &en.state[i]
	b = st.base
	b.PerfHighRef, b.PerfHighRefN = 0, 0
	if st.perfRef.n > 0 {
		b.PerfHighRef, b.PerfHighRefN = st.perfRef.mean, st.perfRef.n
	}
	return b, !st.learnedBase && !st.learnDone
}

// LoadBaselines adopts persisted baselines (matched by terminal ID) and ends
// learning for those terminals: a learned fit, or the rated model after a
// rejected fit (Rejected set), with the coil's healthy high-command level
// against it when one was seen. Unknown terminals and implausible factors
// are reported in the error; the others are applied.
func (en *Engine) LoadBaselines(bs []Baseline) error {
	var errs []error
	for _, b := range bs {
		i, ok := lookup(en.site.TerminalIndex, b.Terminal, len(en.terms), func(k int) string { return en.terms[k].id })
		if !ok {
			errs = append(errs, fmt.Errorf("baseline for unknown terminal %q", b.Terminal))
			continue
		}
		if !(b.UAFactor > 0) || !(b.FlowFactor > 0) || !finite(b.UAFactor) || !finite(b.FlowFactor) {
			errs = append(errs, fmt.Errorf("terminal %s: baseline factors UA %g, flow %g must be positive", b.Terminal, b.UAFactor, b.FlowFactor))
			continue
		}
		if b.PerfHighRefN < 0 || b.PerfHighRefN > 0 && !(b.PerfHighRef > 0 && finite(b.PerfHighRef)) {
			errs = append(errs, fmt.Errorf("terminal %s: healthy high-command level %g over %d values must be positive", b.Terminal, b.PerfHighRef, b.PerfHighRefN))
			continue
		}
		if err := en.applyBaseline(i, b); err != nil {
			errs = append(errs, err)
			continue
		}
		st := &en.state[i]
		st.base.PerfHighRef, st.base.PerfHighRefN = 0, 0 // kept in perfRef
		if b.PerfHighRefN > 0 {
			st.perfRef = perfRef{mean: b.PerfHighRef, n: min(b.PerfHighRefN, perfRefMaxN)}
		}
		st.learnedUA = 0
		if b.Rejected != "" && b.RejectedUAFactor > 0 && finite(b.RejectedUAFactor) {
			st.learnedUA = b.RejectedUAFactor
		}
		st.slow.update(st)
		en.state[i].learnDone = true
		en.state[i].pubGen++
		en.learn[i].release()
		if b.Source == "learned" {
			en.state[i].healthyAt, en.state[i].shortSince = b.To, time.Time{}
			en.state[i].setOnset()
		}
	}
	return errors.Join(errs...)
}

// ErrUnknownTerminal is returned for a terminal ID the site does not have.
var ErrUnknownTerminal = errors.New("unknown terminal")

// Relearn discards terminal id's baseline (learned, rejected or restored)
// and learns it again from the next steady heating samples, as at first
// start: the rated model stands in meanwhile, and the coil's healthy
// high-command level and the onset of a loss start afresh. For use after
// the coil, valve or actuator was replaced or repaired, when the old
// baseline no longer describes the unit.
func (en *Engine) Relearn(id string) error {
	i, ok := lookup(en.site.TerminalIndex, id, len(en.terms), func(k int) string { return en.terms[k].id })
	if !ok {
		return fmt.Errorf("relearn %q: %w", id, ErrUnknownTerminal)
	}
	st := &en.state[i]
	en.learn[i] = learner{}
	st.learnedUA, st.fitFails = 0, 0
	st.healthyAt, st.shortSince = time.Time{}, time.Time{}
	st.setOnset()
	err := en.applyBaseline(i, ratedBaseline(id))
	st.learnDone = en.cfg.LearnMinPoints == 0
	st.pubGen++
	if err != nil {
		return fmt.Errorf("relearn %s: %w", id, err)
	}
	return nil
}
