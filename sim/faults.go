package sim

import (
	"fmt"
	"time"

	"gopkg.in/yaml.v3"
)

// Fault kinds the simulator injects. The names are the detector's fault
// identifiers (fdd.Kind String values) so ground truth and findings compare
// directly.
const (
	FaultLeakingValve  = "leaking-valve"  // severity: seat leakage, fraction of full-open Cv
	FaultStuckValve    = "stuck-valve"    // severity: stem position it is stuck at, 0..1
	FaultFouledCoil    = "fouled-coil"    // severity: added resistance, m²·K/W (side: air on A_o, water on A_i)
	FaultStarvedCoil   = "starved-coil"   // severity: resistance multiplier of one circuit (circuit: index)
	FaultColdLoop      = "cold-loop"      // severity: supply setpoint depressed by K (target: a loop)
	FaultDATOffset     = "dat-offset"     // severity: discharge sensor bias, K (may be negative)
	FaultDATFailed     = "dat-failed"     // severity unused; mode: flatline (default), open, short
	FaultReversedValve = "reversed-valve" // severity unused
	FaultHunting       = "hunting"        // severity: discharge loop gain multiplier (and 1/Ti)
)

// FaultSpec is one injected fault: what, where, how bad, when.
type FaultSpec struct {
	Target   string  `yaml:"target"` // terminal or loop id
	Kind     string  `yaml:"kind"`
	Severity float64 `yaml:"severity"`
	Start    string  `yaml:"start"` // RFC 3339, or a duration after the scenario start ("36h")
	End      string  `yaml:"end"`   // same; empty: to the end
	Side     string  `yaml:"side"`  // fouled-coil: air or water
	Circuit  int     `yaml:"circuit"`
	Mode     string  `yaml:"mode"` // dat-failed: flatline, open, short
	Line     int     `yaml:"-"`

	start, end time.Time
	loopTarget bool
}

// UnmarshalYAML records the YAML line for messages.
func (f *FaultSpec) UnmarshalYAML(n *yaml.Node) error {
	type plain FaultSpec
	if err := n.Decode((*plain)(f)); err != nil {
		return err
	}
	f.Line = n.Line
	return nil
}

// StartTime and EndTime are the resolved fault window [start, end).
func (f *FaultSpec) StartTime() time.Time { return f.start }

// EndTime is the resolved end of the fault window.
func (f *FaultSpec) EndTime() time.Time { return f.end }

func (s *Scenario) parseWhen(v string, dflt time.Time) (time.Time, error) {
	if v == "" {
		return dflt, nil
	}
	if t, err := time.Parse(time.RFC3339, v); err == nil {
		return t.In(s.loc), nil
	}
	if d, err := time.ParseDuration(v); err == nil {
		return s.start.Add(d), nil
	}
	return time.Time{}, fmt.Errorf("time %q: want RFC 3339 or a duration after the start", v)
}

func (s *Scenario) prepareFault(f *FaultSpec, loops map[string]int, terminals map[string]bool) error {
	var err error
	if f.start, err = s.parseWhen(f.Start, s.start); err != nil {
		return s.errf(f.Line, "fault %s on %s: start: %v", f.Kind, f.Target, err)
	}
	// Without an end a fault lasts past any run length (GroundTruth clips it).
	if f.end, err = s.parseWhen(f.End, s.start.AddDate(100, 0, 0)); err != nil {
		return s.errf(f.Line, "fault %s on %s: end: %v", f.Kind, f.Target, err)
	}
	if !f.end.After(f.start) {
		return s.errf(f.Line, "fault %s on %s: end is not after start", f.Kind, f.Target)
	}
	_, isLoop := loops[f.Target]
	f.loopTarget = isLoop
	bad := func(msg string) error { return s.errf(f.Line, "fault %s on %s: %s", f.Kind, f.Target, msg) }
	if f.Kind == FaultColdLoop {
		if !isLoop {
			return bad("target must be a loop id")
		}
		if f.Severity <= 0 || f.Severity > 60 {
			return bad("severity (K below setpoint) must be in (0, 60]")
		}
		return nil
	}
	if !terminals[f.Target] || isLoop {
		return bad("target is not a terminal id")
	}
	switch f.Kind {
	case FaultLeakingValve:
		if f.Severity <= 0 || f.Severity > 1 {
			return bad("severity (leakage fraction) must be in (0, 1]")
		}
	case FaultStuckValve:
		if f.Severity < 0 || f.Severity > 1 {
			return bad("severity (stuck position) must be in [0, 1]")
		}
	case FaultFouledCoil:
		def(&f.Side, "water")
		if f.Side != "air" && f.Side != "water" {
			return bad(`side must be "air" or "water"`)
		}
		if f.Severity <= 0 || f.Severity > 0.1 {
			return bad("severity (fouling resistance, m²·K/W) must be in (0, 0.1]")
		}
	case FaultStarvedCoil:
		if f.Severity < 1 || f.Circuit < 0 {
			return bad("severity (resistance multiplier) must be ≥ 1 and circuit ≥ 0")
		}
	case FaultDATOffset:
		if f.Severity == 0 || f.Severity < -20 || f.Severity > 20 {
			return bad("severity (bias, K) must be nonzero within ±20")
		}
	case FaultDATFailed:
		def(&f.Mode, "flatline")
		if f.Mode != "flatline" && f.Mode != "open" && f.Mode != "short" {
			return bad(`mode must be flatline, open or short`)
		}
		def(&f.Severity, 1.0)
	case FaultReversedValve:
		def(&f.Severity, 1.0)
	case FaultHunting:
		if f.Severity <= 1 || f.Severity > 100 {
			return bad("severity (gain multiplier) must be in (1, 100]")
		}
	default:
		return bad("unknown fault kind")
	}
	return nil
}

// terminalMods are every fault effect on one terminal at one instant. The
// fault list is turned into these by applyFault alone; the physics reads
// only these fields.
type terminalMods struct {
	leak     float64 // seat leakage fraction (0: healthy valve's own)
	act      actuatorFaults
	coil     coilFaults
	circMult []float64
	datBiasK float64
	datFail  failMode
	gainMult float64
	mask     uint32 // bit i set: scenario fault kind index i active
}

// FaultKinds lists the injectable kinds in a fixed order (bit order of masks).
var FaultKinds = []string{FaultLeakingValve, FaultStuckValve, FaultFouledCoil, FaultStarvedCoil,
	FaultColdLoop, FaultDATOffset, FaultDATFailed, FaultReversedValve, FaultHunting}

func kindBit(k string) uint32 {
	for i, n := range FaultKinds {
		if n == k {
			return 1 << i
		}
	}
	return 0
}

func (m *terminalMods) reset(circuits int) {
	c := m.circMult
	*m = terminalMods{gainMult: 1, circMult: c[:0]}
	for i := 0; i < circuits; i++ {
		m.circMult = append(m.circMult, 1)
	}
}

// applyFault adds one active fault's effect.
func (m *terminalMods) applyFault(f *FaultSpec) {
	m.mask |= kindBit(f.Kind)
	switch f.Kind {
	case FaultLeakingValve:
		m.leak = max(m.leak, f.Severity)
	case FaultStuckValve:
		m.act.stuck, m.act.stuckAt = true, f.Severity
	case FaultFouledCoil:
		if f.Side == "air" {
			m.coil.foulAir += f.Severity
		} else {
			m.coil.foulWater += f.Severity
		}
	case FaultStarvedCoil:
		ci := f.Circuit % len(m.circMult)
		m.circMult[ci] *= f.Severity
	case FaultDATOffset:
		m.datBiasK += f.Severity
	case FaultDATFailed:
		switch f.Mode {
		case "open":
			m.datFail = failOpen
		case "short":
			m.datFail = failShort
		default:
			m.datFail = failFlatline
		}
	case FaultReversedValve:
		m.act.reversed = true
	case FaultHunting:
		m.gainMult *= f.Severity
	}
}

// FaultRecord is one line of ground truth.
type FaultRecord struct {
	Entity   string
	Kind     string
	Severity float64
	Start    time.Time
	End      time.Time
	Detail   string
}

// GroundTruth lists the scenario's faults as records, in scenario order,
// clipped to the simulated period.
func (s *Scenario) GroundTruth() []FaultRecord {
	out := make([]FaultRecord, 0, len(s.Faults))
	for i := range s.Faults {
		f := &s.Faults[i]
		st, en := f.start, f.end
		if st.Before(s.start) {
			st = s.start
		}
		if en.After(s.EndTime()) {
			en = s.EndTime()
		}
		if !en.After(st) {
			continue
		}
		d := ""
		switch f.Kind {
		case FaultFouledCoil:
			d = "side=" + f.Side
		case FaultStarvedCoil:
			d = fmt.Sprintf("circuit=%d", f.Circuit)
		case FaultDATFailed:
			d = "mode=" + f.Mode
		}
		out = append(out, FaultRecord{Entity: f.Target, Kind: f.Kind, Severity: f.Severity, Start: st, End: en, Detail: d})
	}
	return out
}
