package eval

import (
	"context"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"risewatch/fdd"
	"risewatch/sim"
)

// evalDays is the simulated period: the whole demo scenario (30 days, every
// injected fault) by default, 7 days with -short, any number with
// RISEWATCH_EVAL_DAYS.
func evalDays(t *testing.T, sc *sim.Scenario) int {
	if v := os.Getenv("RISEWATCH_EVAL_DAYS"); v != "" {
		d, err := strconv.Atoi(v)
		if err != nil || d < 1 {
			t.Fatalf("RISEWATCH_EVAL_DAYS=%q: want a positive number of days", v)
		}
		return d
	}
	if testing.Short() {
		return 7
	}
	return sc.Days
}

// Project targets for the detector (project targets, not published values).
const (
	targetDetection   = 0.95 // share of injected faults detected
	targetIsolation   = 0.90 // share isolated as the right kind
	targetFalsePer1kW = 1.0  // false alarms per 1,000 terminal-weeks
	targetLeakTTDh    = 6.0  // median time to detect a leak, hours of heating operation
	targetSlowTTDh    = 72.0 // fouling and starvation, hours of heating operation
)

// TestEvaluateDemoCampus runs the demo campus and its fault-free twin
// through the engine and the built-in rules, prints the evaluation table
// (the README's) and checks the targets: ≥ 95 % detection, ≥ 90 %
// isolation, ≤ 1 false alarm per 1,000 terminal-weeks on the unfaulted
// terminals and on the twin, median time to detect ≤ 6 h of heating
// operation for leaks and ≤ 3 days for fouling and starvation.
func TestEvaluateDemoCampus(t *testing.T) {
	sc, err := sim.DemoScenario()
	if err != nil {
		t.Fatal(err)
	}
	full := sc.Days
	if d := evalDays(t, sc); d != sc.Days {
		if sc, err = sc.With(d, 0); err != nil {
			t.Fatal(err)
		}
	}
	rep, err := RunScenario(context.Background(), sc, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	if err := rep.WriteTable(&b); err != nil {
		t.Fatal(err)
	}
	t.Log("\n" + b.String())
	f := rep.Faulted
	if f.TotalFaults == 0 {
		t.Fatal("no injected faults in the scenario")
	}
	if r := float64(f.TotalDetected) / float64(f.TotalFaults); r < targetDetection {
		t.Errorf("detection rate %.2f, target ≥ %.2f", r, targetDetection)
	}
	iso, isoWant := float64(f.TotalIsolated)/float64(f.TotalFaults), targetIsolation
	if sc.Days != full {
		// Some faults need days of varied operation to be told apart (a
		// sensor offset with the plant never off needs the closed-valve
		// rise at several airflows), so the target holds for the whole
		// scenario only.
		isoWant = 0
		t.Logf("isolation %.2f over %d days (target checked over the full %d days)", iso, sc.Days, full)
	}
	if iso < isoWant {
		t.Errorf("isolation rate %.2f, want ≥ %.2f; misclassified: %v", iso, isoWant, misclassified(f))
	}
	for name, res := range map[string]Result{"unfaulted terminals": f, "fault-free twin": rep.Twin} {
		if res.TerminalWeeks <= 0 {
			t.Errorf("%s: no fault-free terminal time observed", name)
		}
		if res.FalsePer1000TW > targetFalsePer1kW {
			t.Errorf("%s: %.2f false alarms per 1,000 terminal-weeks, target ≤ %.0f: %v", name, res.FalsePer1000TW, targetFalsePer1kW, res.FalseAlarmList)
		}
	}
	for _, row := range f.Rows {
		limit := math.Inf(1)
		switch row.Kind {
		case fdd.KindLeakingValve:
			limit = targetLeakTTDh
		case fdd.KindFouledCoil, fdd.KindStarvedCoil:
			limit = targetSlowTTDh
		}
		if math.IsInf(limit, 1) {
			continue
		}
		if math.IsNaN(row.MedianTTDOpH) || row.MedianTTDOpH > limit {
			t.Errorf("%s: median time to detect %.1f h of heating operation, target ≤ %.0f h", row.Kind, row.MedianTTDOpH, limit)
		}
	}
}

// misclassified lists "entity: got kind (true kind)" over all rows.
func misclassified(r Result) []string {
	var out []string
	for _, row := range r.Rows {
		for _, m := range row.Misclassified {
			out = append(out, m+" (true "+row.Kind.String()+")")
		}
	}
	return out
}
