package rules

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"risewatch/fdd"
)

// Summary is a one-cell digest of the evidence for tables: the two or three
// numbers that justify the fault, in SI with IP in brackets (SummaryIn
// gives either order).
//
// A kind may be raised by more than one rule, and t.Evidence.Extra holds
// the fields of the rule that holds the fault (its conditions and its show
// list), so each kind's digest follows the rule's evidence: a stuck valve
// found open at 0 % command is told by its closed-valve rise, one that does
// not respond by its rise span; a discharge sensor offset by whichever of
// the offset tests gave a value; a failed sensor by its missing minutes or
// its flat ones. When none of a kind's numbers is known (a rule of the
// site's own), the digest lists the rule's own fields instead, formatted by
// the unit their names end in.
func (t *Transition) Summary() string { return t.SummaryIn(false) }

// SummaryIn is Summary with IP units first (SI in brackets) when ip is set.
func (t *Transition) SummaryIn(ip bool) string {
	u := unitFmt{ip: ip}
	ev := &t.Evidence
	x := func(k string) float64 {
		if v, ok := ev.Extra[k]; ok {
			return v
		}
		return math.NaN()
	}
	known := 0 // values printed that are not "n/a"
	count := func(f func(float64) string) func(float64) string {
		return func(v float64) string {
			if finite(v) {
				known++
			}
			return f(v)
		}
	}
	dk, pc := count(u.dtemp), count(fmtPct)
	var parts []string
	add := func(f string, a ...any) { parts = append(parts, fmt.Sprintf(f, a...)) }
	switch t.Kind {
	case fdd.KindLeakingValve:
		if v := x("dat_minus_sat_k"); finite(v) && !finite(ev.LeakRiseK) {
			add("DAT−SAT %s at valve %s", dk(v), pc(ev.ValveFrac))
		} else {
			add("leak rise %s", dk(ev.LeakRiseK))
			if finite(ev.LeakFlowFrac) {
				add("leak %s of design flow", pc(ev.LeakFlowFrac))
			}
		}
		if w := t.Impact.WastedHeatW; w > 0 {
			add("%s wasted", u.power(w))
		}
	case fdd.KindFouledCoil:
		add("UA %s of baseline", pc(ev.UAFactor))
		if finite(ev.FlowFactor) {
			add("apparent water flow %s", pc(ev.FlowFactor))
		}
	case fdd.KindStarvedCoil:
		// The flow factor tells a starved coil only when it is down; the
		// rule also opens on the rise at high command (perf_high), where
		// the fit may put the loss in UA and leave the flow at or above 1.
		if f, ph := ev.FlowFactor, x("perf_high"); finite(f) && f < 0.95 || !finite(ph) {
			add("apparent water flow %s of baseline", pc(f))
		} else {
			add("rise at high command %s of the model's", pc(ph))
			// Against a model that misjudges this coil (by 2 points or
			// more), the rule may have opened on the coil's own healthy
			// level instead.
			if r := x("perf_high_rel"); finite(r) && math.Abs(r-ph) >= 0.02 {
				add("%s of its healthy level", pc(r))
			}
		}
		if v := x("shortfall_high_k"); finite(v) {
			add("short %s at high command", dk(-v))
		}
	case fdd.KindStuckValve, fdd.KindReversedValve:
		if cf := x("closed_capacity_frac"); finite(cf) {
			rise := x("leak_rise_k")
			if !finite(rise) {
				rise = ev.LeakRiseK
			}
			u := x("valve")
			if !finite(u) {
				u = ev.ValveFrac
			}
			add("rise %s at %s command", dk(rise), pc(u))
			add("%s of full-open", pc(cf))
			break
		}
		add("rise span %s over %s command", dk(x("rise_span_k")), pc(x("valve_span")))
		if v := x("rise_valve_corr"); finite(v) {
			add("corr %.2f", v)
		}
	case fdd.KindColdLoop:
		add("%s of boxes short", pc(x("short_fraction")))
		if v := x("hw_low_k"); finite(v) {
			add("supply %s low", dk(v))
		}
	case fdd.KindDATOffset:
		// The test that fired: the no-heat offset when there is one, else
		// the larger of a closed-valve reading below supply and the
		// closed-valve offset (the rule's any: branches).
		switch off, closed, below := x("offset_k"), x("closed_offset_k"), x("leak_rise_k"); {
		case finite(off):
			add("offset %s with no heat", dk(off))
		case finite(below) && below < 0 && !(math.Abs(closed) >= -below):
			add("DAT %s below supply at closed valve", dk(-below))
		case finite(closed):
			add("offset %s at closed valve", dk(closed))
		}
	case fdd.KindDATFailed:
		if b := x("dat_bad_min"); finite(b) && b >= 1 {
			known++
			add("missing or out of range %s", minutes(b))
		} else if f := x("dat_flat_min"); finite(f) {
			known++
			add("unchanged for %s", minutes(f))
		}
	case fdd.KindZoneSensor:
		if z := x("zone_bad_min"); finite(z) && z >= 1 {
			known++
			add("room temperature implausible %s", minutes(z))
		}
		if s := x("zone_set_bad_min"); finite(s) && s >= 1 {
			known++
			add("heating setpoint implausible %s", minutes(s))
		}
	case fdd.KindHunting:
		if v := x("reversals_per_hour"); finite(v) {
			known++
			add("%.0f reversals/h", v)
		}
	case fdd.KindLowDischarge:
		if v := x("dat_set_c") - x("dat_c"); finite(v) {
			add("DAT %s below setpoint", dk(v))
		} else {
			add("rise %s vs expected %s", dk(ev.ObservedRiseK), dk(ev.ExpectedRiseK))
		}
	default:
		return t.Title
	}
	if known == 0 {
		if s := fieldDigest(ev.Extra, 3, u); s != "" {
			return s
		}
		return t.Title
	}
	return strings.Join(parts, ", ")
}

// minutes formats a duration in minutes as minutes, hours or days,
// whichever reads best: "45 min", "5.2 h", "10.8 d" (messages' mins too).
func minutes(m float64) string {
	switch {
	case m < 90:
		return fmt.Sprintf("%.0f min", m)
	case m < 48*60:
		return fmt.Sprintf("%.1f h", m/60)
	default:
		return fmt.Sprintf("%.1f d", m/(24*60))
	}
}

// fieldDigest lists up to n known values of evidence fields, by name, each
// formatted by the unit its name ends in (the evidence field naming of
// fdd/evidence.go: _k a temperature difference, _c a temperature, _frac a
// fraction, _min minutes, _w a power, _m3s a water flow); score and gate
// fields are left out (they say which test passed, not how far).
func fieldDigest(extra map[string]float64, n int, u unitFmt) string {
	names := make([]string, 0, len(extra))
	for k, v := range extra {
		if finite(v) && !strings.HasPrefix(k, "score.") && !strings.HasPrefix(k, "gate_") {
			names = append(names, k)
		}
	}
	sort.Strings(names)
	var parts []string
	for _, k := range names {
		if len(parts) == n {
			break
		}
		parts = append(parts, strings.ReplaceAll(k, "_", " ")+" "+formatField(k, extra[k], u))
	}
	return strings.Join(parts, ", ")
}

// formatField formats one evidence value by the unit its field name ends in
// (an airflow is air, L/s and cfm; any other _m3s is water, L/s and gpm).
func formatField(name string, v float64, u unitFmt) string {
	switch {
	case strings.HasSuffix(name, "_k"):
		return u.dtemp(v)
	case strings.HasSuffix(name, "_c"):
		return u.temp(v)
	case strings.HasSuffix(name, "_frac"):
		return fmtPct(v)
	case strings.HasSuffix(name, "_min"):
		return fmtMins(v)
	case strings.HasSuffix(name, "_w"):
		return u.power(v)
	case strings.HasPrefix(name, "airflow") && strings.HasSuffix(name, "_m3s"):
		return u.airflow(v)
	case strings.HasSuffix(name, "_m3s"):
		return u.waterFlow(v)
	default:
		return fmt.Sprintf("%.3g", v)
	}
}
