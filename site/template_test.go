package site

import (
	"math"
	"strings"
	"testing"

	"risewatch/coilmodel"
	"risewatch/units"
)

const layered = `site: {name: Layers, time_zone: Europe/Berlin}
sources:
  - name: export
    kind: trendfile
    path: t.csv
    layout: long
    point_column: Point
    value_column: Value
    points:
      supply_air: {column: "{id}/SAT", unit: C}
      airflow: {column: "{building}/{id}/AF", unit: L/s}
      discharge: {column: "{id}/DAT", unit: C}
      valve: {column: "{id}/VLV", unit: "%"}
      zone_temp: {column: "{id}/ZT", unit: C}
  - name: bas
    kind: bacnet
    points:
      discharge: {object: "AI:3", trend_log: 7, unit: degF}
points_from: export
terminal_defaults:
  building: Main
  valve: {cv: 1.0, rangeability: 30}
templates:
  small:
    coil: {inlet: 6 in, rows: 1}
    airflow: {min: 40 L/s, cooling_max: 160 L/s, heating_max: 90 L/s}
  small-2row:
    template: small
    coil: {rows: 2}
loops:
  - {id: LTHW, design_supply: 70 C, design_delta_t: 20 K, branch_dp: 30 kPa}
ahus:
  - id: AHU-A
    terminal_defaults: {valve: {rangeability: 40}, zone: "Wing A"}
  - id: AHU-B
terminals:
  - {id: T1, ahu: AHU-A, template: small}
  - {id: T2, ahu: AHU-A, template: small-2row, valve: {kv: 0.865}}
  - {id: T3, ahu: AHU-B, template: small, building: Annex, points: {zone_temp: none, zone_setpoint: 21 C}}
  - id: T4
    ahu: AHU-B
    template: small
    device: 4004
    points_from: [bas, export]
    coil:
      geometry:
        face_width: 254 mm
        face_height: 190.5 mm
        rows: 1
        circuits: 1
        tube: {od: 12.7 mm, wall: 0.4064 mm}
        fin: {fpi: 10, thickness: 0.1143 mm}
        transverse_pitch: 31.75 mm
        longitudinal_pitch: 27.5 mm
`

func TestLayersAndPatterns(t *testing.T) {
	s, err := Parse("layers.yaml", []byte(layered))
	if err != nil {
		t.Fatal(err)
	}
	get := func(id string) *Terminal { return &s.Terminals[s.TerminalIndex[id]] }
	t1, t2, t3, t4 := get("T1"), get("T2"), get("T3"), get("T4")
	// Precedence: terminal_defaults < AHU terminal_defaults < template < terminal.
	if t1.Valve.Rangeability != 40 || t3.Valve.Rangeability != 30 || t1.Zone != "Wing A" || t3.Zone != "" {
		t.Errorf("defaults: T1 R=%g zone=%q, T3 R=%g zone=%q", t1.Valve.Rangeability, t1.Zone, t3.Valve.Rangeability, t3.Zone)
	}
	if t1.Building != "Main" || t3.Building != "Annex" {
		t.Errorf("building: %q %q", t1.Building, t3.Building)
	}
	// Template chain: small-2row keeps small's inlet and airflow, changes rows.
	if t2.Coil.Rows != 2 || t1.Coil.Rows != 1 || t2.InletIn != 6 || t2.HeatingAirflowM3s != t1.HeatingAirflowM3s {
		t.Errorf("template chain: rows %d/%d inlet %g", t1.Coil.Rows, t2.Coil.Rows, t2.InletIn)
	}
	// kv replaces the default cv: Kv 0.865 is Cv 1.0 (IEC 60534-1 relation Kv = 0.865·Cv).
	if math.Abs(t2.Valve.Cv-1.0) > 2e-3 || t2.Valve.Rangeability != 40 {
		t.Errorf("kv: Cv %g R %g", t2.Valve.Cv, t2.Valve.Rangeability)
	}
	// Geometry in the terminal replaces the template's preset keys.
	if t4.CoilPreset != nil || t4.Coil.FaceWidthM != 0.254 || t4.InletIn != 6 {
		t.Errorf("geometry override: preset %+v width %g inlet %g", t4.CoilPreset, t4.Coil.FaceWidthM, t4.InletIn)
	}
	// Patterns: placeholders, long-layout names, units; "none" and fixed values.
	if got := t3.Points.Airflow.Column; got != "Annex/T3/AF" {
		t.Errorf("airflow column %q", got)
	}
	if t3.Points.ZoneTemp.Defined() || t3.Points.ZoneSetpoint.Fixed == nil || *t3.Points.ZoneSetpoint.Fixed != 21 {
		t.Errorf("none/fixed: %+v %+v", t3.Points.ZoneTemp, t3.Points.ZoneSetpoint)
	}
	// Mixed sources: the first points_from source with a pattern wins.
	d := t4.Points.Discharge
	if d.Kind != PointBACnet || d.BACnet.Device != 4004 || d.BACnet.ObjectType != "analog-input" || d.BACnet.Instance != 3 || *d.BACnet.TrendLog != 7 || d.Unit != "degF" {
		t.Errorf("bacnet discharge: %+v %+v", d, d.BACnet)
	}
	if t4.Points.Airflow.Kind != PointTrendColumn || t4.Points.Airflow.Source != "export" {
		t.Errorf("airflow from export: %+v", t4.Points.Airflow)
	}
	// Names are "<id>.<suffix>" and unique.
	seen := map[string]bool{}
	for _, p := range s.Points() {
		if seen[p.Ref.Name] {
			t.Errorf("duplicate point name %s", p.Ref.Name)
		}
		seen[p.Ref.Name] = true
		if !strings.HasPrefix(p.Ref.Name, p.Entity+".") || !strings.HasSuffix(p.Ref.Name, "."+p.Role.Suffix()) {
			t.Errorf("name %s for %s %s", p.Ref.Name, p.Entity, p.Role)
		}
	}
	for _, n := range []string{"T4.DAT", "AHU-A.SAT", "T3.ZNSP"} {
		if !seen[n] {
			t.Errorf("point %s missing", n)
		}
	}
	if s.Sources[0].Trendfile.TimeZone.String() != "Europe/Berlin" {
		t.Errorf("trend file zone defaults to the site's: %v", s.Sources[0].Trendfile.TimeZone)
	}
}

// The same terminal written in IP and in SI loads to the same model
// (values: conversions with NIST SP 811 B.8 factors, rounded as written).
func TestIPAndSIConfigsAgree(t *testing.T) {
	ip := base
	si := strings.NewReplacer(
		"180 F", "82.2222222222222 C",
		"5 psi", "34.4737864658 kPa",
		"8 in", "203.2 mm",
		"150 cfm", "70.79211648 L/s",
		"600 cfm", "283.16846592 L/s",
		"300 cfm", "141.58423296 L/s",
	).Replace(base)
	a, err := Parse("ip.yaml", []byte(ip))
	if err != nil {
		t.Fatal(err)
	}
	b, err := Parse("si.yaml", []byte(si))
	if err != nil {
		t.Fatal(err)
	}
	close := func(x, y float64) bool { return math.Abs(x-y) <= 1e-9*math.Max(1, math.Abs(x)) }
	ta, tb := a.Terminals[0], b.Terminals[0]
	if !close(a.Loops[0].DesignSupplyC, b.Loops[0].DesignSupplyC) || !close(a.Loops[0].BranchDPPa, b.Loops[0].BranchDPPa) ||
		!close(ta.MinAirflowM3s, tb.MinAirflowM3s) || !close(ta.MaxAirflowM3s, tb.MaxAirflowM3s) || ta.Coil != tb.Coil {
		t.Errorf("IP and SI differ:\n%+v %+v\n%+v %+v", a.Loops[0], ta, b.Loops[0], tb)
	}
	if !close(units.CToF(a.Loops[0].DesignSupplyC), 180) {
		t.Errorf("180 F loaded as %g °C", a.Loops[0].DesignSupplyC)
	}
}

func TestRatedPointCalibrates(t *testing.T) {
	text := strings.Replace(base, "rows: 2}", "rows: 2, rated: {capacity: 18 MBH, airflow: 300 cfm, entering_air: 55 F, water_flow: 1.5 gpm, entering_water: 180 F}}", 1)
	s, err := Parse("r.yaml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	tm := s.Terminals[0]
	if tm.Rated == nil || tm.Coil.UAMultiplier <= 0 {
		t.Fatalf("not calibrated: %+v", tm.Coil)
	}
	// The calibrated coil reproduces the rated capacity (the definition of Calibrate).
	r, err := coilmodel.Rate(tm.Coil, coilmodel.Operating{AirflowM3s: tm.Rated.AirflowM3s, AirDensityKgM3: coilmodel.StandardAirDensity,
		EnteringAirC: tm.Rated.EnteringAirC, WaterFlowM3s: tm.Rated.WaterFlowM3s, EnteringWaterC: tm.Rated.EnteringWaterC})
	if err != nil || math.Abs(r.CapacityW/units.MBHToW(18)-1) > 1e-6 {
		t.Errorf("rated 18 MBH, calibrated coil gives %g W (%v)", r.CapacityW, err)
	}
}
