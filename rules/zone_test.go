package rules

import (
	"math"
	"strconv"
	"strings"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/fdd"
	"risewatch/site"
	"risewatch/units"
)

const zoneRuleID = "sensor-zone-implausible"

// TestZoneImplausibleRule runs the fdd engine and the built-in rules over a
// simulated stream of one-minute samples of three boxes with the fan on
// (the rule's gate).
// Box 1 (zone points configured) has its room sensor open (−40 °C) for 60
// minutes, box 2 (configured) its heating setpoint at 80 °C for 60 minutes,
// box 3 has no zone points and sends none. The rule must open on boxes 1
// and 2 after its persistence, with a message naming the reading, clear
// after its clear persistence once the readings are plausible, and never
// open on box 3.
func TestZoneImplausibleRule(t *testing.T) {
	s, en, r, ev := zoneRig(t, 3, 2)
	var err error
	const badFrom, badTo, end = 20, 80, 200
	var trs []Transition
	smp := make([]collector.Sample, 3)
	for k := 0; k < end; k++ {
		at := minute(k)
		bad := k >= badFrom && k < badTo
		jit := 0.1 * math.Sin(float64(k)) // live sensors: no flatline
		for i := range smp {
			smp[i] = collector.Sample{Terminal: i, At: at, AirflowM3s: 0.14, AirflowSetM3s: 0.14, DischargeC: 24 + jit, SupplyC: 13 - jit,
				ValveFrac: 0.3, HotWaterC: 60, ZoneC: 21, ZoneSetC: 21.5, PlantOn: true, FanOn: true, Occupied: true}
		}
		smp[2].Flags = collector.FlagZone | collector.FlagZoneSet
		smp[2].ZoneC, smp[2].ZoneSetC = math.NaN(), math.NaN()
		if bad {
			smp[0].ZoneC = -40
			smp[1].ZoneSetC = 80
		}
		out := en.StepView(smp)
		trs = ev.Step(out, en.Loops(), trs)
	}
	// The engine's count of bad minutes is the persistence: it reaches
	// the rule's threshold at the sample that has been bad that long.
	thr := 0.0
	for _, c := range r.When.Any {
		if c.Name == "zone_bad" {
			thr, err = strconv.ParseFloat(c.Value, 64)
		}
	}
	if err != nil || thr < 1 {
		t.Fatalf("rule %s: threshold zone_bad %v (%v)", zoneRuleID, thr, err)
	}
	openAt := minute(badFrom + int(thr) - 1).Add(time.Duration(r.For))
	// The first plausible reading ends the run; the clear condition then
	// holds from minute badTo.
	clearAt := minute(badTo).Add(time.Duration(r.ClearFor))
	for i, reading := range []string{"room temperature has read " + units.FormatTemp(-40, false), "heating setpoint has read " + units.FormatTemp(80, false)} {
		id := s.Terminals[i].ID + "/" + fdd.KindZoneSensor.String()
		op, ok := firstOf(trs, id, StateOpen)
		if !ok {
			t.Fatalf("%s: never opened; transitions %v", id, trs)
		}
		if op.Rule != zoneRuleID || !op.At.Equal(openAt) {
			t.Errorf("%s: opened by %s at %v, want %s at %v", id, op.Rule, op.At, zoneRuleID, openAt)
		}
		if !strings.Contains(op.Message, reading) {
			t.Errorf("%s: message %q does not name the reading (%q)", id, op.Message, reading)
		}
		t.Logf("%s: %s", id, op.Message)
		cl, ok := firstOf(trs, id, StateClear)
		if !ok {
			t.Fatalf("%s: never cleared", id)
		}
		if !cl.At.Equal(clearAt) {
			t.Errorf("%s: cleared at %v, want %v", id, cl.At, clearAt)
		}
	}
	for _, tr := range trs {
		if tr.Entity == s.Terminals[2].ID && tr.Kind == fdd.KindZoneSensor {
			t.Errorf("box without zone points: %s %v -> %v by %s", tr.FaultID, tr.From, tr.To, tr.Rule)
		}
	}
	if r.ClearFor <= 0 {
		t.Errorf("rule %s: clear persistence %v; want it positive", zoneRuleID, r.ClearFor)
	}
}

// TestZoneSensorOwnFault: a room sensor that fails while the discharge
// sensor is dead still raises its own finding. The dead-DAT rule suppresses
// the coil kinds and data-quality (the box's evidence is void), not the
// zone-sensor kind, which is a different device; and the zone finding is
// not folded into the box's data-quality fault.
func TestZoneSensorOwnFault(t *testing.T) {
	s, en, r, ev := zoneRig(t, 1, 1)
	tm := &s.Terminals[0]
	if r.Kind != fdd.KindZoneSensor.String() {
		t.Fatalf("built-in rule %s: kind %v, want %v", zoneRuleID, r.Kind, fdd.KindZoneSensor)
	}
	var trs []Transition
	smp := make([]collector.Sample, 1)
	for k := 0; k < 300; k++ {
		// The DAT repeats one value while the valve and SAT move (a dead
		// sensor); the room sensor reads open circuit throughout.
		u := 0.4 + 0.3*math.Sin(float64(k)/7)
		smp[0] = collector.Sample{Terminal: 0, At: minute(k), AirflowM3s: 0.14, AirflowSetM3s: 0.14, DischargeC: 24,
			SupplyC: 13 + 0.5*math.Sin(float64(k)/5), ValveFrac: u, HotWaterC: 60, ZoneC: -40, ZoneSetC: 21.5,
			PlantOn: true, FanOn: true, Occupied: true}
		trs = ev.Step(en.StepView(smp), en.Loops(), trs)
	}
	dat := tm.ID + "/" + fdd.KindDATFailed.String()
	if _, ok := firstOf(trs, dat, StateOpen); !ok {
		t.Fatalf("%s never opened (the test needs a dead DAT); transitions %v", dat, trs)
	}
	zone := tm.ID + "/" + fdd.KindZoneSensor.String()
	op, ok := firstOf(trs, zone, StateOpen)
	if !ok {
		t.Fatalf("%s never opened while %s was open; transitions %v", zone, dat, trs)
	}
	if op.Rule != zoneRuleID {
		t.Errorf("%s opened by %s, want %s", zone, op.Rule, zoneRuleID)
	}
	for _, tr := range trs {
		if tr.Kind == fdd.KindDataQuality && tr.Rule == zoneRuleID {
			t.Errorf("zone rule fed the data-quality fault: %+v", tr)
		}
	}
}

// zoneRig is a site of n boxes on one loop whose first configured boxes
// have zone temperature and heating setpoint points, the fdd engine and the
// built-in rules' evaluator over it, and the built-in zone rule.
func zoneRig(t *testing.T, n, configured int) (*site.Site, *fdd.Engine, Rule, *Evaluator) {
	t.Helper()
	s := testSite(1, n)
	for i := 0; i < configured; i++ {
		tm := &s.Terminals[i]
		tm.Points.ZoneTemp = site.PointRef{Name: tm.ID + ".ZNT", Kind: site.PointTrendColumn}
		tm.Points.ZoneSetpoint = site.PointRef{Name: tm.ID + ".ZNSP", Kind: site.PointTrendColumn}
	}
	en, err := fdd.NewEngine(s, fdd.DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	rs, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	r, ok := rs.Rule(zoneRuleID)
	if !ok {
		t.Fatalf("no built-in rule %s", zoneRuleID)
	}
	ev, err := NewEvaluator(s, rs)
	if err != nil {
		t.Fatal(err)
	}
	return s, en, r, ev
}
