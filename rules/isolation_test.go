package rules

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"risewatch/fdd"
)

// lowDAT is a terminal calling for full heat with DAT 10 K short of the
// 35 °C setpoint: the Guideline 36 8 K (15 °F) low-DAT condition holds.
func lowDAT(t, i int) fdd.Evidence {
	e := quiet(t, minute(i))
	e.ValveFrac, e.DATSetC, e.DischargeC = 1, 35, 25
	e.ObservedRiseK, e.DATMinusSATK = 12, 12
	return e
}

func coldLoop(i int, short bool) fdd.LoopEvidence {
	l := fdd.LoopEvidence{Loop: 0, At: minute(i), PlantOn: true, SupplyC: 45, ExpectedC: 60,
		Terminals: 60, ShortFraction: 0.05, MeanPerfIndex: 0.95, LowSupplyK: 15, Score: 0.9, Measured: true, Short: 0}
	if short {
		l.ShortFraction, l.Short, l.MeanPerfIndex = 0.8, 48, 0.6
	} else {
		l.SupplyC, l.LowSupplyK = 60, 0
	}
	return l
}

// Sixty terminals on one loop fall short together: one cold-loop fault
// opens, the terminal low-DAT faults it explains close with ExplainedBy and
// do not re-open while the loop fault stands.
func TestColdLoopExplainsTerminalShortfalls(t *testing.T) {
	const n = 60
	e := mustEval(t, testSite(1, n))
	var trs []Transition
	for i := 0; i < 240; i++ {
		ev := make([]fdd.Evidence, n)
		for k := range ev {
			ev[k] = lowDAT(k, i)
		}
		trs = e.Step(ev, []fdd.LoopEvidence{coldLoop(i, true)}, trs)
	}
	var loopOpen, termOpen, explained int
	for _, tr := range trs {
		switch {
		case tr.FaultID == "HW-1/cold-loop" && tr.To == StateOpen:
			loopOpen++
			if tr.At != minute(120) || tr.EntityKind != EntityLoop || !strings.Contains(tr.Message, "of 60 heating boxes") {
				t.Errorf("loop fault: %+v", tr)
			}
		case tr.Kind == fdd.KindLowDischarge && tr.To == StateOpen:
			termOpen++
		case tr.Kind == fdd.KindLowDischarge && tr.To == StateClear:
			if tr.ExplainedBy != "HW-1/cold-loop" || tr.IsNotice() {
				t.Errorf("terminal clear not explained: %+v", tr)
			}
			explained++
		}
	}
	if loopOpen != 1 || termOpen != n || explained != n {
		t.Fatalf("loop opens %d, terminal opens %d, explained %d; want 1, %d, %d", loopOpen, termOpen, explained, n, n)
	}
	if open := e.Open(); len(open) != 1 || open[0].FaultID != "HW-1/cold-loop" {
		t.Fatalf("open faults after explanation: %d", len(open))
	}
	// Loop recovers; the boxes still short now open their own faults.
	trs = trs[:0]
	for i := 240; i < 420; i++ {
		ev := make([]fdd.Evidence, n)
		for k := range ev {
			ev[k] = lowDAT(k, i)
		}
		trs = e.Step(ev, []fdd.LoopEvidence{coldLoop(i, false)}, trs)
	}
	if tr, ok := firstOf(trs, "HW-1/cold-loop", StateClear); !ok || tr.At != minute(300) {
		t.Fatalf("loop clear %v at %v, want minute 300 (1 h clear persistence)", ok, tr.At)
	}
	if tr, ok := firstOf(trs, "VAV-1-01/low-discharge", StateOpen); !ok || tr.At != minute(310) {
		t.Fatalf("terminal re-open %v at %v, want minute 310", ok, tr.At)
	}
}

// A failed discharge sensor explains the leak that the same reading
// suggests.
func TestDeadSensorSuppressesLeak(t *testing.T) {
	e := mustEval(t, testSite(1, 1))
	var trs []Transition
	for i := 0; i < 200; i++ {
		ev := quiet(0, minute(i))
		ev.ClosedMinutes = float64(i)
		ev.DATMinusSATK, ev.DischargeC = 6, 19
		ev.DATFlatMinutes = float64(100 + i)
		trs = e.Step([]fdd.Evidence{ev}, nil, trs)
	}
	if _, ok := firstOf(trs, "VAV-1-01/dat-failed", StateOpen); !ok {
		t.Fatal("dead sensor not raised")
	}
	if tr, ok := firstOf(trs, "VAV-1-01/leaking-valve", StateClear); !ok || tr.ExplainedBy != "VAV-1-01/dat-failed" {
		t.Fatalf("leak not explained: %+v", tr)
	}
	for _, o := range e.Open() {
		if o.Kind == fdd.KindLeakingValve {
			t.Fatal("leak still open")
		}
	}
}

// Model-based leak: impact is computed from the engine's wasted heat at the
// site's prices. Check value: 470 W of leak heat and 470 W of cooling for the
// 60 h/week default schedule at 0.05 and 0.04 /kWh is 28.2 kWh each, 1.41 +
// 1.128 = 2.538 a week (arithmetic; 470 W is the worked 300 cfm, 5 °F leak in
// the reference notes' Q = 1.08·cfm·ΔT example, engineering inference).
func TestLeakImpactAndMessage(t *testing.T) {
	e := mustEval(t, testSite(1, 1))
	var trs []Transition
	for i := 0; i < 60; i++ {
		ev := quiet(0, minute(i))
		ev.ClosedMinutes = float64(i)
		ev.LeakRiseK, ev.LeakSigmaK, ev.LeakFlowFrac = 2.8, 0.3, 0.06
		ev.WastedHeatW, ev.AddedCoolingW = 470, 470
		ev.Scores[fdd.KindLeakingValve] = 0.9
		trs = e.Step([]fdd.Evidence{ev}, nil, trs)
	}
	tr, ok := firstOf(trs, leakID, StateOpen)
	if !ok || tr.Rule != "model-valve-leak" {
		t.Fatalf("model leak not raised: %+v", trs)
	}
	if math.Abs(tr.Impact.WeeklyHeatKWh-28.2) > 1e-9 || math.Abs(tr.Impact.WeeklyCost-2.538) > 1e-9 {
		t.Errorf("impact %+v, want 28.2 kWh and 2.538 USD a week", tr.Impact)
	}
	for _, want := range []string{"6 % of design water flow", "0.47 kW (1.6 MBH)", "USD 2.54"} {
		if !strings.Contains(tr.Message, want) {
			t.Errorf("message %q lacks %q", tr.Message, want)
		}
	}
	if tr.Evidence.LeakFlowFrac != 0.06 || tr.Evidence.Extra["wasted_heat_w"] != 470 || len(tr.Causes) == 0 || len(tr.Checks) == 0 {
		t.Errorf("evidence %+v causes %d checks %d", tr.Evidence, len(tr.Causes), len(tr.Checks))
	}
}

// A box whose own fault was raised days before its loop went short keeps
// it open (its cause is its own); a box that fell short the same morning
// is explained by the loop fault (LoopExplainLead).
func TestColdLoopKeepsOlderTerminalFaults(t *testing.T) {
	const n = 6
	e := mustEval(t, testSite(1, n))
	var trs []Transition
	start := 3 * 24 * 60 // the loop goes short on day 3
	for i := 0; i < start+180; i++ {
		ev := make([]fdd.Evidence, n)
		for k := range ev {
			ev[k] = quiet(k, minute(i))
			if k == 0 || i >= start-60 {
				ev[k] = lowDAT(k, i) // box 1 short since day 0, the others since an hour before the loop
			}
		}
		trs = e.Step(ev, []fdd.LoopEvidence{coldLoop(i, i >= start)}, trs)
	}
	if _, ok := firstOf(trs, "HW-1/cold-loop", StateOpen); !ok {
		t.Fatal("loop fault did not open")
	}
	if tr, ok := firstOf(trs, "VAV-1-01/low-discharge", StateClear); ok {
		t.Errorf("fault raised three days before the loop went short was closed: %+v", tr)
	}
	for k := 2; k <= n; k++ {
		id := fmt.Sprintf("VAV-1-%02d/low-discharge", k)
		if tr, ok := firstOf(trs, id, StateClear); !ok || tr.ExplainedBy != "HW-1/cold-loop" {
			t.Errorf("%s: explained %v (%q), want closed as explained by HW-1/cold-loop", id, ok, tr.ExplainedBy)
		}
	}
}

// offsetPlantOn is a closed valve with the plant never off and a +2.5 K
// discharge sensor offset: the raw DAT − SAT (3.3 K) passes the Guideline 36
// 3 K leak limit, but the closed-valve fit finds the rise does not change
// with airflow (intercept 2.5 K ± sigma) and the engine scores an offset.
func offsetPlantOn(i int, sigma float64) fdd.Evidence {
	e := quiet(0, minute(i))
	e.ClosedMinutes = float64(60 + i)
	e.DATMinusSATK, e.DischargeC = 3.3, e.SupplyC+3.3
	e.LeakRiseK, e.LeakSigmaK = 2.5, 0.3
	e.ClosedOffsetK, e.ClosedOffsetSigmaK, e.ClosedHeatK = 2.5, sigma, 0.1
	e.Scores[fdd.KindDATOffset], e.Scores[fdd.KindLeakingValve] = 0.8, 0.2
	return e
}

// With the plant never off, an offset clear of zero by two standard errors
// opens the sensor fault (after its 2 h) and closes the Guideline 36 leak
// fault it explains; an intercept within its uncertainty opens no offset.
func TestOffsetWithPlantOnExplainsLeak(t *testing.T) {
	for _, c := range []struct {
		name       string
		sigma      float64
		wantOffset bool
	}{
		{"certain", 0.3, true},    // 2.5 ≥ 1.5 + 2·0.3
		{"uncertain", 0.6, false}, // 2.5 < 1.5 + 2·0.6
	} {
		t.Run(c.name, func(t *testing.T) {
			e := mustEval(t, testSite(1, 1))
			trs := run(e, 0, 180, func(i int) []fdd.Evidence { return []fdd.Evidence{offsetPlantOn(i, c.sigma)} })
			off, gotOffset := firstOf(trs, "VAV-1-01/dat-offset", StateOpen)
			if gotOffset != c.wantOffset {
				t.Fatalf("dat-offset opened %v, want %v", gotOffset, c.wantOffset)
			}
			leak, ok := firstOf(trs, leakID, StateOpen)
			if !ok || leak.Rule != "g36-valve-leak" {
				t.Fatalf("Guideline 36 leak check did not open: %+v", leak)
			}
			if !c.wantOffset {
				return
			}
			if off.At != minute(120) || !strings.Contains(off.Message, "does not change with airflow") {
				t.Errorf("offset fault: at %v, %q", off.At, off.Message)
			}
			clr, ok := firstOf(trs, leakID, StateClear)
			if !ok || clr.ExplainedBy != "VAV-1-01/dat-offset" || clr.At != off.At {
				t.Errorf("leak fault not explained by the offset: %+v", clr)
			}
		})
	}
}

// TestImpactFollowsTheFaultKind: a fault counts only the power figures it
// causes. The same record (470 W of heat with the valve shut, 900 W short
// when heating) costs a leaking valve its waste, a starved coil only its
// shortfall, and a biased discharge sensor nothing: its "waste" is the
// sensor reading high (before, the demo's dat-offset and starved-coil
// faults showed a weekly cost of wasted heat).
func TestImpactFollowsTheFaultKind(t *testing.T) {
	ev := quiet(0, minute(0))
	ev.WastedHeatW, ev.AddedCoolingW, ev.ShortfallW = 470, 470, 900
	all := gFan | gPlant | gUsable
	for _, c := range []struct {
		kind              fdd.Kind
		heat, cool, short float64
	}{
		{fdd.KindLeakingValve, 470, 470, 0},
		{fdd.KindStuckValve, 470, 470, 900},
		{fdd.KindStarvedCoil, 0, 0, 900},
		{fdd.KindFouledCoil, 0, 0, 900},
		{fdd.KindDATOffset, 0, 0, 0},
		{fdd.KindDATFailed, 0, 0, 0},
		{fdd.KindHunting, 0, 0, 0},
	} {
		f := &fault{key: faultKey{ek: EntityTerminal, kind: c.kind}}
		f.observe(&ev, 1, all)
		if f.heatWSum != c.heat || f.coolWSum != c.cool || f.shortWSum != c.short {
			t.Errorf("%s: heat %g, cooling %g, shortfall %g W; want %g, %g, %g", c.kind, f.heatWSum, f.coolWSum, f.shortWSum, c.heat, c.cool, c.short)
		}
	}
}
