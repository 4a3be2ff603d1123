package site

import (
	"math"
	"strings"
	"testing"
)

const outdoorSite = `site:
  name: Outdoor example
  time_zone: America/Chicago
  design_heating_outdoor: -4 F
  points:
    outdoor_air: {column: "OA Temp", unit: degF}
sources:
  - name: export
    kind: trendfile
    path: trends/export.csv
    time_column: Timestamp
    points:
      supply_air: {column: "{id} SAT", unit: degF}
      airflow:    {column: "{id} Airflow", unit: cfm}
      discharge:  {column: "{id} DAT", unit: degF}
      valve:      {column: "{id} HW Valve", unit: "%"}
points_from: export
loops:
  - {id: HW-1, design_supply: 180 F, branch_dp: 5 psi}
ahus:
  - id: AHU-1
terminals:
  - id: VAV-101
    coil: {inlet: 8 in, rows: 2}
    valve: {cv: 1.0}
    airflow: {min: 150 cfm, cooling_max: 600 cfm, heating_max: 300 cfm}
`

func TestSiteOutdoorAirAndDesignTemperature(t *testing.T) {
	s, err := Parse("outdoor.yaml", []byte(outdoorSite))
	if err != nil {
		t.Fatal(err)
	}
	// -4 °F = -20 °C exactly (°C = (°F − 32)·5/9).
	if s.DesignOutdoorC == nil || math.Abs(*s.DesignOutdoorC+20) > 1e-9 {
		t.Fatalf("design outdoor = %v, want -20 °C", s.DesignOutdoorC)
	}
	if s.OutdoorAir.Column != "OA Temp" || s.OutdoorAir.Source != "export" || s.OutdoorAir.Name != "site.OAT" {
		t.Fatalf("outdoor air point = %+v", s.OutdoorAir)
	}
	found := false
	for _, p := range s.Points() {
		if p.Role == RoleOutdoorAir && p.Entity == SiteEntity {
			found = true
		}
	}
	if !found {
		t.Fatal("Points() does not list the outdoor-air point")
	}
	y, err := Marshal(s)
	if err != nil {
		t.Fatal(err)
	}
	back, err := Parse("back.yaml", y)
	if err != nil {
		t.Fatalf("%v\n%s", err, y)
	}
	if back.OutdoorAir.Column != "OA Temp" || back.DesignOutdoorC == nil || math.Abs(*back.DesignOutdoorC+20) > 1e-9 {
		t.Fatalf("round trip lost the outdoor data:\n%s", y)
	}
}

func TestSiteOutdoorAirFromPattern(t *testing.T) {
	in := strings.Replace(outdoorSite, "  points:\n    outdoor_air: {column: \"OA Temp\", unit: degF}\n", "", 1)
	in = strings.Replace(in, "      valve:      {column: \"{id} HW Valve\", unit: \"%\"}\n",
		"      valve:      {column: \"{id} HW Valve\", unit: \"%\"}\n      outdoor_air: {column: \"{id} OAT\", unit: degF}\n", 1)
	s, err := Parse("pattern.yaml", []byte(in))
	if err != nil {
		t.Fatal(err)
	}
	if s.OutdoorAir.Column != "site OAT" {
		t.Fatalf("outdoor air from pattern = %+v", s.OutdoorAir)
	}
}

func TestSiteDesignOutdoorOutOfRange(t *testing.T) {
	in := strings.Replace(outdoorSite, "-4 F", "40 C", 1)
	_, err := Parse("bad.yaml", []byte(in))
	if err == nil || !strings.Contains(err.Error(), "bad.yaml:4:") || !strings.Contains(err.Error(), "design_heating_outdoor") {
		t.Fatalf("want a positioned error for design_heating_outdoor, got %v", err)
	}
}
