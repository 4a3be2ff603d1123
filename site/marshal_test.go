package site

import (
	"bytes"
	"fmt"
	"reflect"
	"testing"
	"time"

	"risewatch/coilmodel"
	"risewatch/units"
)

// normalized drops what a round trip may change without changing meaning:
// file name, YAML lines, *time.Location identity (compared by name).
func normalized(s *Site) Site {
	c := *s
	c.File = ""
	c.Location = nil
	c.Loops = append([]Loop(nil), s.Loops...)
	for i := range c.Loops {
		c.Loops[i].Line = 0
	}
	c.AHUs = append([]AHU(nil), s.AHUs...)
	for i := range c.AHUs {
		c.AHUs[i].Line = 0
	}
	c.Terminals = append([]Terminal(nil), s.Terminals...)
	for i := range c.Terminals {
		c.Terminals[i].Line = 0
	}
	c.Daemon = nil // raw YAML: positions differ after a round trip
	c.Sources = append([]SourceConfig(nil), s.Sources...)
	for i := range c.Sources {
		c.Sources[i].Line = 0
		if tf := c.Sources[i].Trendfile; tf != nil {
			cp := *tf
			cp.TimeZone = nil
			c.Sources[i].Trendfile = &cp
		}
	}
	return c
}

func checkRoundTrip(t *testing.T, s *Site) []byte {
	t.Helper()
	out, err := Marshal(s)
	if err != nil {
		t.Fatalf("Marshal: %v\n%s", err, out)
	}
	back, err := Parse("roundtrip.yaml", out)
	if err != nil {
		t.Fatalf("Parse(Marshal): %v\n%s", err, out)
	}
	if back.Location.String() != s.Location.String() {
		t.Errorf("zone %s, want %s", back.Location, s.Location)
	}
	a, b := normalized(s), normalized(back)
	if !reflect.DeepEqual(a, b) {
		for i := range a.Terminals {
			if i < len(b.Terminals) && !reflect.DeepEqual(a.Terminals[i], b.Terminals[i]) {
				t.Errorf("terminal %d:\n got %+v\nwant %+v", i, b.Terminals[i], a.Terminals[i])
				break
			}
		}
		for i := range a.Sources {
			if i < len(b.Sources) && !reflect.DeepEqual(a.Sources[i], b.Sources[i]) {
				t.Errorf("source %d:\n got %+v\nwant %+v", i, b.Sources[i], a.Sources[i])
			}
		}
		if !reflect.DeepEqual(a.Loops, b.Loops) || !reflect.DeepEqual(a.AHUs, b.AHUs) || a.Energy != b.Energy || a.ElevationM != b.ElevationM {
			t.Errorf("loops/AHUs/site differ:\n got %+v %+v\nwant %+v %+v", b.Loops, b.AHUs, a.Loops, a.AHUs)
		}
		t.Errorf("round trip differs; output:\n%s", out)
	}
	return out
}

func TestMarshalRoundTripExamples(t *testing.T) {
	for _, f := range []string{"../configs/example-campus.yaml", "../configs/minimal.yaml"} {
		s, err := Load(f)
		if err != nil {
			t.Fatal(err)
		}
		checkRoundTrip(t, s)
	}
}

// campus builds a site in code the way the simulator does: patterns on the
// sources, points filled with PointPattern.Expand.
func campus(t testing.TB, n int) *Site {
	chicago, err := time.LoadLocation("America/Chicago")
	if err != nil {
		t.Fatal(err)
	}
	s := &Site{Name: "Generated campus", Location: chicago, ElevationM: 190,
		Energy: EnergyPrices{Currency: "USD", HeatPerKWh: 0.04}}
	s.Sources = []SourceConfig{{
		Name: "export", Kind: "trendfile",
		Trendfile: &TrendfileConfig{Path: "trends", Layout: "wide", Delimiter: ',', TimeFormat: "rfc3339", TimeZone: chicago, Watch: true, Glob: "*.csv"},
		Points: map[Role]PointPattern{
			RoleSupplyAir: {Column: "{id}.SAT", Unit: "degF"},
			RoleAirflow:   {Column: "{id}.AF", Unit: "cfm"},
			RoleDischarge: {Column: "{id}.DAT", Unit: "degF"},
			RoleValve:     {Column: "{id}.VLV", Unit: "%"},
			RoleZoneTemp:  {Column: "{id}.ZNT", Unit: "degF"},
		},
	}}
	src := &s.Sources[0]
	s.Loops = []Loop{{ID: "HW-1", DesignSupplyC: units.FToC(180), DesignDeltaK: units.DeltaFToK(20), BranchDPPa: units.FtWCToPa(6)}}
	for a := 1; a <= 4; a++ {
		ahu := AHU{ID: fmt.Sprintf("AHU-%d", a)}
		ahu.SupplyAir, _ = src.Points[RoleSupplyAir].Expand(src, RoleSupplyAir, ahu.ID, nil, nil)
		s.AHUs = append(s.AHUs, ahu)
	}
	inlets := []float64{6, 8, 10, 12}
	for i := 0; i < n; i++ {
		inlet := inlets[i%len(inlets)]
		c, err := coilmodel.Preset(inlet, 1+i%2, 10, false)
		if err != nil {
			t.Fatal(err)
		}
		tm := Terminal{
			ID: fmt.Sprintf("VAV-%d-%03d", 1+i%4, i), AHU: fmt.Sprintf("AHU-%d", 1+i%4), Loop: "HW-1",
			Zone: fmt.Sprintf("Room %d", 100+i), InletIn: inlet, Coil: c,
			CoilPreset:    &CoilPreset{InletIn: inlet, Rows: 1 + i%2, FPI: 10},
			Valve:         coilmodel.Valve{Cv: inlet / 8, Characteristic: coilmodel.EqualPercentage},
			MinAirflowM3s: units.CFMToM3s(inlet * 15), MaxAirflowM3s: units.CFMToM3s(inlet * 60), HeatingAirflowM3s: units.CFMToM3s(inlet * 30),
		}
		vars := map[string]string{"ahu": tm.AHU, "loop": tm.Loop, "zone": tm.Zone}
		for _, r := range []Role{RoleAirflow, RoleDischarge, RoleValve, RoleZoneTemp} {
			*tm.Points.Ref(r), _ = src.Points[r].Expand(src, r, tm.ID, vars, nil)
		}
		if i%7 == 3 { // an exception: no zone sensor, a fixed setpoint
			tm.Points.ZoneTemp = PointRef{}
			sp := units.FToC(70)
			tm.Points.ZoneSetpoint = PointRef{Name: PointName(tm.ID, RoleZoneSetpoint), Fixed: &sp, Unit: "degC"}
		}
		s.Terminals = append(s.Terminals, tm)
	}
	s.Index()
	return s
}

func TestMarshalRoundTripGenerated(t *testing.T) {
	s := campus(t, 200)
	out := checkRoundTrip(t, s)
	// Values entered in IP units are written as entered (and read back
	// bit-identical, above), not as long SI decimals.
	for _, want := range []string{"design_supply: 180 F", "design_delta_t: 20 F", "branch_dp: 6 ft", " cfm"} {
		if !bytes.Contains(out, []byte(want)) {
			t.Errorf("marshalled site lacks %q", want)
		}
	}
	if bytes.Contains(out, []byte("82.2222")) {
		t.Error("marshalled site writes 180 °F as a long SI decimal")
	}
	// Compact: one line per terminal plus a little for the rest.
	if lines := bytes.Count(out, []byte("\n")); lines > len(s.Terminals)+120 {
		t.Errorf("%d lines for %d terminals; want about one per terminal", lines, len(s.Terminals))
	}
}

func TestMarshalRejectsInvalid(t *testing.T) {
	s := campus(t, 2)
	s.Loops[0].BranchDPPa = -1
	if _, err := Marshal(s); err == nil {
		t.Error("Marshal accepted a negative branch differential pressure")
	}
}

// BenchmarkParseCampus loads a 2,000-terminal campus in one-line form.
func BenchmarkParseCampus(b *testing.B) {
	out, err := Marshal(campus(b, 2000))
	if err != nil {
		b.Fatal(err)
	}
	b.SetBytes(int64(len(out)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Parse("campus.yaml", out); err != nil {
			b.Fatal(err)
		}
	}
}

// TestMarshalKeepsOversizedGeometry: a coil given by its full geometry and
// marked oversized (as the simulator writes its oversized boxes) keeps the
// mark through a written site file; it was dropped, so the report lost
// "(oversized coil)" and readiness offered the larger face again.
func TestMarshalKeepsOversizedGeometry(t *testing.T) {
	s := campus(t, 8)
	tm := &s.Terminals[2]
	tm.CoilPreset, tm.Oversized = nil, true
	out := checkRoundTrip(t, s)
	back, err := Parse("roundtrip.yaml", out)
	if err != nil {
		t.Fatal(err)
	}
	for i := range back.Terminals {
		if bt := &back.Terminals[i]; bt.ID == tm.ID && (!bt.Oversized || bt.CoilPreset != nil) {
			t.Errorf("%s after the round trip: oversized %v, preset %v", tm.ID, bt.Oversized, bt.CoilPreset)
		}
	}
}
