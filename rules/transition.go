package rules

import (
	"time"

	"risewatch/fdd"
)

// CONTRACT NOTE (lead): Transition is what the decision layer publishes and
// what store and every output consume. The rules owner may add fields.

// State is a fault's lifecycle state.
type State int

// Lifecycle states.
const (
	StateClear      State = iota // no fault
	StatePending                 // condition true, persistence not yet met
	StateOpen                    // fault raised
	StateAcked                   // open, acknowledged by a person
	StateSuppressed              // open or not, suppressed until a date
)

var stateNames = [...]string{"clear", "pending", "open", "acked", "suppressed"}

// String returns the state's identifier.
func (s State) String() string {
	if s < 0 || int(s) >= len(stateNames) {
		return "unknown"
	}
	return stateNames[s]
}

// EntityKind says what a fault is about.
type EntityKind int

// Entity kinds.
const (
	EntityTerminal EntityKind = iota
	EntityLoop
	EntityAHU
)

// Severity of a fault (1 = most urgent).
type Severity int

// Impact is the estimated energy and cost consequence of a fault.
type Impact struct {
	WastedHeatW   float64 // heat delivered that was not wanted (leaks)
	AddedCoolingW float64 // cooling spent removing it
	ShortfallW    float64 // heat wanted but not delivered (comfort)
	WeeklyHeatKWh float64
	WeeklyCoolKWh float64
	WeeklyCost    float64 // in site currency
	// Added by the rules owner.
	WeeklyShortfallKWh    float64 // heat wanted but not delivered per week (comfort, not costed)
	OperatingHoursPerWeek float64 // heating-operation hours per week the weekly figures assume
	Currency              string  // site currency of WeeklyCost
}

// Evidence is the set of numbers behind a fault, as shown to people.
type Evidence struct {
	ObservedRiseK float64
	ExpectedRiseK float64
	SigmaK        float64
	ValveFrac     float64
	AirflowM3s    float64
	UAFactor      float64 // apparent UA multiplier (1 = as calibrated)
	FlowFactor    float64 // apparent water-flow multiplier
	LeakRiseK     float64
	LeakFlowFrac  float64 // estimated leak flow as fraction of design
	Extra         map[string]float64
}

// Transition is one change of a fault's state.
type Transition struct {
	FaultID    string // stable: "<entity>/<kind>", e.g. "VAV-2-07/leaking-valve"
	Entity     string // terminal, loop or AHU ID
	EntityKind EntityKind
	Kind       fdd.Kind
	Rule       string // rule ID that decided
	From, To   State
	At         time.Time
	Since      time.Time // when the condition first became true
	Severity   Severity
	Confidence float64 // 0..1
	Evidence   Evidence
	Impact     Impact
	Message    string   // one line, with numbers and units: SI first, IP in brackets
	MessageIP  string   // Message with IP units first, SI in brackets
	Causes     []string // likely causes, most likely first
	Checks     []string // what a technician should check first
	AHU, Loop  string   // for routing and labels
	// Added by the rules owner.
	Title           string    // rule title, e.g. "Reheat valve passing water while closed"
	Source          string    // published source of the rule's thresholds
	Location        string    // terminal location text for technicians
	OpenedAt        time.Time // when the fault opened (zero while never open)
	AckedBy         string    // who acknowledged it ("" = not acknowledged)
	AckedAt         time.Time
	SuppressedUntil time.Time // zero = not suppressed
	ExplainedBy     string    // on a clear: the fault ID that explains this one (e.g. "HW-1/cold-loop")
}

// MessageIn is the message with IP units first when ip is set (SI first
// otherwise). A transition stored before IP-first messages existed has only
// Message, which it then returns.
func (t *Transition) MessageIn(ip bool) string {
	if ip && t.MessageIP != "" {
		return t.MessageIP
	}
	return t.Message
}

// IsNotice reports whether outputs should notify people about this
// transition: a fault opening, escalating or re-appearing after a
// suppression, but not acknowledgements, suppressed faults or clears that
// another fault explains.
func (t *Transition) IsNotice() bool {
	switch t.To {
	case StateOpen:
		return t.From == StatePending || t.From == StateOpen || t.From == StateSuppressed || t.From == StateClear
	case StateClear:
		return t.ExplainedBy == "" && t.From != StateSuppressed
	}
	return false
}
