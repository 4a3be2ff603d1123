package metrics

import (
	"sync"

	"github.com/prometheus/client_golang/prometheus"
	dto "github.com/prometheus/client_model/go"

	"risewatch/fdd"
	"risewatch/rules"
)

// loopKinds are the fault kinds raised on a hot-water loop rather than on a
// terminal; every other kind is pre-created per terminal.
var loopKinds = map[fdd.Kind]bool{fdd.KindColdLoop: true}

// kindMask is a set of fault kinds, bit k for fdd.Kind k.
type kindMask uint64

const (
	faultActiveName = namespace + "_fault_active"
	faultActiveHelp = "1 while a fault of this kind is open or acknowledged on the terminal (or loop/AHU), else 0."
)

// faultCollector exports risewatch_fault_active at scrape time from one
// pair of bit masks per entity: which kinds are active, and which kinds
// have a series (every terminal kind on every terminal from the start,
// the cold-loop kind on every loop, anything else once reported). A
// terminal costs 16 octets instead of a gauge per kind.
type faultCollector struct {
	m    *Metrics
	desc *prometheus.Desc
	mu   sync.RWMutex
	term []entityFaults // by terminal index
	loop []entityFaults // by loop index
	ahu  []entityFaults // by AHU index
}

type entityFaults struct{ active, shown kindMask }

func (m *Metrics) newFaultMetrics() {
	fc := &faultCollector{m: m, desc: prometheus.NewDesc(faultActiveName, faultActiveHelp, []string{"site", "terminal", "ahu", "loop", "kind"}, nil),
		term: make([]entityFaults, len(m.site.Terminals)), loop: make([]entityFaults, len(m.site.Loops)),
		ahu: make([]entityFaults, len(m.site.AHUs))}
	m.faults = fc
	m.trans = prometheus.NewCounterVec(prometheus.CounterOpts{
		Namespace: namespace, Subsystem: "fault", Name: "transitions_total",
		Help: "Fault lifecycle transitions by fault kind and target state.",
	}, []string{"site", "kind", "state"})
	m.unknown = prometheus.NewCounter(prometheus.CounterOpts{
		Namespace: namespace, Subsystem: "metrics", Name: "unknown_entity_total",
		Help: "Evidence or transitions naming an entity that is not in the site (not exported).",
	})
	m.reg.MustRegister(fc) // streamed by the handler, not in m.small
	m.both().MustRegister(m.trans, m.unknown)
	var termKinds, loopMask kindMask
	for _, k := range fdd.AllKinds() {
		if loopKinds[k] {
			loopMask |= 1 << k
		} else {
			termKinds |= 1 << k
		}
	}
	for i := range fc.term {
		fc.term[i].shown = termKinds
	}
	for i := range fc.loop {
		fc.loop[i].shown = loopMask
	}
}

// Describe sends the fault gauge's descriptor.
func (fc *faultCollector) Describe(ch chan<- *prometheus.Desc) { ch <- fc.desc }

// Collect sends one series per shown kind of every entity.
func (fc *faultCollector) Collect(ch chan<- prometheus.Metric) {
	s := fc.m.site
	fc.mu.RLock()
	defer fc.mu.RUnlock()
	var kinds [64]*dto.LabelPair // kind label pairs, made once per scrape
	send := func(e entityFaults, terminal, ahu, loop string) {
		if e.shown == 0 {
			return
		}
		ls := entityLabels(s.Name, terminal, ahu, loop)
		for k := fdd.Kind(0); e.shown>>k != 0; k++ {
			if e.shown&(1<<k) == 0 {
				continue
			}
			v := 0.0
			if e.active&(1<<k) != 0 {
				v = 1
			}
			if kinds[k] == nil {
				kinds[k] = labelPair(lnKind, ptr(k.String()))
			}
			ch <- &gauge{desc: fc.desc, labels: withKind(ls, kinds[k]), value: v}
		}
	}
	for i, e := range fc.term {
		t := &s.Terminals[i]
		send(e, t.ID, t.AHU, t.Loop)
	}
	for i, e := range fc.loop {
		send(e, "", "", s.Loops[i].ID)
	}
	for i, e := range fc.ahu {
		send(e, "", s.AHUs[i].ID, "")
	}
}

// active returns whether kind k is active on the entity (tests).
func (fc *faultCollector) active(kind rules.EntityKind, i int, k fdd.Kind) float64 {
	fc.mu.RLock()
	defer fc.mu.RUnlock()
	list := map[rules.EntityKind][]entityFaults{rules.EntityTerminal: fc.term, rules.EntityLoop: fc.loop, rules.EntityAHU: fc.ahu}[kind]
	if list[i].active&(1<<k) != 0 {
		return 1
	}
	return 0
}

// activeAfter says whether a fault counts as active after a transition: open
// and acknowledged faults are; clear and pending are not; suppression is a
// people decision about notices, so a suppressed fault stays as it was.
func activeAfter(tr *rules.Transition) bool {
	switch tr.To {
	case rules.StateOpen, rules.StateAcked:
		return true
	case rules.StateSuppressed:
		return tr.From == rules.StateOpen || tr.From == rules.StateAcked
	}
	return false
}

// ObserveTransition updates the active-fault gauges and counts the
// transition. Entities not in the site are counted as unknown and dropped.
func (m *Metrics) ObserveTransition(tr *rules.Transition) {
	fc := m.faults
	fc.mu.Lock()
	e := fc.entity(tr)
	if e != nil {
		bit := kindMask(1) << tr.Kind
		e.shown |= bit
		if activeAfter(tr) {
			e.active |= bit
		} else {
			e.active &^= bit
		}
	}
	fc.mu.Unlock()
	if e == nil {
		m.unknown.Inc()
		return
	}
	m.trans.WithLabelValues(m.site.Name, tr.Kind.String(), tr.To.String()).Inc()
}

// entity finds the transition's entity (nil: not in the site, or an unknown kind).
func (fc *faultCollector) entity(tr *rules.Transition) *entityFaults {
	if tr.Kind.String() == "unknown" || tr.Kind == fdd.KindNone || tr.Kind >= 64 {
		return nil
	}
	s := fc.m.site
	var idx map[string]int
	var list []entityFaults
	switch tr.EntityKind {
	case rules.EntityTerminal:
		idx, list = s.TerminalIndex, fc.term
	case rules.EntityLoop:
		idx, list = s.LoopIndex, fc.loop
	case rules.EntityAHU:
		idx, list = s.AHUIndex, fc.ahu
	default:
		return nil
	}
	i, ok := idx[tr.Entity]
	if !ok || i < 0 || i >= len(list) {
		return nil
	}
	return &list[i]
}
