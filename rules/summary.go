package rules

import (
	"fmt"
	"math"
	"strings"

	"risewatch/fdd"
	"risewatch/units"
)

// Summary is a one-cell digest of the evidence for tables: the two or three
// numbers that justify the fault, in SI with IP in brackets.
func (t *Transition) Summary() string {
	ev := &t.Evidence
	x := func(k string) float64 {
		if v, ok := ev.Extra[k]; ok {
			return v
		}
		return math.NaN()
	}
	dk := func(v float64) string {
		if math.IsNaN(v) {
			return "n/a"
		}
		return units.FormatTempDiff(v, false) + " (" + units.FormatTempDiff(v, true) + ")"
	}
	pc := func(v float64) string {
		if math.IsNaN(v) {
			return "n/a"
		}
		return units.FormatPercent(v)
	}
	var parts []string
	add := func(f string, a ...any) { parts = append(parts, fmt.Sprintf(f, a...)) }
	switch t.Kind {
	case fdd.KindLeakingValve:
		if v := x("dat_minus_sat_k"); !math.IsNaN(v) && math.IsNaN(ev.LeakRiseK) {
			add("DAT−SAT %s at valve %s", dk(v), pc(ev.ValveFrac))
		} else {
			add("leak rise %s", dk(ev.LeakRiseK))
			if !math.IsNaN(ev.LeakFlowFrac) {
				add("leak %s of design flow", pc(ev.LeakFlowFrac))
			}
		}
		if w := t.Impact.WastedHeatW; w > 0 {
			add("%s wasted", units.FormatPower(w, false))
		}
	case fdd.KindFouledCoil:
		add("UA %s of baseline", pc(ev.UAFactor))
		add("flow %s", pc(ev.FlowFactor))
	case fdd.KindStarvedCoil:
		add("water flow %s of baseline", pc(ev.FlowFactor))
		if v := x("shortfall_high_k"); !math.IsNaN(v) {
			add("short %s at high command", dk(-v))
		}
	case fdd.KindStuckValve, fdd.KindReversedValve:
		add("rise span %s over %s command", dk(x("rise_span_k")), pc(x("valve_span")))
		if v := x("rise_valve_corr"); !math.IsNaN(v) {
			add("corr %.2f", v)
		}
	case fdd.KindColdLoop:
		add("%s of boxes short", pc(x("short_fraction")))
		if v := x("hw_low_k"); !math.IsNaN(v) {
			add("supply %s low", dk(v))
		}
	case fdd.KindDATOffset:
		add("offset %s with no heat", dk(x("offset_k")))
	case fdd.KindDATFailed:
		add("flat %.0f min", x("dat_flat_min"))
	case fdd.KindHunting:
		add("%.0f reversals/h", x("reversals_per_hour"))
	case fdd.KindLowDischarge:
		if v := x("dat_set_c") - x("dat_c"); !math.IsNaN(v) {
			add("DAT %s below setpoint", dk(v))
		} else {
			add("rise %s vs expected %s", dk(ev.ObservedRiseK), dk(ev.ExpectedRiseK))
		}
	default:
		add("%s", t.Title)
	}
	return strings.Join(parts, ", ")
}
