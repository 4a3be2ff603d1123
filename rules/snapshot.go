package rules

import (
	"fmt"
	"math"
	"sort"
	"time"
)

// SnapshotVersion is the format version of Snapshot.
const SnapshotVersion = 1

// Snapshot is the evaluator's lifecycle state as plain data, for the store
// to persist (JSON-friendly). Entities and rules are named by ID, so a
// snapshot survives a reordered site or rule file; entries naming things
// that no longer exist are dropped on Import.
type Snapshot struct {
	Version      int
	SavedAt      time.Time
	Faults       []FaultRecord
	Trackers     []TrackerRecord
	Suppressions []SuppressionRecord
	Operating    []OperatingRecord
}

// FaultRecord is one raised fault.
type FaultRecord struct {
	FaultID         string
	Entity          string
	EntityKind      EntityKind
	Kind            string
	State           State
	Rule            string
	Since           time.Time
	OpenedAt        time.Time
	Severity        Severity
	Confidence      float64
	AckedBy         string
	AckedAt         time.Time
	SuppressedUntil time.Time
	Evidence        map[string]float64 // last evidence (Evidence.Map), shown until fresh evidence arrives
	HeatWSum        float64
	CoolWSum        float64
	ShortWSum       float64
	OpSamples       int
}

// TrackerRecord is one rule's persistence timers on one entity (only
// pending or active ones are recorded). Zero times mean "not running".
type TrackerRecord struct {
	Entity     string
	EntityKind EntityKind
	Rule       string
	Since      time.Time
	Last       time.Time
	ClearSince time.Time
	ClearLast  time.Time
	Active     bool // holds its fault open
	// Held is the condition-true time of a pending rule with a within
	// window, by bin (empty otherwise).
	Held []HeldRecord `json:",omitempty"`
}

// HeldRecord is the held time of one bin of a within window: the bin's
// start and the seconds the condition held in it.
type HeldRecord struct {
	Start time.Time
	Sec   float64
}

// SuppressionRecord is one suppression until a date.
type SuppressionRecord struct {
	FaultID string
	Until   time.Time
}

// OperatingRecord is one terminal's heating-operation time counters.
type OperatingRecord struct {
	Terminal string
	LastAt   time.Time
	TotalSec float64
	OpSec    float64
}

// ImportStats says what Import restored and what it dropped.
type ImportStats struct {
	Faults, Trackers, Suppressions int
	Dropped                        []string // what could not be restored, and why
}

func ns(t time.Time) int64 {
	if t.IsZero() {
		return 0
	}
	return t.UnixNano()
}

func tm(n int64) time.Time {
	if n == 0 {
		return time.Time{}
	}
	return time.Unix(0, n).UTC()
}

// Export returns the lifecycle state.
func (e *Evaluator) Export() Snapshot {
	s := Snapshot{Version: SnapshotVersion, SavedAt: e.now}
	for _, f := range e.sortedFaults() {
		rec := FaultRecord{
			FaultID: f.id, Entity: f.entity, EntityKind: f.key.ek, Kind: f.key.kind.String(), State: f.state,
			Since: f.since, OpenedAt: f.openedAt, Severity: f.severity, Confidence: f.confidence,
			AckedBy: f.ackBy, AckedAt: f.ackAt, SuppressedUntil: f.suppressTil,
			HeatWSum: f.heatWSum, CoolWSum: f.coolWSum, ShortWSum: f.shortWSum, OpSamples: f.opSamples,
		}
		tr := e.transition(f, f.state, f.state, e.now)
		rec.Rule, rec.Evidence = tr.Rule, tr.Evidence.Map()
		s.Faults = append(s.Faults, rec)
	}
	addT := func(ek EntityKind, ent string, rules []*compiled, trks []tracker) {
		for r, c := range rules {
			tk := &trks[r]
			if tk.f == nil && tk.since == 0 {
				continue
			}
			s.Trackers = append(s.Trackers, TrackerRecord{
				Entity: ent, EntityKind: ek, Rule: c.rule.ID, Since: tm(tk.since), Last: tm(tk.last),
				ClearSince: tm(tk.clrSince), ClearLast: tm(tk.clrLast), Active: tk.f != nil,
				Held: e.exportHeld(tk, c),
			})
		}
	}
	for t := 0; t < e.nT; t++ {
		addT(EntityTerminal, e.site.Terminals[t].ID, e.term, e.trackers(EntityTerminal, t))
		if o := e.hot[t].op; o.lastAt != 0 {
			s.Operating = append(s.Operating, OperatingRecord{Terminal: e.site.Terminals[t].ID, LastAt: tm(o.lastAt), TotalSec: float64(o.totalNs) / 1e9, OpSec: float64(o.opNs) / 1e9})
		}
	}
	for l := 0; l < e.nL; l++ {
		addT(EntityLoop, e.site.Loops[l].ID, e.loop, e.trackers(EntityLoop, l))
	}
	for id, until := range e.suppress {
		s.Suppressions = append(s.Suppressions, SuppressionRecord{FaultID: id, Until: until})
	}
	sort.Slice(s.Suppressions, func(i, j int) bool { return s.Suppressions[i].FaultID < s.Suppressions[j].FaultID })
	return s
}

// Import restores a snapshot into an evaluator that has not stepped yet.
// Open faults resume open (no new open transition); a fault no active rule
// holds any more (rule removed or disabled since) is dropped and reported.
func (e *Evaluator) Import(s Snapshot) (ImportStats, error) {
	var st ImportStats
	if s.Version != SnapshotVersion {
		return st, fmt.Errorf("rules: snapshot version %d, want %d", s.Version, SnapshotVersion)
	}
	if len(e.faults) > 0 {
		return st, fmt.Errorf("rules: import into an evaluator that already has faults")
	}
	if s.SavedAt.After(e.now) {
		e.now = s.SavedAt
	}
	for _, r := range s.Faults {
		key, _, err := e.parseFaultID(r.FaultID)
		if err != nil {
			st.Dropped = append(st.Dropped, fmt.Sprintf("fault %s: %v", r.FaultID, err))
			continue
		}
		f := &fault{
			key: key, id: r.FaultID, entity: e.entityID(key.ek, key.idx), state: r.State,
			since: r.Since, openedAt: r.OpenedAt, severity: r.Severity, confidence: r.Confidence,
			ackBy: r.AckedBy, ackAt: r.AckedAt, suppressTil: r.SuppressedUntil, saved: EvidenceFromMap(r.Evidence),
			heatWSum: r.HeatWSum, coolWSum: r.CoolWSum, shortWSum: r.ShortWSum, opSamples: r.OpSamples,
		}
		e.faults[key] = f
		e.byID[f.id] = f
	}
	savedRule := make(map[string]string, len(s.Faults))
	for _, r := range s.Faults {
		savedRule[r.FaultID] = r.Rule
	}
	for _, r := range s.Trackers {
		c, ok := e.rs.byID[r.Rule]
		if !ok {
			st.Dropped = append(st.Dropped, fmt.Sprintf("timer of rule %s on %s: rule no longer exists", r.Rule, r.Entity))
			continue
		}
		idx := e.entityIndex(r.EntityKind, r.Entity)
		if idx < 0 || c.loop != (r.EntityKind == EntityLoop) {
			st.Dropped = append(st.Dropped, fmt.Sprintf("timer of rule %s on %s: no such entity", r.Rule, r.Entity))
			continue
		}
		tk := &e.trackers(r.EntityKind, idx)[c.slot]
		if tk.off {
			st.Dropped = append(st.Dropped, fmt.Sprintf("timer of rule %s on %s: rule does not apply any more", r.Rule, r.Entity))
			continue
		}
		tk.since, tk.last, tk.clrSince, tk.clrLast = ns(r.Since), ns(r.Last), ns(r.ClearSince), ns(r.ClearLast)
		if tk.f == nil && !r.Active {
			e.importHeld(tk, c, r.Held)
		}
		if r.Active {
			f := e.faults[faultKey{r.EntityKind, idx, c.kind}]
			if f == nil {
				st.Dropped = append(st.Dropped, fmt.Sprintf("timer of rule %s on %s: its fault was not saved", r.Rule, r.Entity))
				tk.since, tk.clrSince = 0, 0
				continue
			}
			tk.f = f
			f.rules = append(f.rules, c)
			if f.rule == nil || c.severity < f.rule.severity || c.rule.ID == savedRule[f.id] {
				f.rule = c
			}
		}
		st.Trackers++
	}
	for _, f := range e.sortedFaults() {
		if len(f.rules) == 0 {
			st.Dropped = append(st.Dropped, fmt.Sprintf("fault %s: no rule holds it open any more", f.id))
			e.removeFault(f)
			continue
		}
		st.Faults++
	}
	e.rebuildBusy()
	for t := 0; t < e.nT; t++ {
		e.recomputeExplain(EntityTerminal, t)
	}
	for l := 0; l < e.nL; l++ {
		e.recomputeExplain(EntityLoop, l)
	}
	for _, r := range s.Suppressions {
		if _, _, err := e.parseFaultID(r.FaultID); err != nil {
			st.Dropped = append(st.Dropped, fmt.Sprintf("suppression %s: %v", r.FaultID, err))
			continue
		}
		e.suppress[r.FaultID] = r.Until
		st.Suppressions++
	}
	for _, r := range s.Operating {
		t := e.entityIndex(EntityTerminal, r.Terminal)
		if t < 0 {
			continue
		}
		e.hot[t].op = operating{lastAt: ns(r.LastAt), totalNs: secNs(r.TotalSec), opNs: secNs(r.OpSec)}
	}
	return st, nil
}

func (e *Evaluator) entityIndex(ek EntityKind, id string) int {
	var m map[string]int
	switch ek {
	case EntityTerminal:
		m = e.termIdx
	case EntityLoop:
		m = e.loopIdx
	}
	if i, ok := m[id]; ok {
		return i
	}
	return -1
}

// secNs converts saved seconds to nanoseconds (negative, NaN or absurd
// values read as 0).
func secNs(s float64) int64 {
	if !(s > 0) || s > 1e9 {
		return 0
	}
	return int64(math.Round(s * 1e9))
}
