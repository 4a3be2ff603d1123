package rules

import (
	"math"
	"regexp"
	"strings"
	"testing"

	"risewatch/fdd"
)

// showExtra is the Evidence.Extra the evaluator publishes for built-in rule
// id (transition in fault.go): every field the rule shows (its conditions'
// fields and its show list), here NaN unless vals gives it. A name in vals
// the rule does not show fails the test, so the cases below follow
// builtin.yaml.
func showExtra(t *testing.T, e *Evaluator, id string, vals map[string]float64) (fdd.Kind, map[string]float64) {
	t.Helper()
	for _, c := range append(append([]*compiled(nil), e.term...), e.loop...) {
		if c.rule.ID != id {
			continue
		}
		extra := make(map[string]float64, len(c.show))
		for _, f := range c.show {
			extra[f.name] = math.NaN()
		}
		for k, v := range vals {
			if _, ok := extra[k]; !ok {
				t.Fatalf("rule %s does not show %s (shows %v)", id, k, extra)
			}
			extra[k] = v
		}
		return c.kind, extra
	}
	t.Fatalf("no built-in rule %s", id)
	return 0, nil
}

// TestSummaryFollowsTheHoldingRule: the table's evidence digest gives the
// numbers of the rule that holds the fault, never "n/a" where that rule
// has them: the kinds raised by more than one rule, or by one rule through
// more than one test, each in the form that rule's evidence takes. Every
// figure is the rule's own value formatted (°F beside °C, MBH beside kW).
func TestSummaryFollowsTheHoldingRule(t *testing.T) {
	e, err := NewEvaluator(testSite(1, 1), nil)
	if err != nil {
		t.Fatal(err)
	}
	nan := math.NaN()
	noTerm := Evidence{ObservedRiseK: nan, ExpectedRiseK: nan, SigmaK: nan, ValveFrac: nan, AirflowM3s: nan,
		UAFactor: nan, FlowFactor: nan, LeakRiseK: nan, LeakFlowFrac: nan}
	cases := []struct {
		rule string
		vals map[string]float64
		ev   func(*Evidence)
		want []string
	}{
		{"model-valve-open-at-zero", map[string]float64{"valve": 0, "closed_capacity_frac": 0.85, "leak_rise_k": 12.5},
			nil, []string{"rise 12.5 K (22.5 °F) at 0 % command", "85 % of full-open"}},
		{"model-valve-open-at-zero", map[string]float64{"closed_capacity_frac": 0.9},
			func(ev *Evidence) { ev.LeakRiseK, ev.ValveFrac = 11, 0 }, []string{"rise 11.0 K (19.8 °F) at 0 % command", "90 % of full-open"}},
		{"model-valve-stuck", map[string]float64{"rise_span_k": 0.4, "valve_span": 0.8, "rise_valve_corr": 0.1},
			nil, []string{"rise span 0.4 K (0.7 °F) over 80 % command", "corr 0.10"}},
		{"sensor-dat-offset", map[string]float64{"offset_k": 2.5},
			nil, []string{"offset 2.5 K (4.5 °F) with no heat"}},
		{"sensor-dat-offset", map[string]float64{"closed_offset_k": -2},
			nil, []string{"offset -2.0 K (-3.6 °F) at closed valve"}},
		{"sensor-dat-offset", map[string]float64{"leak_rise_k": -1.8},
			nil, []string{"DAT 1.8 K (3.2 °F) below supply at closed valve"}},
		// Fired on the closed-valve reading below supply while the
		// closed-valve offset is small: the reading below supply.
		{"sensor-dat-offset", map[string]float64{"leak_rise_k": -1.7, "closed_offset_k": -0.8},
			nil, []string{"DAT 1.7 K (3.1 °F) below supply at closed valve"}},
		{"sensor-dat-offset", map[string]float64{"leak_rise_k": 2.8, "closed_offset_k": 2.6},
			nil, []string{"offset 2.6 K (4.7 °F) at closed valve"}},
		{"sensor-dat-dead", map[string]float64{"dat_bad_min": 45, "dat_flat_min": 0},
			nil, []string{"missing or out of range 45 min"}},
		{"sensor-dat-dead", map[string]float64{"dat_bad_min": 0, "dat_flat_min": 15601},
			nil, []string{"unchanged for 10.8 d"}},
		{"sensor-dat-dead", map[string]float64{"dat_bad_min": 0, "dat_flat_min": 300},
			nil, []string{"unchanged for 5.0 h"}},
		{"sensor-zone-implausible", map[string]float64{"zone_bad_min": 30, "zone_set_bad_min": 0},
			nil, []string{"room temperature implausible 30 min"}},
		{"sensor-zone-implausible", map[string]float64{"zone_bad_min": 0, "zone_set_bad_min": 200},
			nil, []string{"heating setpoint implausible 3.3 h"}},
		{"control-hunting", map[string]float64{"reversals_per_hour": 48},
			nil, []string{"48 reversals/h"}},
		{"model-coil-starved", map[string]float64{"shortfall_high_k": -5.2, "perf_high": 0.7},
			func(ev *Evidence) { ev.FlowFactor = 0.76 }, []string{"apparent water flow 76 % of baseline", "short 5.2 K (9.4 °F) at high command"}},
		// Opened on the high-command rise with the fit's flow at 147 %:
		// that rise, not a flow "short" of baseline at 147 %.
		{"model-coil-starved", map[string]float64{"shortfall_high_k": -2.9, "perf_high": 0.8},
			func(ev *Evidence) { ev.FlowFactor = 1.47 }, []string{"rise at high command 80 % of the model's", "short 2.9 K (5.2 °F) at high command"}},
		// Opened on the coil's own healthy level: the model under-rates
		// this coil, so its rise at 86 % of the model's is 82 % of its own.
		{"model-coil-starved", map[string]float64{"shortfall_high_k": -2.1, "perf_high": 0.86, "perf_high_rel": 0.82},
			func(ev *Evidence) { ev.FlowFactor = 1.6 }, []string{"rise at high command 86 % of the model's, 82 % of its healthy level"}},
		{"model-coil-fouled", nil,
			func(ev *Evidence) { ev.UAFactor, ev.FlowFactor = 0.83, 1.02 }, []string{"UA 83 % of baseline", "apparent water flow 102 %"}},
		// A flow factor the fit could not determine (published as NaN) is
		// left out, not printed as "n/a".
		{"model-coil-fouled", nil,
			func(ev *Evidence) { ev.UAFactor, ev.FlowFactor = 0.07, math.NaN() }, []string{"UA 7 % of baseline"}},
		{"g36-valve-leak", map[string]float64{"valve": 0, "dat_minus_sat_k": 4},
			func(ev *Evidence) { ev.ValveFrac = 0 }, []string{"DAT−SAT 4.0 K (7.2 °F) at valve 0 %"}},
		{"loop-cold-supply", map[string]float64{"short_fraction": 0.78},
			nil, []string{"78 % of boxes short"}},
	}
	for _, c := range cases {
		kind, extra := showExtra(t, e, c.rule, c.vals)
		ev := noTerm
		if c.ev != nil {
			c.ev(&ev)
		}
		ev.Extra = extra
		tr := Transition{Kind: kind, Rule: c.rule, Title: "title of " + c.rule, Evidence: ev}
		got := tr.Summary()
		if strings.Contains(got, "n/a") {
			t.Errorf("%s %v: summary %q has n/a", c.rule, c.vals, got)
		}
		for _, w := range c.want {
			if !strings.Contains(got, w) {
				t.Errorf("%s %v: summary %q lacks %q", c.rule, c.vals, got, w)
			}
		}
	}
}

// TestSummaryLeakWasteInBothUnits: the leak digest gives the wasted heat in
// kW and MBH (1 kW = 3.412 MBH, 1 Btu/h = 0.29307 W: ASHRAE Handbook —
// Fundamentals, ch. 38 conversion factors).
func TestSummaryLeakWasteInBothUnits(t *testing.T) {
	tr := Transition{Kind: fdd.KindLeakingValve, Evidence: Evidence{LeakRiseK: 8.8, LeakFlowFrac: 0.12}}
	tr.Impact.WastedHeatW = 2210
	got := tr.Summary()
	for _, w := range []string{"leak rise 8.8 K (15.8 °F)", "leak 12 % of design flow", "2.21 kW (7.5 MBH) wasted"} {
		if !strings.Contains(got, w) {
			t.Errorf("summary %q lacks %q", got, w)
		}
	}
	// IP first for IP outputs, the same numbers the other way round.
	got = tr.SummaryIn(true)
	for _, w := range []string{"leak rise 15.8 °F (8.8 K)", "leak 12 % of design flow", "7.5 MBH (2.21 kW) wasted"} {
		if !strings.Contains(got, w) {
			t.Errorf("IP-first summary %q lacks %q", got, w)
		}
	}
}

// TestSummaryFallsBackToTheRulesFields: a rule of the site's own whose kind
// digest has no number (here a fouled-coil rule on the low-command
// shortfall, with UA and flow factors unknown) is summarised by its own
// known fields, each in its unit; score and gate fields are left out; with
// no known field at all, the rule's title.
func TestSummaryFallsBackToTheRulesFields(t *testing.T) {
	nan := math.NaN()
	tr := Transition{Kind: fdd.KindFouledCoil, Title: "Coil short at low command",
		Evidence: Evidence{UAFactor: nan, FlowFactor: nan, Extra: map[string]float64{
			"shortfall_low_k": 2, "score.fouled-coil": 0.9, "gate_unsteady": 1, "closed_min": 90, "leak_flow_frac": nan,
		}}}
	got := tr.Summary()
	want := "closed min 1.5 h, shortfall low k 2.0 K (3.6 °F)"
	if got != want {
		t.Errorf("summary %q, want %q", got, want)
	}
	tr.Evidence.Extra = map[string]float64{"leak_flow_frac": nan}
	if got := tr.Summary(); got != tr.Title {
		t.Errorf("no known field: summary %q, want the title %q", got, tr.Title)
	}
}

// TestMinutesFormat: minutes read as minutes below 1.5 h, hours below 2
// days, days beyond.
func TestMinutesFormat(t *testing.T) {
	for m, want := range map[float64]string{0: "0 min", 45: "45 min", 89: "89 min", 90: "1.5 h", 120: "2.0 h", 2879: "48.0 h", 2880: "2.0 d", 15601: "10.8 d"} {
		if got := minutes(m); got != want {
			t.Errorf("minutes(%v) = %q, want %q", m, got, want)
		}
	}
}

// TestMessagesGiveOnlyKnownFigures: a rule message raised through one of
// its tests names the figures of that test and no "n/a" for another that
// gave none: the discharge-offset tests (the no-heat offset is unknown
// while the plant runs all winter), a dead sensor missing rather than
// flat, a starved coil opened on its high-command rise while the fitted
// flow is not down.
func TestMessagesGiveOnlyKnownFigures(t *testing.T) {
	e, err := NewEvaluator(testSite(1, 1), nil)
	if err != nil {
		t.Fatal(err)
	}
	rule := func(id string) *compiled {
		for _, r := range e.term {
			if r.rule.ID == id {
				return r
			}
		}
		t.Fatalf("no rule %s", id)
		return nil
	}
	nan := math.NaN()
	base := map[string]float64{"sat_c": 15.7, "dat_c": 19.2, "airflow_m3s": 0.0887, "closed_offset_sigma_k": 0.1,
		"flow_factor_sigma": 0.07, "shortfall_low_k": 0.2, "shortfall_high_k": -2.9}
	for _, tc := range []struct {
		rule string
		vals map[string]float64
		want []string
		not  []string
	}{
		{"sensor-dat-offset", map[string]float64{"offset_k": nan, "leak_rise_k": 2.8, "closed_offset_k": 2.6},
			[]string{"gain: 2.8 K (5.0 °F) with the valve closed, of which 2.6 K (4.7 °F) (±0.1 K (0.2 °F)) does not change with airflow (supply"}, nil},
		{"sensor-dat-offset", map[string]float64{"offset_k": 2.5, "leak_rise_k": nan, "closed_offset_k": nan},
			[]string{"gain: by 2.5 K (4.5 °F) with no hot water available (supply"}, nil},
		{"sensor-dat-offset", map[string]float64{"offset_k": 2.5, "leak_rise_k": 2.8, "closed_offset_k": nan},
			[]string{"by 2.5 K (4.5 °F) with no hot water available; 2.8 K (5.0 °F) with the valve closed (supply"}, nil},
		{"sensor-dat-offset", map[string]float64{"offset_k": nan, "leak_rise_k": -1.8, "closed_offset_k": nan},
			[]string{"gain: -1.8 K (-3.2 °F) with the valve closed (supply"}, nil},
		{"sensor-dat-offset", map[string]float64{"offset_k": nan, "leak_rise_k": nan, "closed_offset_k": 2.6},
			[]string{"gain: 2.6 K (4.7 °F) (±0.1 K (0.2 °F)) with the valve closed that does not change with airflow (supply"}, nil},
		{"sensor-dat-dead", map[string]float64{"dat_bad_min": 3600, "dat_flat_min": 1, "dat_c": -40},
			[]string{"missing or out of range for 2.5 d while the fan ran; last reading -40.0 °C"}, []string{"same value"}},
		{"sensor-dat-dead", map[string]float64{"dat_bad_min": 0, "dat_flat_min": 15601},
			[]string{"has read the same value for 10.8 d while the fan ran"}, []string{"missing"}},
		{"model-coil-starved", map[string]float64{"flow_factor": 0.76},
			[]string{"about 76 % of its baseline water flow (±7 %): it is short mostly at high command"}, nil},
		{"model-coil-starved", map[string]float64{"flow_factor": 1.47},
			[]string{"The coil is short mostly at high command"}, []string{"147 %"}},
		{"model-coil-starved", map[string]float64{"flow_factor": 0.6, "shortfall_low_k": nan},
			[]string{"(-2.9 K (-5.2 °F) against the model at high command)."}, []string{"short when heating"}},
		{"model-coil-starved", map[string]float64{"flow_factor": 0.6, "shortfall_low_k": nan, "shortfall_high_k": nan},
			[]string{"as a coil limited by its water flow is."}, []string{"short when heating"}},
		{"model-coil-fouled", map[string]float64{"ua_factor": 0.61, "flow_factor": 0.92, "shortfall_low_k": nan, "shortfall_high_k": -6.6},
			[]string{"with an apparent water flow of 92 % of baseline; its rise against the model is -6.6 K (-11.9 °F) at high command (fouling"}, nil},
		{"model-coil-fouled", map[string]float64{"ua_factor": 0.61, "flow_factor": 0.92, "shortfall_low_k": -1.3, "shortfall_high_k": -5.1},
			[]string{"-1.3 K (-2.3 °F) at low and mid command and -5.1 K (-9.2 °F) at high command"}, nil},
		{"model-coil-fouled", map[string]float64{"ua_factor": 0.61, "flow_factor": 0.92, "shortfall_low_k": nan, "shortfall_high_k": nan},
			[]string{"of 92 % of baseline."}, []string{"short when heating", "inside the tubes"}},
		// Water-side scale looks like a low water flow to the two-factor fit
		// (the demo campus's scaled coil fits at 36 % flow, 83 % UA).
		{"model-coil-fouled", map[string]float64{"ua_factor": 0.83, "flow_factor": 0.36, "shortfall_low_k": -3, "shortfall_high_k": -6},
			[]string{"apparent water flow of 36 % of baseline", "points to scale or sludge inside the tubes"}, nil},
		{"model-coil-fouled", map[string]float64{"ua_factor": 0.07, "flow_factor": nan, "shortfall_low_k": -3, "shortfall_high_k": -6},
			[]string{"(±", "); its rise against the model is -3.0 K"}, []string{"apparent water flow", "inside the tubes"}},
		{"model-valve-leak", map[string]float64{"leak_rise_k": 3.3, "airflow_m3s": 0.54, "leak_flow_frac": 0.06},
			[]string{"(1144 cfm): an estimated leak of 6 % of design water flow, wasting"}, nil},
		// The leak flow is inverted only after a run at zero command; a
		// valve held just above it leaks with the flow unknown.
		{"model-valve-leak", map[string]float64{"leak_rise_k": 3.3, "airflow_m3s": 0.54, "leak_flow_frac": nan},
			[]string{"(1144 cfm): wasting"}, nil},
		{"g36-low-dat-8k", map[string]float64{"dat_c": 16.4, "dat_set_c": nan, "residual_k": -9, "valve": 1, "expected_rise_k": 12, "rise_k": 3, "hw_c": 60},
			[]string{"is 9.0 K (16.2 °F) below what the coil should give (there is no discharge setpoint) (model expects a rise of 12.0 K"}, nil},
		{"g36-low-dat-8k", map[string]float64{"dat_c": 16.4, "dat_set_c": 26, "residual_k": nan, "valve": 1, "expected_rise_k": nan, "hw_c": 60},
			[]string{"is 9.6 K (17.3 °F) below its setpoint 26.0 °C (78.8 °F) with the valve at 100 %"}, nil},
		{"g36-low-dat-17k", map[string]float64{"dat_c": 16.4, "dat_set_c": nan, "residual_k": -18, "valve": 1, "hw_c": 60},
			[]string{"is 18.0 K (32.4 °F) below what the coil should give"}, nil},
	} {
		c := rule(tc.rule)
		vals := map[string]float64{}
		for k, v := range base {
			vals[k] = v
		}
		for k, v := range tc.vals {
			vals[k] = v
		}
		got, gotIP := c.render(&msgData{Entity: "VAV-1-01", Rule: c.rule.ID, Title: c.rule.Title, E: vals})
		for _, m := range []string{got, gotIP} {
			if strings.Contains(m, "n/a") || strings.Contains(m, "template error") {
				t.Errorf("%s %v: message has n/a or an error: %s", tc.rule, tc.vals, m)
			}
		}
		for _, w := range tc.want {
			if !strings.Contains(got, w) {
				t.Errorf("%s %v: message lacks %q:\n%s", tc.rule, tc.vals, w, got)
			}
			// The IP-first rendering has each pair the other way round.
			for _, p := range unitPairRE.FindAllStringSubmatch(w, -1) {
				if swapped := p[2] + " (" + p[1] + ")"; !strings.Contains(gotIP, swapped) {
					t.Errorf("%s %v: IP-first message lacks %q:\n%s", tc.rule, tc.vals, swapped, gotIP)
				}
			}
		}
		for _, w := range tc.not {
			if strings.Contains(got, w) {
				t.Errorf("%s %v: message has %q:\n%s", tc.rule, tc.vals, w, got)
			}
		}
	}
}

// unitPairRE matches a temperature printed SI first, IP in brackets.
var unitPairRE = regexp.MustCompile(`(-?[0-9.]+ (?:K|°C)) \((-?[0-9.]+ °F)\)`)

// A figure followed by its other unit in brackets, SI first and IP first.
var (
	siFirst = regexp.MustCompile(`\d ?(K|°C|L/s|kW|kWh|kPa|Pa) \(`)
	ipFirst = regexp.MustCompile(`\d ?(°F|cfm|gpm|MBH|therm|ton-h|in\. w\.c\.|ft) \(`)
)

// TestEveryBuiltinMessageRenders: every built-in rule's message renders
// from a full evidence record (every field of its scope known, here 0.5)
// without a placeholder or a template error, and from one with every field
// unknown without a template error; each rendering gives every pair of
// units in its own order.
func TestEveryBuiltinMessageRenders(t *testing.T) {
	e, err := NewEvaluator(testSite(1, 1), nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, scope := range []struct {
		rules []*compiled
		sch   *schema
	}{{e.term, e.rs.sch.terminal}, {e.loop, e.rs.sch.loop}} {
		for _, c := range scope.rules {
			for _, v := range []float64{0.5, math.NaN()} {
				vals := make(map[string]float64, len(scope.sch.order))
				for _, name := range scope.sch.order {
					vals[name] = v
				}
				si, ip := c.render(&msgData{Entity: "X-1", Rule: c.rule.ID, Title: c.rule.Title, E: vals, Currency: "USD"})
				if m := siFirst.FindString(ip); m != "" {
					t.Errorf("%s: IP-first message has an SI-first pair %q: %s", c.rule.ID, m, ip)
				}
				if m := ipFirst.FindString(si); m != "" {
					t.Errorf("%s: SI-first message has an IP-first pair %q: %s", c.rule.ID, m, si)
				}
				for _, got := range []string{si, ip} {
					if strings.Contains(got, "template error") || got == "" {
						t.Errorf("%s (fields %v): %q", c.rule.ID, v, got)
					}
					if v == v && strings.Contains(got, "n/a") {
						t.Errorf("%s, every field known: message has n/a: %s", c.rule.ID, got)
					}
				}
			}
		}
	}
}

// TestFieldDigestFlowUnits: in a site rule's digest an airflow reads in
// L/s and cfm, a water flow in L/s and gpm (0.0944 m³/s = 200 cfm;
// 6.31e-5 m³/s = 1.0 gpm, 1 US gal = 3.785412 L).
func TestFieldDigestFlowUnits(t *testing.T) {
	got := fieldDigest(map[string]float64{"airflow_m3s": 0.0944, "leak_flow_m3s": 6.31e-5}, 3, unitFmt{})
	for _, w := range []string{"airflow m3s 94.4 L/s (200 cfm)", "leak flow m3s", "gpm"} {
		if !strings.Contains(got, w) {
			t.Errorf("digest %q lacks %q", got, w)
		}
	}
	if strings.Count(got, "gpm") != 1 {
		t.Errorf("digest %q: the airflow reads as a water flow", got)
	}
	if got := fieldDigest(map[string]float64{"airflow_m3s": 0.0944}, 3, unitFmt{ip: true}); got != "airflow m3s 200 cfm (94.4 L/s)" {
		t.Errorf("IP-first digest %q", got)
	}
}

// TestShortfallInMessagesOnlyWhenKnown: the fouled and starved messages
// give the heat short when heating only when some was measured (1 kW =
// 3.412 MBH: ASHRAE Handbook — Fundamentals, ch. 38).
func TestShortfallInMessagesOnlyWhenKnown(t *testing.T) {
	e, err := NewEvaluator(testSite(1, 1), nil)
	if err != nil {
		t.Fatal(err)
	}
	vals := map[string]float64{"ua_factor": 0.7, "ua_factor_sigma": 0.02, "flow_factor": 0.6, "flow_factor_sigma": 0.05, "shortfall_low_k": -1, "shortfall_high_k": -4}
	n := 0
	for _, c := range e.term {
		if c.rule.ID != "model-coil-fouled" && c.rule.ID != "model-coil-starved" {
			continue
		}
		n++
		for _, w := range []float64{0, math.NaN(), 1200} {
			got, _ := c.render(&msgData{Rule: c.rule.ID, E: vals, Impact: Impact{ShortfallW: w}})
			has := strings.Contains(got, "short when heating")
			if has != (w > 0) || w > 0 && !strings.Contains(got, "about 1.20 kW (4.1 MBH) short when heating.") {
				t.Errorf("%s, shortfall %v W: %s", c.rule.ID, w, got)
			}
		}
	}
	if n != 2 {
		t.Fatalf("%d of the fouled and starved rules found", n)
	}
}

// TestLeakMessageCoolingInTonHours: the leak message gives the week's heat
// in therms and its cooling in ton-hours beside kWh (246 kWh / 29.3071 =
// 8.4 therm; 246 kWh / 3.516853 = 69.9 ton-h).
func TestLeakMessageCoolingInTonHours(t *testing.T) {
	e, err := NewEvaluator(testSite(1, 1), nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range e.term {
		if c.rule.ID != "model-valve-leak" {
			continue
		}
		got, gotIP := c.render(&msgData{Rule: c.rule.ID, E: map[string]float64{"leak_rise_k": 8.8, "airflow_m3s": 0.18, "leak_flow_frac": 0.12},
			Impact: Impact{WastedHeatW: 2210, WeeklyHeatKWh: 246, WeeklyCoolKWh: 246, WeeklyCost: 19.69}, Currency: "USD"})
		if !strings.Contains(got, "246 kWh (8.4 therm) heat and 246 kWh (69.9 ton-h) cooling a week") {
			t.Errorf("leak message: %s", got)
		}
		// IP first (for IP outputs): 8.8 K × 1.8 = 15.8 °F; 0.18 m³/s =
		// 381 cfm (1 cfm = 4.719474e-4 m³/s).
		for _, w := range []string{"15.8 °F (8.8 K)", "381 cfm", "8.4 therm (246 kWh) heat and 69.9 ton-h (246 kWh) cooling a week"} {
			if !strings.Contains(gotIP, w) {
				t.Errorf("IP-first leak message lacks %q: %s", w, gotIP)
			}
		}
		return
	}
	t.Fatal("no model-valve-leak rule")
}
