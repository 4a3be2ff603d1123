package rules

import (
	"math"
	"sort"
	"time"
	"unsafe"

	"risewatch/fdd"
)

// fault is one raised (entity, kind) fault.
type fault struct {
	key         faultKey
	id          string
	entity      string
	state       State
	rules       []*compiled // rules currently holding it open
	rule        *compiled   // the most severe of them (decides severity, message)
	since       time.Time   // condition first true for the opening rule
	openedAt    time.Time
	severity    Severity
	confidence  float64
	ackBy       string
	ackAt       time.Time
	suppressTil time.Time

	hasLast    bool
	lastShown  bool // lastTerm satisfies the rule's evidence_when (or it has none)
	lastTrueAt int64
	lastTerm   fdd.Evidence
	lastLoop   fdd.LoopEvidence
	saved      Evidence // evidence restored by Import until fresh evidence arrives

	// Energy: sums of power over samples in heating operation.
	lastEnergyAt int64
	heatWSum     float64
	coolWSum     float64
	shortWSum    float64
	opSamples    int
	lastHeatW    float64
	lastCoolW    float64
	lastShortW   float64
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// Which of the engine's power figures a fault kind owns. The evidence
// carries them for the terminal whatever is wrong with it; a fault counts
// only what it causes: heat with the valve shut is waste for a valve that
// passes water (leaking, stuck open, reversed), but for a DAT that reads
// high it is the sensor's error, and beside a starved coil it belongs to a
// leak fault of its own. A heating shortfall is a coil's, valve's or
// loop's; a sensor or data fault makes the measured rise, and so the
// shortfall, wrong.
var (
	kindWastes = [...]bool{fdd.KindLeakingValve: true, fdd.KindStuckValve: true, fdd.KindReversedValve: true, fdd.KindZoneSensor: false}
	kindShorts = [...]bool{fdd.KindStuckValve: true, fdd.KindFouledCoil: true, fdd.KindStarvedCoil: true, fdd.KindColdLoop: true,
		fdd.KindReversedValve: true, fdd.KindLowDischarge: true, fdd.KindZoneSensor: false}
)

// observe accumulates the fault's power figures from one sample: those its
// kind owns (kindWastes, kindShorts). Only samples in heating operation
// (fan and plant on, data usable) count; the weekly figure scales their
// mean by the terminal's operating hours.
func (f *fault) observe(ev *fdd.Evidence, at int64, mask gateMask) {
	f.lastEnergyAt = at
	if mask&(gFan|gPlant|gUsable) != gFan|gPlant|gUsable {
		return
	}
	h, c, s := ev.WastedHeatW, ev.AddedCoolingW, ev.ShortfallW
	if k := f.key.kind; k < 0 || int(k) >= len(kindWastes) || !kindWastes[k] {
		h, c = 0, 0
	}
	if k := f.key.kind; k < 0 || int(k) >= len(kindShorts) || !kindShorts[k] {
		s = 0
	}
	if !finite(h) || h < 0 {
		h = 0
	}
	if !finite(c) || c < 0 {
		// Heat delivered into a zone that is not calling for it has to be
		// removed by cooling; without an estimate from the engine take the
		// same amount (engineering inference).
		c = h
	}
	if !finite(s) || s < 0 {
		s = 0
	}
	f.heatWSum += h
	f.coolWSum += c
	f.shortWSum += s
	f.opSamples++
	f.lastHeatW, f.lastCoolW, f.lastShortW = h, c, s
}

// impact is the weekly energy and cost of the fault at the site's prices.
func (e *Evaluator) impact(f *fault) Impact {
	var im Impact
	if f.opSamples == 0 {
		return im
	}
	n := float64(f.opSamples)
	im.WastedHeatW = f.heatWSum / n
	im.AddedCoolingW = f.coolWSum / n
	im.ShortfallW = f.shortWSum / n
	hours := 60.0
	if f.key.ek == EntityTerminal {
		hours = e.operatingHoursPerWeek(f.key.idx)
	}
	im.OperatingHoursPerWeek = hours
	im.WeeklyHeatKWh = im.WastedHeatW * hours / 1000
	im.WeeklyCoolKWh = im.AddedCoolingW * hours / 1000
	im.WeeklyShortfallKWh = im.ShortfallW * hours / 1000
	pr := e.site.Energy
	im.WeeklyCost = im.WeeklyHeatKWh*pr.HeatPerKWh + im.WeeklyCoolKWh*pr.CoolingPerKWh
	im.Currency = pr.Currency
	return im
}

func (e *Evaluator) trackers(ek EntityKind, idx int) []tracker {
	if ek == EntityLoop {
		n := len(e.loop)
		return e.ltrk[idx*n : idx*n+n]
	}
	n := len(e.term)
	return e.trk[idx*n : idx*n+n]
}

// activate marks rule c active on an entity: it opens the (entity, kind)
// fault, or escalates it when c is more urgent than the rules already
// holding it.
func (e *Evaluator) activate(ek EntityKind, idx int, c *compiled, tk *tracker, p unsafe.Pointer, at time.Time, out []Transition) []Transition {
	key := faultKey{ek, idx, c.kind}
	f := e.faults[key]
	isNew := f == nil
	if isNew {
		f = &fault{key: key, entity: e.entityID(ek, idx)}
		f.id = f.entity + "/" + c.kind.String()
		e.faults[key] = f
		e.byID[f.id] = f
	}
	tk.f = f
	tk.clrSince = 0
	f.rules = append(f.rules, c)
	if ek == EntityTerminal {
		cur := (*fdd.Evidence)(p)
		f.observe(cur, cur.At.UnixNano(), e.terminalMask(cur, cur.At.UnixNano()))
		shown, ok := e.shownFor(tk, c, cur)
		f.lastTerm, f.lastShown = *shown, ok
	} else {
		f.lastLoop = *(*fdd.LoopEvidence)(p)
	}
	f.hasLast = true
	f.lastTrueAt = at.UnixNano()
	f.confidence = c.confidenceAt(p)
	switch {
	case isNew:
		f.rule, f.severity = c, c.severity
		f.since = time.Unix(0, tk.since).UTC()
		f.openedAt = at
		f.state = StateOpen
		from := StatePending
		if until, ok := e.suppress[f.id]; ok && at.Before(until) {
			f.state, f.suppressTil = StateSuppressed, until
		}
		out = append(out, e.transition(f, from, f.state, at))
	case c.severity < f.severity:
		f.rule, f.severity = c, c.severity
		out = append(out, e.transition(f, f.state, f.state, at))
	}
	if c.suppress != 0 {
		out = e.explainKinds(ek, idx, c, f, at, out)
	}
	return out
}

// deactivate releases rule c on an entity; the fault clears when no rule
// holds it any more.
func (e *Evaluator) deactivate(ek EntityKind, idx int, c *compiled, tk *tracker, at time.Time, out []Transition) []Transition {
	f := tk.f
	tk.f, tk.since, tk.clrSince = nil, 0, 0
	for i, r := range f.rules {
		if r == c {
			f.rules = append(f.rules[:i], f.rules[i+1:]...)
			break
		}
	}
	if len(f.rules) > 0 {
		if f.rule == c {
			f.rule = f.rules[0]
			for _, r := range f.rules[1:] {
				if r.severity < f.rule.severity {
					f.rule = r
				}
			}
			f.severity = f.rule.severity
		}
		return out
	}
	out = append(out, e.transition(f, f.state, StateClear, at))
	e.removeFault(f)
	if c.suppress != 0 {
		e.recomputeExplain(ek, idx)
	}
	return out
}

func (e *Evaluator) removeFault(f *fault) {
	delete(e.faults, f.key)
	delete(e.byID, f.id)
}

// LoopExplainLead is how long before a loop fault's condition first held a
// terminal fault may have started and still be explained (closed) by it. A
// loop's supply can run low for most of a day before enough boxes saturate
// to open the loop fault (a weekend or a mild morning carries too little
// load), so the boxes' own shortfall faults from that day are the loop's;
// a terminal fault that was already raised before then has a cause of its
// own (a fouled coil stays fouled while the loop is cold) and stays open
// [engineering inference].
const LoopExplainLead = 24 * time.Hour

// explainKinds records that fault f (opened by c) explains c.suppress kinds
// and closes faults of those kinds already raised: on the same terminal, or
// on every terminal of a loop (there only those that started at most
// LoopExplainLead before the loop fault's condition).
func (e *Evaluator) explainKinds(ek EntityKind, idx int, c *compiled, f *fault, at time.Time, out []Transition) []Transition {
	var targets []int
	if ek == EntityLoop {
		e.loopExplain[idx] |= c.suppress
		targets = e.loopTerms[idx]
	} else {
		e.explain[idx] |= c.suppress
		targets = []int{idx}
	}
	for _, t := range targets {
		for k := 0; k < kindSlots; k++ {
			if c.suppress&(1<<uint(k)) == 0 {
				continue
			}
			g := e.faults[faultKey{EntityTerminal, t, fdd.Kind(k)}]
			if g == nil {
				continue
			}
			if ek == EntityLoop && g.since.Before(f.since.Add(-LoopExplainLead)) {
				// Raised before the loop went short: the loop did not
				// cause it, and the box's own fault stays open.
				continue
			}
			trks := e.trackers(EntityTerminal, t)
			for _, r := range g.rules {
				tk := &trks[r.slot]
				tk.f, tk.since, tk.clrSince = nil, 0, 0
			}
			g.rules = nil
			tr := e.transition(g, g.state, StateClear, at)
			tr.ExplainedBy = f.id
			out = append(out, tr)
			e.removeFault(g)
		}
		if ek == EntityLoop {
			e.recomputeExplain(EntityTerminal, t)
		}
	}
	if ek == EntityTerminal {
		e.recomputeExplain(EntityTerminal, idx)
	}
	return out
}

// recomputeExplain rebuilds an entity's explained-kinds mask from the faults
// still raised on it.
func (e *Evaluator) recomputeExplain(ek EntityKind, idx int) {
	var m uint32
	for k := 0; k < kindSlots; k++ {
		if f := e.faults[faultKey{ek, idx, fdd.Kind(k)}]; f != nil {
			for _, r := range f.rules {
				m |= r.suppress
			}
		}
	}
	if ek == EntityLoop {
		e.loopExplain[idx] = m
	} else {
		e.explain[idx] = m
	}
}

// transition builds the published record of f changing from → to.
func (e *Evaluator) transition(f *fault, from, to State, at time.Time) Transition {
	c := f.rule
	tr := Transition{
		FaultID: f.id, Entity: f.entity, EntityKind: f.key.ek, Kind: f.key.kind,
		From: from, To: to, At: at, Since: f.since, OpenedAt: f.openedAt,
		Severity: f.severity, Confidence: f.confidence,
		AckedBy: f.ackBy, AckedAt: f.ackAt, SuppressedUntil: f.suppressTil,
	}
	var sch *schema
	var p unsafe.Pointer
	switch f.key.ek {
	case EntityTerminal:
		term := &e.site.Terminals[f.key.idx]
		tr.AHU, tr.Loop, tr.Location = term.AHU, term.Loop, term.Location
		sch, p = e.rs.sch.terminal, unsafe.Pointer(&f.lastTerm)
	case EntityLoop:
		tr.Loop = f.entity
		sch, p = e.rs.sch.loop, unsafe.Pointer(&f.lastLoop)
	}
	tr.Impact = e.impact(f)
	if c == nil {
		tr.Evidence = f.saved
		return tr
	}
	tr.Rule, tr.Title, tr.Source = c.rule.ID, c.rule.Title, c.rule.Source
	tr.Causes = append([]string(nil), c.rule.Causes...)
	tr.Checks = append([]string(nil), c.rule.Checks...)
	vals := map[string]float64{}
	if f.hasLast {
		for _, name := range sch.order {
			vals[name] = sch.fields[name].read(p)
		}
		if f.key.ek == EntityTerminal {
			tr.Evidence = terminalEvidence(&f.lastTerm)
		}
		if len(c.show) > 0 {
			tr.Evidence.Extra = make(map[string]float64, len(c.show))
			for _, fl := range c.show {
				tr.Evidence.Extra[fl.name] = fl.read(p)
			}
		}
	} else {
		tr.Evidence = f.saved
		for k, v := range f.saved.Extra {
			vals[k] = v
		}
	}
	tr.Message, tr.MessageIP = c.render(&msgData{
		Entity: f.entity, Kind: f.key.kind.String(), Rule: c.rule.ID, Title: c.rule.Title, Source: c.rule.Source,
		E: vals, Impact: tr.Impact, Currency: tr.Impact.Currency, Loop: tr.Loop, AHU: tr.AHU,
	})
	return tr
}

func terminalEvidence(ev *fdd.Evidence) Evidence {
	return Evidence{
		ObservedRiseK: ev.ObservedRiseK, ExpectedRiseK: ev.ExpectedRiseK, SigmaK: ev.SigmaK,
		ValveFrac: ev.ValveFrac, AirflowM3s: ev.AirflowM3s, UAFactor: ev.UAFactor,
		FlowFactor: ev.FlowFactor, LeakRiseK: ev.LeakRiseK, LeakFlowFrac: ev.LeakFlowFrac,
	}
}

// sortedFaults returns the raised faults ordered by ID.
func (e *Evaluator) sortedFaults() []*fault {
	out := make([]*fault, 0, len(e.faults))
	for _, f := range e.faults {
		out = append(out, f)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].id < out[j].id })
	return out
}
