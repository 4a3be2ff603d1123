package fdd

// CONTRACT NOTE (lead): Kind and its String/ParseKind names are used by rules,
// store and every output (metric label values, e-mail, report). The fdd owner
// may add kinds but must not rename the identifiers.

// Kind is a type of fault or finding.
type Kind int

// Fault kinds. Identifiers (String) are stable label values.
const (
	KindNone          Kind = iota
	KindLeakingValve       // "leaking-valve": heat delivered with the valve commanded closed
	KindStuckValve         // "stuck-valve": rise does not follow the command
	KindFouledCoil         // "fouled-coil": UA down at all commands
	KindStarvedCoil        // "starved-coil": too little water flow; shortfall at high command
	KindColdLoop           // "cold-loop": loop supply temperature low, many terminals short (loop-level)
	KindDATOffset          // "dat-offset": discharge sensor bias (offset with the plant off)
	KindDATFailed          // "dat-failed": discharge sensor failed/flatlined
	KindReversedValve      // "reversed-valve": rise falls as command rises
	KindHunting            // "hunting": valve/DAT oscillation
	KindLowDischarge       // "low-discharge": Guideline 36 style low DAT against setpoint/expected
	KindDataQuality        // "data-quality": inputs missing/stale/out of range
	// Kinds after KindDataQuality are rules-layer findings the engine does
	// not score (Evidence.Scores has scoredKinds entries).
	KindZoneSensor // "zone-sensor": room temperature or heating setpoint reading implausible or missing
	kindCount
)

// scoredKinds is the number of kinds with a signature score in
// Evidence.Scores (KindNone through KindDataQuality).
const scoredKinds = KindDataQuality + 1

var kindNames = [...]string{
	KindNone:          "none",
	KindLeakingValve:  "leaking-valve",
	KindStuckValve:    "stuck-valve",
	KindFouledCoil:    "fouled-coil",
	KindStarvedCoil:   "starved-coil",
	KindColdLoop:      "cold-loop",
	KindDATOffset:     "dat-offset",
	KindDATFailed:     "dat-failed",
	KindReversedValve: "reversed-valve",
	KindHunting:       "hunting",
	KindLowDischarge:  "low-discharge",
	KindDataQuality:   "data-quality",
	KindZoneSensor:    "zone-sensor",
}

// String returns the stable identifier.
func (k Kind) String() string {
	if k < 0 || k >= kindCount {
		return "unknown"
	}
	return kindNames[k]
}

// ParseKind is the inverse of String.
func ParseKind(s string) (Kind, bool) {
	for i, n := range kindNames {
		if n == s {
			return Kind(i), true
		}
	}
	return KindNone, false
}

// AllKinds lists every fault kind except KindNone.
func AllKinds() []Kind {
	out := make([]Kind, 0, kindCount-1)
	for k := KindLeakingValve; k < kindCount; k++ {
		out = append(out, k)
	}
	return out
}
