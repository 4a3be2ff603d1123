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

// evalDays is the simulated period: 7 days by default (test time), any
// number with RISEWATCH_EVAL_DAYS (30 = the whole demo scenario), -short: 3.
func evalDays(t *testing.T, sc *sim.Scenario) int {
	if v := os.Getenv("RISEWATCH_EVAL_DAYS"); v != "" {
		d, err := strconv.Atoi(v)
		if err != nil {
			t.Fatal(err)
		}
		return d
	}
	if testing.Short() {
		return 3
	}
	return 7
}

// TestEvaluateDemoCampus runs the demo campus and its fault-free twin
// through the engine and the built-in rules and checks the targets set for
// the detector (they are project targets, not published values): ≥ 95 %
// detection, ≥ 90 % isolation, ≤ 1 false alarm per 1,000 terminal-weeks,
// median time to detect ≤ 6 h of heating operation for leaks and ≤ 3 days
// for fouling and starvation.
func TestEvaluateDemoCampus(t *testing.T) {
	sc, err := sim.DemoScenario()
	if err != nil {
		t.Fatal(err)
	}
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
	// Always: the injected leaking valve (VAV-L-104 from 72 h, demo scenario)
	// is detected and isolated, and the twin raises no more alarms than the
	// faulted campus's unfaulted terminals per terminal-week plus a margin.
	for _, row := range f.Rows {
		if row.Kind == fdd.KindLeakingValve && (row.Detected != row.Faults || row.Isolated != row.Faults) {
			t.Errorf("leaking valves: %d of %d detected, %d isolated", row.Detected, row.Faults, row.Isolated)
		}
	}
	if os.Getenv("RISEWATCH_EVAL_STRICT") == "" {
		t.Log("project targets checked only with RISEWATCH_EVAL_STRICT=1 (see the table)")
		return
	}
	if r := float64(f.TotalDetected) / float64(f.TotalFaults); r < 0.95 {
		t.Errorf("detection rate %.2f, target ≥ 0.95", r)
	}
	if r := float64(f.TotalIsolated) / float64(f.TotalFaults); r < 0.90 {
		t.Errorf("isolation rate %.2f, target ≥ 0.90", r)
	}
	for _, res := range []Result{f, rep.Twin} {
		if res.FalsePer1000TW > 1 {
			t.Errorf("%.2f false alarms per 1,000 terminal-weeks, target ≤ 1", res.FalsePer1000TW)
		}
	}
	for _, row := range f.Rows {
		limit := math.Inf(1)
		switch row.Kind {
		case fdd.KindLeakingValve:
			limit = 6
		case fdd.KindFouledCoil, fdd.KindStarvedCoil:
			limit = 72
		}
		if row.MedianTTDOpH > limit || (math.IsNaN(row.MedianTTDOpH) && !math.IsInf(limit, 1)) {
			t.Errorf("%s: median time to detect %.1f h of heating operation, target ≤ %.0f h", row.Kind, row.MedianTTDOpH, limit)
		}
	}
}
