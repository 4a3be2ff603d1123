package rules

import (
	"errors"
	"fmt"
	"time"
	"unsafe"

	"risewatch/fdd"
	"risewatch/site"
)

// Evaluator applies a Ruleset to the evidence stream of one site and keeps
// every fault's lifecycle. It is not safe for concurrent use; shard
// terminals over several evaluators (one per goroutine) when needed.
type Evaluator struct {
	site *site.Site
	rs   *Ruleset
	term []*compiled // terminal rules, evaluation order
	loop []*compiled // loop rules
	nT   int
	nL   int
	trk  []tracker // terminal t, rule r: trk[t*len(term)+r]
	ltrk []tracker // loop l, rule r: ltrk[l*len(loop)+r]

	termLoop    []int   // loop index per terminal, -1 when unknown
	loopTerms   [][]int // terminals per loop
	explain     []uint32
	loopExplain []uint32 // len nL+1; slot nL is always 0 (terminals without a loop)

	// Hot path (see prefilter.go): per terminal and prefilter word, the
	// rules that apply to the terminal (en) and those whose tracker may not
	// be idle (busy: pending, clearing or holding a fault; a stale bit only
	// costs a look), at bit 2k for rule k of the word; gateOK[m*nW+w] the
	// rules whose need/forbid gates hold under gate mask m. Word 0 is in
	// hot, with the terminal's operating time, so that one record touches
	// one entry; words 1 … nW−1 are in enX and busyX at t*(nW−1)+w−1 (see
	// enAt, busyAt).
	hot         []termHot
	pf          prefilter
	nW          int
	enX, busyX  []uint64
	gateOK      []uint64
	lpf         prefilter    // of the loop rules (stepLoop)
	noPrefilter bool         // tests: look at every rule, as without the prefilter
	out         []Transition // stepTerminals' transitions while it runs (nil between steps)

	termIdx map[string]int
	loopIdx map[string]int

	// held is the condition-true time of pending trackers of rules with
	// a within window (pendWithin), made when such a tracker first holds.
	held map[*tracker]*heldTime
	// shown is, for pending trackers of rules with evidence_when, the
	// latest record in which it held (keepShown), for the fault to show
	// when it opens.
	shown map[*tracker]*fdd.Evidence

	faults   map[faultKey]*fault
	byID     map[string]*fault
	suppress map[string]time.Time

	maxGapNs int64
	seasonLo int64 // site-local day [seasonLo, seasonHi) of the cached answer (Unix ns)
	seasonHi int64
	seasonOK bool
	// seasonBit is gSeason when seasonOK, else 0 (the hot path ORs it in).
	seasonBit gateMask
	now       time.Time
}

// tracker is the persistence state of one rule on one entity.
type tracker struct {
	since, last       int64 // condition true since / last true (unix ns); since 0 = not pending
	clrSince, clrLast int64
	f                 *fault // non-nil while this rule holds the fault open
	off               bool   // rule does not apply to this entity (disabled, only/except)
}

// termHot is what the hot path reads and writes per terminal record: the
// operating time and prefilter word 0's en and busy bits.
type termHot struct {
	op       operating
	en, busy uint64
}

// enAt is the en word w of terminal t.
func (e *Evaluator) enAt(t, w int) *uint64 {
	if w == 0 {
		return &e.hot[t].en
	}
	return &e.enX[t*(e.nW-1)+w-1]
}

// busyAt is the busy word w of terminal t.
func (e *Evaluator) busyAt(t, w int) *uint64 {
	if w == 0 {
		return &e.hot[t].busy
	}
	return &e.busyX[t*(e.nW-1)+w-1]
}

// operating accumulates how long a terminal's heating is in operation (fan
// and plant on), to turn a fault's power into a weekly energy.
type operating struct {
	lastAt  int64
	totalNs int64 // observed time
	opNs    int64 // of it, in heating operation
}

type faultKey struct {
	ek   EntityKind
	idx  int
	kind fdd.Kind
}

// NewEvaluator prepares evaluation of rs over the site's terminals and loops.
func NewEvaluator(s *site.Site, rs *Ruleset) (*Evaluator, error) {
	if s == nil {
		return nil, errors.New("rules: nil site")
	}
	if rs == nil {
		var err error
		if rs, err = Default(); err != nil {
			return nil, err
		}
	}
	e := &Evaluator{
		site: s, rs: rs, nT: len(s.Terminals), nL: len(s.Loops),
		held: map[*tracker]*heldTime{}, shown: map[*tracker]*fdd.Evidence{},
		faults: map[faultKey]*fault{}, byID: map[string]*fault{}, suppress: map[string]time.Time{},
		maxGapNs: int64(rs.maxGap),
	}
	for _, c := range rs.rules {
		if c.loop {
			e.loop = append(e.loop, c)
		} else {
			e.term = append(e.term, c)
		}
	}
	loopIdx := map[string]int{}
	for i, l := range s.Loops {
		if _, dup := loopIdx[l.ID]; dup {
			return nil, fmt.Errorf("rules: site %s: duplicate loop ID %q", s.Name, l.ID)
		}
		loopIdx[l.ID] = i
	}
	termIdx := map[string]int{}
	for i, t := range s.Terminals {
		if _, dup := termIdx[t.ID]; dup {
			return nil, fmt.Errorf("rules: site %s: duplicate terminal ID %q", s.Name, t.ID)
		}
		termIdx[t.ID] = i
	}
	e.termIdx, e.loopIdx = termIdx, loopIdx
	e.termLoop = make([]int, e.nT)
	e.loopTerms = make([][]int, e.nL)
	for t, term := range s.Terminals {
		l, ok := loopIdx[term.Loop]
		if !ok {
			l = -1
		} else {
			e.loopTerms[l] = append(e.loopTerms[l], t)
		}
		e.termLoop[t] = l
	}
	e.explain = make([]uint32, e.nT)
	e.loopExplain = make([]uint32, e.nL+1)
	e.hot = make([]termHot, e.nT)
	e.trk = make([]tracker, e.nT*len(e.term))
	for t, term := range s.Terminals {
		for r, c := range e.term {
			e.trk[t*len(e.term)+r].off = !c.appliesTo(term.ID)
		}
	}
	e.pf = buildPrefilter(e.term, rs.sch.terminal, true)
	e.nW = len(e.pf.words)
	e.enX = make([]uint64, e.nT*max(e.nW-1, 0))
	e.busyX = make([]uint64, e.nT*max(e.nW-1, 0))
	e.gateOK = make([]uint64, (gateMaskMax+1)*e.nW)
	for r, c := range e.term {
		w, bit := r/rulesPerWord, uint64(1)<<(2*uint(r%rulesPerWord))
		for m := 0; m <= gateMaskMax; m++ {
			if g := gateMask(m); g&c.need == c.need && g&c.forbid == 0 {
				e.gateOK[m*e.nW+w] |= bit
			}
		}
		for t := range s.Terminals {
			if !e.trk[t*len(e.term)+r].off {
				*e.enAt(t, w) |= bit
			}
		}
	}
	e.lpf = buildPrefilter(e.loop, rs.sch.loop, false)
	e.ltrk = make([]tracker, e.nL*len(e.loop))
	for l, lp := range s.Loops {
		for r, c := range e.loop {
			e.ltrk[l*len(e.loop)+r].off = !c.appliesTo(lp.ID)
		}
	}
	return e, nil
}

// Ruleset returns the rules the evaluator applies.
func (e *Evaluator) Ruleset() *Ruleset { return e.rs }

// Step evaluates one analysis step: loop evidence first (so a loop fault that
// opens explains its terminals in the same step), then terminal evidence.
// Transitions are appended to out and returned. Records with an index
// outside the site are ignored. Step does not allocate unless a fault
// changes state.
func (e *Evaluator) Step(ev []fdd.Evidence, loops []fdd.LoopEvidence, out []Transition) []Transition {
	var now time.Time
	switch {
	case len(ev) > 0:
		now = ev[0].At
	case len(loops) > 0:
		now = loops[0].At
	}
	if now.After(e.now) {
		e.now = now
	}
	if len(e.suppress) > 0 {
		out = e.expireSuppressions(e.now, out)
	}
	for i := range loops {
		out = e.stepLoop(&loops[i], out)
	}
	return e.stepTerminals(ev, out)
}

// heatingSeason reports whether ns (Unix nanoseconds) lies in the
// configured season, caching the answer for the site-local day it falls in.
func (e *Evaluator) heatingSeason(ns int64) bool {
	if ns >= e.seasonLo && ns < e.seasonHi {
		return e.seasonOK
	}
	return e.seasonDay(ns)
}

// seasonDay computes and caches the heating-season answer for the local day
// of at (its bounds follow the site's time zone, daylight saving included).
func (e *Evaluator) seasonDay(ns int64) bool {
	loc := e.site.Location
	if loc == nil {
		loc = time.UTC
	}
	lt := time.Unix(0, ns).In(loc)
	start := time.Date(lt.Year(), lt.Month(), lt.Day(), 0, 0, 0, 0, loc)
	e.seasonLo, e.seasonHi = start.UnixNano(), start.AddDate(0, 0, 1).UnixNano()
	md := int(lt.Month())*100 + lt.Day()
	lo, hi := e.rs.seasonLo, e.rs.seasonHi
	switch {
	case !e.rs.seasonOn:
		e.seasonOK = true
	case lo <= hi:
		e.seasonOK = md >= lo && md <= hi
	default:
		e.seasonOK = md >= lo || md <= hi
	}
	e.seasonBit = 0
	if e.seasonOK {
		e.seasonBit = gSeason
	}
	return e.seasonOK
}

// terminalMask is the gate mask of one evidence record.
func (e *Evaluator) terminalMask(ev *fdd.Evidence, ns int64) gateMask { return e.gateMaskOf(ev, ns) }

func (e *Evaluator) stepLoop(lv *fdd.LoopEvidence, out []Transition) []Transition {
	l := lv.Loop
	if l < 0 || l >= e.nL {
		return out
	}
	at := lv.At.UnixNano()
	var mask gateMask
	if lv.PlantOn {
		mask |= gPlant
	}
	if e.heatingSeason(at) {
		mask |= gSeason
	}
	n := len(e.loop)
	trks := e.ltrk[l*n : l*n+n]
	p := unsafe.Pointer(lv)
	pfW, pfBits := -1, uint64(0) // the prefilter bits of word pfW at lv
	for r, c := range e.loop {
		tk := &trks[r]
		if tk.off {
			continue
		}
		if tk.f == nil && tk.since == 0 && !e.noPrefilter {
			// An idle tracker changes only when the gates hold and the
			// condition is true, which needs the rule's prefilter clauses
			// (prefilter.go); pend leaves it as it is otherwise.
			if w := r / rulesPerWord; w != pfW {
				pfW, pfBits = w, e.lpf.words[w].pass(p)
			}
			if pfBits&(1<<(2*uint(r%rulesPerWord))) == 0 {
				continue
			}
		}
		gatesOK := mask&c.need == c.need && mask&c.forbid == 0 && c.gates.eval(p) == triTrue
		if tk.f == nil {
			if e.pend(tk, c, gatesOK, p, at) {
				out = e.activate(EntityLoop, l, c, tk, p, lv.At, out)
			}
			continue
		}
		if e.release(tk, c, gatesOK, p, at) {
			out = e.deactivate(EntityLoop, l, c, tk, lv.At, out)
		} else if gatesOK && c.when.eval(p) == triTrue {
			tk.f.lastLoop = *lv
			tk.f.hasLast = true
		}
	}
	return out
}

// pend advances an inactive tracker and reports whether its persistence is
// met. A false condition under met gates resets it; an unknown or gated
// sample holds it unless the gap since the last true sample exceeds max_gap.
func (e *Evaluator) pend(tk *tracker, c *compiled, gatesOK bool, p unsafe.Pointer, at int64) bool {
	if c.withinNs > 0 {
		return e.pendWithin(tk, c, gatesOK, p, at)
	}
	if !gatesOK {
		if tk.since != 0 && at-tk.last > e.maxGapNs {
			tk.since = 0
		}
		return false
	}
	switch c.when.eval(p) {
	case triTrue:
		if tk.since == 0 || at-tk.last > e.maxGapNs {
			tk.since = at
		}
		tk.last = at
		if len(c.showWhen) > 0 {
			e.keepShown(tk, c, p)
		}
		return at-tk.since >= c.forNs
	case triFalse:
		tk.since = 0
	default:
		if tk.since != 0 && at-tk.last > e.maxGapNs {
			tk.since = 0
		}
	}
	return false
}

// keepShown copies terminal record p for pending tracker tk when rule c's
// evidence_when holds in it (the condition holds: the callers' case).
func (e *Evaluator) keepShown(tk *tracker, c *compiled, p unsafe.Pointer) {
	if c.showWhen.eval(p) != triTrue {
		return
	}
	r := e.shown[tk]
	if r == nil {
		r = new(fdd.Evidence)
		e.shown[tk] = r
	}
	*r = *(*fdd.Evidence)(p)
}

// shownFor is the record fault f of rule c shows on opening at record cur
// (pending tracker tk): cur when evidence_when holds in it, else the
// latest record of this pending run in which it held, else cur. It
// reports whether evidence_when holds in the record returned, and forgets
// the kept record.
func (e *Evaluator) shownFor(tk *tracker, c *compiled, cur *fdd.Evidence) (*fdd.Evidence, bool) {
	if len(c.showWhen) == 0 {
		return cur, true
	}
	r := e.shown[tk]
	delete(e.shown, tk)
	if c.showWhen.eval(unsafe.Pointer(cur)) == triTrue {
		return cur, true
	}
	if r != nil && tk.since != 0 && r.At.UnixNano() >= tk.since {
		return r, true
	}
	return cur, false
}

// release advances an active tracker's clear timer and reports whether the
// clear persistence is met (hysteresis: the clear condition has its own
// thresholds and time).
func (e *Evaluator) release(tk *tracker, c *compiled, gatesOK bool, p unsafe.Pointer, at int64) bool {
	if !gatesOK {
		if tk.clrSince != 0 && at-tk.clrLast > e.maxGapNs {
			tk.clrSince = 0
		}
		return false
	}
	switch c.clear.eval(p) {
	case triTrue:
		if tk.clrSince == 0 || at-tk.clrLast > e.maxGapNs {
			tk.clrSince = at
		}
		tk.clrLast = at
		return at-tk.clrSince >= c.clearForNs
	case triFalse:
		tk.clrSince = 0
	default:
		if tk.clrSince != 0 && at-tk.clrLast > e.maxGapNs {
			tk.clrSince = 0
		}
	}
	return false
}

// accumulateOperating adds the time since terminal t's last sample to its
// total and, with the fan and plant on, heating-operation time (gaps
// beyond maxGapNs are not counted).
func (e *Evaluator) accumulateOperating(t int, at int64, mask gateMask) {
	e.addOperating(&e.hot[t].op, at, mask)
}

// addOperating is accumulateOperating on the terminal's sums o (the hot
// path indexes them from a slice bounded once per step).
func (e *Evaluator) addOperating(o *operating, at int64, mask gateMask) {
	if o.lastAt != 0 {
		if dt := at - o.lastAt; dt > 0 && dt <= e.maxGapNs {
			o.totalNs += dt
			if mask&(gFan|gPlant) == gFan|gPlant {
				o.opNs += dt
			}
		}
	}
	if at > o.lastAt {
		o.lastAt = at
	}
}

// operatingHoursPerWeek is the terminal's measured heating-operation time
// scaled to a week. Before a day of data it assumes 60 h/week (a typical
// occupied schedule, common practice).
func (e *Evaluator) operatingHoursPerWeek(t int) float64 {
	if t < 0 || t >= e.nT {
		return 60
	}
	o := e.hot[t].op
	if o.totalNs < int64(24*time.Hour) {
		return 60
	}
	return 168 * float64(o.opNs) / float64(o.totalNs)
}

// confidenceAt is the rule's confidence for the evidence at p.
func (c *compiled) confidenceAt(p unsafe.Pointer) float64 {
	if c.confField != nil {
		v := c.confField.read(p)
		if v == v && v > 0 {
			if v > 1 {
				v = 1
			}
			return v
		}
	}
	return c.confConst
}

// entityID names entity idx of kind ek.
func (e *Evaluator) entityID(ek EntityKind, idx int) string {
	switch ek {
	case EntityTerminal:
		return e.site.Terminals[idx].ID
	case EntityLoop:
		return e.site.Loops[idx].ID
	}
	return fmt.Sprintf("entity-%d", idx)
}
