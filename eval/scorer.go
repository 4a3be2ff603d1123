package eval

import (
	"sort"
	"time"

	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/site"
)

// Grace is how long after a true fault ends an alarm still counts as its
// detection (and not as a false alarm): the clear persistence of the slow
// rules.
const Grace = 24 * time.Hour

// loopExplained are terminal kinds a cold loop legitimately causes.
var loopExplained = map[fdd.Kind]bool{fdd.KindFouledCoil: true, fdd.KindStarvedCoil: true, fdd.KindLowDischarge: true}

type episode struct {
	id       string
	rule     string
	entity   string
	kind     fdd.Kind
	opened   time.Time
	closed   time.Time // zero: open at the end
	explain  bool
	terminal int // -1 for loops
}

type truthState struct {
	Truth
	terminal int // -1 for a loop
	loop     int
	opMin    float64 // heating-operation minutes from start until detected
	detected bool
}

// Scorer accumulates one run. Feed it every step, then call Result.
type Scorer struct {
	site      *site.Site
	truths    []truthState
	episodes  map[string]*episode
	done      []*episode
	termLoop  []int
	obsMin    []float64 // observed minutes per terminal
	cleanMin  []float64 // observed minutes with no true fault on the terminal or its loop
	stepMin   float64
	start     time.Time
	end       time.Time
	termIndex map[string]int
	loopIndex map[string]int
}

// NewScorer prepares scoring of truths on s; step is the analysis step.
func NewScorer(s *site.Site, truths []Truth, step time.Duration) *Scorer {
	sc := &Scorer{site: s, episodes: map[string]*episode{}, stepMin: step.Minutes(),
		termIndex: map[string]int{}, loopIndex: map[string]int{}}
	for i, t := range s.Terminals {
		sc.termIndex[t.ID] = i
	}
	for i, l := range s.Loops {
		sc.loopIndex[l.ID] = i
	}
	sc.termLoop = make([]int, len(s.Terminals))
	for i, t := range s.Terminals {
		sc.termLoop[i] = -1
		if l, ok := sc.loopIndex[t.Loop]; ok {
			sc.termLoop[i] = l
		}
	}
	for _, t := range truths {
		ts := truthState{Truth: t, terminal: -1, loop: -1}
		if i, ok := sc.termIndex[t.Entity]; ok {
			ts.terminal, ts.loop = i, sc.termLoop[i]
		} else if l, ok := sc.loopIndex[t.Entity]; ok {
			ts.loop = l
		}
		sc.truths = append(sc.truths, ts)
	}
	sc.obsMin = make([]float64, len(s.Terminals))
	sc.cleanMin = make([]float64, len(s.Terminals))
	return sc
}

// Observe records one analysis step: the evidence (for operating time) and
// the transitions the evaluator published in it.
func (sc *Scorer) Observe(at time.Time, ev []fdd.Evidence, loops []fdd.LoopEvidence, trs []rules.Transition) {
	if sc.start.IsZero() {
		sc.start = at
	}
	sc.end = at.Add(time.Duration(sc.stepMin * float64(time.Minute)))
	plantOn := make(map[int]bool, len(loops))
	for i := range loops {
		plantOn[loops[i].Loop] = loops[i].PlantOn
	}
	faulty := make([]bool, len(sc.site.Terminals))
	for i := range sc.truths {
		t := &sc.truths[i]
		if at.Before(t.Start) || !at.Before(t.End) {
			continue
		}
		switch {
		case t.terminal >= 0:
			faulty[t.terminal] = true
		case t.loop >= 0:
			for k, l := range sc.termLoop {
				if l == t.loop {
					faulty[k] = true
				}
			}
		}
	}
	for k := range ev {
		e := &ev[k]
		if e.Terminal < 0 || e.Terminal >= len(sc.obsMin) {
			continue
		}
		sc.obsMin[e.Terminal] += sc.stepMin
		if !faulty[e.Terminal] {
			sc.cleanMin[e.Terminal] += sc.stepMin
		}
		for i := range sc.truths {
			t := &sc.truths[i]
			if t.detected || at.Before(t.Start) || !at.Before(t.End.Add(Grace)) {
				continue
			}
			if t.terminal == e.Terminal && e.FanOn && e.PlantOn {
				t.opMin += sc.stepMin
			}
		}
	}
	for i := range sc.truths {
		t := &sc.truths[i]
		if t.terminal < 0 && t.loop >= 0 && !t.detected && !at.Before(t.Start) && at.Before(t.End.Add(Grace)) && plantOn[t.loop] {
			t.opMin += sc.stepMin
		}
	}
	for i := range trs {
		tr := &trs[i]
		switch {
		case tr.From == rules.StatePending && (tr.To == rules.StateOpen || tr.To == rules.StateSuppressed):
			ep := &episode{id: tr.FaultID, rule: tr.Rule, entity: tr.Entity, kind: tr.Kind, opened: tr.At, terminal: -1}
			if tr.EntityKind == rules.EntityTerminal {
				ep.terminal = sc.termIndex[tr.Entity]
			}
			sc.episodes[tr.FaultID] = ep
			sc.done = append(sc.done, ep)
			for j := range sc.truths {
				t := &sc.truths[j]
				if !t.detected && t.Kind == tr.Kind && sc.matches(t, ep) {
					t.detected = true
				}
			}
		case tr.To == rules.StateClear:
			if ep := sc.episodes[tr.FaultID]; ep != nil {
				ep.closed = tr.At
				ep.explain = tr.ExplainedBy != ""
				delete(sc.episodes, tr.FaultID)
			}
		}
	}
}

// matches reports whether episode ep can be caused by truth t.
func (sc *Scorer) matches(t *truthState, ep *episode) bool {
	if ep.opened.Before(t.Start) || !ep.opened.Before(t.End.Add(Grace)) {
		return false
	}
	if ep.entity == t.Entity {
		return true
	}
	return t.terminal < 0 && t.loop >= 0 && ep.terminal >= 0 && sc.termLoop[ep.terminal] == t.loop && loopExplained[ep.kind]
}

// KindRow is one line of the evaluation table.
type KindRow struct {
	Kind          fdd.Kind
	Faults        int
	Detected      int
	Isolated      int
	MedianTTDh    float64 // wall-clock hours, first episode of the true kind (NaN when none)
	MedianTTDOpH  float64 // heating-operation hours
	Undetected    []string
	Misclassified []string // "entity: got kind"
}

// Result is the scored run.
type Result struct {
	Rows            []KindRow
	FalseAlarms     int
	FalseAlarmList  []string
	TerminalWeeks   float64 // fault-free terminal time
	FalsePer1000TW  float64
	TotalFaults     int
	TotalDetected   int
	TotalIsolated   int
	Episodes        int
	ExplainedClosed int
}

// Result scores everything observed so far.
func (sc *Scorer) Result() Result {
	var res Result
	rows := map[fdd.Kind]*KindRow{}
	ttd := map[fdd.Kind][]float64{}
	ttdOp := map[fdd.Kind][]float64{}
	used := map[*episode]bool{}
	for i := range sc.truths {
		t := &sc.truths[i]
		r := rows[t.Kind]
		if r == nil {
			r = &KindRow{Kind: t.Kind}
			rows[t.Kind] = r
		}
		r.Faults++
		durations := map[fdd.Kind]time.Duration{}
		var first *episode
		for _, ep := range sc.done {
			if ep.explain || !sc.matches(t, ep) {
				continue
			}
			used[ep] = true
			end := ep.closed
			if end.IsZero() || end.After(t.End) {
				end = t.End
			}
			if d := end.Sub(ep.opened); d > 0 {
				durations[ep.kind] += d
			} else {
				durations[ep.kind] += time.Nanosecond
			}
			if ep.kind == t.Kind && (first == nil || ep.opened.Before(first.opened)) {
				first = ep
			}
		}
		if len(durations) == 0 {
			r.Undetected = append(r.Undetected, t.Entity)
			continue
		}
		r.Detected++
		best, bestD := fdd.KindNone, time.Duration(-1)
		for k, d := range durations {
			if d > bestD || (d == bestD && k == t.Kind) {
				best, bestD = k, d
			}
		}
		if best == t.Kind {
			r.Isolated++
		} else {
			r.Misclassified = append(r.Misclassified, t.Entity+": "+best.String())
		}
		if first != nil {
			ttd[t.Kind] = append(ttd[t.Kind], first.opened.Sub(t.Start).Hours())
			ttdOp[t.Kind] = append(ttdOp[t.Kind], t.opMin/60)
		}
	}
	for _, ep := range sc.done {
		res.Episodes++
		if ep.explain {
			res.ExplainedClosed++
			continue
		}
		if !used[ep] {
			res.FalseAlarms++
			res.FalseAlarmList = append(res.FalseAlarmList, ep.id+" ("+ep.rule+") at "+ep.opened.Format(time.RFC3339))
		}
	}
	for k, r := range rows {
		r.MedianTTDh = median(ttd[k])
		r.MedianTTDOpH = median(ttdOp[k])
		res.Rows = append(res.Rows, *r)
		res.TotalFaults += r.Faults
		res.TotalDetected += r.Detected
		res.TotalIsolated += r.Isolated
	}
	sort.Slice(res.Rows, func(i, j int) bool { return res.Rows[i].Kind < res.Rows[j].Kind })
	for _, m := range sc.cleanMin {
		res.TerminalWeeks += m / (7 * 24 * 60)
	}
	if res.TerminalWeeks > 0 {
		res.FalsePer1000TW = float64(res.FalseAlarms) / res.TerminalWeeks * 1000
	}
	return res
}

func median(v []float64) float64 {
	if len(v) == 0 {
		return nan()
	}
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

func nan() float64 { var z float64; return z / z }
