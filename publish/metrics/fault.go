package metrics

import (
	"github.com/prometheus/client_golang/prometheus"

	"risewatch/fdd"
	"risewatch/rules"
)

// loopKinds are the fault kinds raised on a hot-water loop rather than on a
// terminal; every other kind is pre-created per terminal.
var loopKinds = map[fdd.Kind]bool{fdd.KindColdLoop: true}

func (m *Metrics) newFaultMetrics() {
	m.faults = prometheus.NewGaugeVec(prometheus.GaugeOpts{
		Namespace: namespace, Subsystem: "fault", Name: "active",
		Help: "1 while a fault of this kind is open or acknowledged on the terminal (or loop/AHU), else 0.",
	}, []string{"site", "terminal", "ahu", "loop", "kind"})
	m.trans = prometheus.NewCounterVec(prometheus.CounterOpts{
		Namespace: namespace, Subsystem: "fault", Name: "transitions_total",
		Help: "Fault lifecycle transitions by fault kind and target state.",
	}, []string{"site", "kind", "state"})
	m.unknown = prometheus.NewCounter(prometheus.CounterOpts{
		Namespace: namespace, Subsystem: "metrics", Name: "unknown_entity_total",
		Help: "Evidence or transitions naming an entity that is not in the site (not exported).",
	})
	m.reg.MustRegister(m.faults, m.trans, m.unknown)

	kinds := fdd.AllKinds()
	maxKind := 0
	for _, k := range kinds {
		maxKind = max(maxKind, int(k))
	}
	m.termFault = make([][]prometheus.Gauge, len(m.site.Terminals))
	for i, t := range m.site.Terminals {
		m.termFault[i] = make([]prometheus.Gauge, maxKind+1)
		for _, k := range kinds {
			if loopKinds[k] {
				continue
			}
			g := m.faults.WithLabelValues(m.site.Name, t.ID, t.AHU, t.Loop, k.String())
			g.Set(0)
			m.termFault[i][k] = g
		}
	}
	m.loopFault = make([][]prometheus.Gauge, len(m.site.Loops))
	for i, l := range m.site.Loops {
		m.loopFault[i] = make([]prometheus.Gauge, maxKind+1)
		for k := range loopKinds {
			g := m.faults.WithLabelValues(m.site.Name, "", "", l.ID, k.String())
			g.Set(0)
			m.loopFault[i][k] = g
		}
	}
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
	m.faultMu.Lock()
	g := m.faultGauge(tr)
	m.faultMu.Unlock()
	if g == nil {
		m.unknown.Inc()
		return
	}
	if activeAfter(tr) {
		g.Set(1)
	} else {
		g.Set(0)
	}
	m.trans.WithLabelValues(m.site.Name, tr.Kind.String(), tr.To.String()).Inc()
}

func (m *Metrics) faultGauge(tr *rules.Transition) prometheus.Gauge {
	k := int(tr.Kind)
	if tr.Kind.String() == "unknown" || tr.Kind == fdd.KindNone {
		return nil
	}
	switch tr.EntityKind {
	case rules.EntityTerminal:
		i, ok := m.site.TerminalIndex[tr.Entity]
		if !ok || i < 0 || i >= len(m.termFault) || k >= len(m.termFault[i]) {
			return nil
		}
		if m.termFault[i][k] == nil { // a loop kind reported on a terminal
			t := m.site.Terminals[i]
			m.termFault[i][k] = m.faults.WithLabelValues(m.site.Name, t.ID, t.AHU, t.Loop, tr.Kind.String())
		}
		return m.termFault[i][k]
	case rules.EntityLoop:
		i, ok := m.site.LoopIndex[tr.Entity]
		if !ok || i < 0 || i >= len(m.loopFault) || k >= len(m.loopFault[i]) {
			return nil
		}
		if m.loopFault[i][k] == nil {
			m.loopFault[i][k] = m.faults.WithLabelValues(m.site.Name, "", "", tr.Entity, tr.Kind.String())
		}
		return m.loopFault[i][k]
	case rules.EntityAHU:
		if _, ok := m.site.AHUIndex[tr.Entity]; !ok {
			return nil
		}
		return m.faults.WithLabelValues(m.site.Name, "", tr.Entity, "", tr.Kind.String())
	}
	return nil
}
