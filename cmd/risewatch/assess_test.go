package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// assessSite is a one-box site with a design load (values chosen).
const assessSite = `site:
  name: Assess example
  time_zone: America/Chicago
loops:
  - {id: HW-1, design_supply: 180 F, branch_dp: 5 psi}
ahus:
  - {id: AHU-1, points: {supply_air: 55 F}}
terminals:
  - id: VAV-101
    points: {airflow: 400 cfm, discharge: 80 F, valve: "50 %"}
    coil: {inlet: 8 in, rows: 1}
    valve: {cv: 2.5}
    airflow: {min: 150 cfm, cooling_max: 600 cfm, heating_max: 400 cfm}
    design_load: 25 MBH
`

func TestAssessCommand(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "site.yaml")
	if err := os.WriteFile(cfg, []byte(assessSite), 0o644); err != nil {
		t.Fatal(err)
	}
	csvPath, plotPath := filepath.Join(dir, "a.csv"), filepath.Join(dir, "a.svg")
	var out, errb bytes.Buffer
	err := runAssess(context.Background(), []string{"--config", cfg, "--supply", "120F", "--csv", csvPath, "--plot", plotPath}, &out, &errb)
	if err != nil {
		t.Fatalf("%v\n%s", err, errb.String())
	}
	if !strings.Contains(out.String(), "VAV-101") || !strings.Contains(out.String(), "loop HW-1") {
		t.Errorf("table:\n%s", out.String())
	}
	f, err := os.Open(csvPath)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil || len(recs) != 2 {
		t.Errorf("csv %v %q", err, recs)
	}
	if b, err := os.ReadFile(plotPath); err != nil || !bytes.Contains(b, []byte("<svg")) {
		t.Errorf("plot: %v", err)
	}
	out.Reset()
	if err := runAssess(context.Background(), []string{"--config", cfg, "--supply", "49C", "--si", "--json"}, &out, &errb); err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(strings.TrimSpace(out.String()), "{") {
		t.Errorf("json: %s", out.String())
	}
	for _, bad := range [][]string{{"--config", cfg}, {"--config", cfg, "--supply", "20F"}, {"--config", cfg, "--supply", "120F", "--load", "history"}} {
		if err := runAssess(context.Background(), bad, &out, &errb); err == nil {
			t.Errorf("%v: accepted", bad)
		}
	}
}
