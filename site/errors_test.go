package site

import (
	"errors"
	"strings"
	"testing"
)

// base is a small valid file; the error cases below edit one part of it.
// Line numbers in the cases refer to the edited text.
const base = `site:
  name: Test
  time_zone: America/Chicago
sources:
  - name: export
    kind: trendfile
    path: t.csv
    points:
      supply_air: {column: "{id} SAT", unit: degF}
      airflow: {column: "{id} AF", unit: cfm}
      discharge: {column: "{id} DAT", unit: degF}
      valve: {column: "{id} VLV", unit: "%"}
points_from: export
loops:
  - id: HW-1
    design_supply: 180 F
    branch_dp: 5 psi
ahus:
  - id: AHU-1
terminals:
  - id: VAV-1
    coil: {inlet: 8 in, rows: 2}
    valve: {cv: 1.0}
    airflow: {min: 150 cfm, cooling_max: 600 cfm, heating_max: 300 cfm}
`

func TestBaseLoads(t *testing.T) {
	s, err := Parse("base.yaml", []byte(base))
	if err != nil {
		t.Fatal(err)
	}
	tm := s.Terminals[0]
	if tm.Points.Discharge.Name != "VAV-1.DAT" || tm.Points.Discharge.Column != "VAV-1 DAT" || s.AHUs[0].SupplyAir.Name != "AHU-1.SAT" {
		t.Errorf("point names/columns: %+v %+v", tm.Points.Discharge, s.AHUs[0].SupplyAir)
	}
	if tm.AHU != "AHU-1" || tm.Loop != "HW-1" || s.TerminalIndex["VAV-1"] != 0 || s.AHUIndex["AHU-1"] != 0 || s.LoopIndex["HW-1"] != 0 {
		t.Errorf("references/indexes: %+v", tm)
	}
}

func TestErrors(t *testing.T) {
	cases := []struct {
		name      string
		from, to  string // replace from with to in base ("" from: append to)
		line, col int
		want      string
	}{
		{"unknown key", "    branch_dp: 5 psi\n", "    branch_dp: 5 psi\n    brnach_dp: 4 psi\n", 18, 5, `unknown key "brnach_dp" in loop; did you mean "branch_dp"?`},
		{"wrong unit", "branch_dp: 5 psi", "branch_dp: 5 cfm", 17, 16, `"5 cfm": "cfm" is a volume flow unit; expected a pressure`},
		{"missing unit", "design_supply: 180 F", "design_supply: 180", 16, 20, `"180": missing unit; expected a temperature with one of the units F, C, K`},
		{"unknown unit", "min: 150 cfm", "min: 150 cfmm", 24, 20, `unknown unit "cfmm"`},
		{"dangling AHU", "  - id: VAV-1\n", "  - id: VAV-1\n    ahu: AHU-9\n", 22, 10, `ahu: no AHU named "AHU-9"; defined: AHU-1`},
		{"dangling loop", "  - id: VAV-1\n", "  - id: VAV-1\n    loop: HW-7\n", 22, 11, `loop: no loop named "HW-7"`},
		{"dangling source", "points_from: export", "points_from: exprt", 13, 14, `no source named "exprt"; defined sources: export`},
		{"dangling template", "  - id: VAV-1\n", "  - id: VAV-1\n    template: vav-9\n", 22, 15, `no template named "vav-9"`},
		{"duplicate terminal", "", "  - {id: VAV-1, coil: {inlet: 8 in, rows: 2}, valve: {cv: 1}, airflow: {min: 1 cfm, cooling_max: 2 cfm, heating_max: 2 cfm}}\n", 25, 10, `duplicate terminal id "VAV-1" (first at line 21)`},
		{"id shared across kinds", "  - id: VAV-1\n", "  - id: AHU-1\n", 21, 9, `terminal id "AHU-1" is already used by the AHU at line 19`},
		{"missing required point", `      discharge: {column: "{id} DAT", unit: degF}` + "\n", "", 20, 5, "required point discharge (discharge air temperature) is missing"},
		{"missing SAT", `      supply_air: {column: "{id} SAT", unit: degF}` + "\n", "", 18, 5, "AHU AHU-1: required point supply_air"},
		{"impossible airflow", "min: 150 cfm", "min: 900 cfm", 24, 20, "min (900 cfm) exceeds cooling_max (600 cfm)"},
		{"negative airflow", "heating_max: 300 cfm", "heating_max: -3 cfm", 24, 64, "heating_max -3 cfm is impossible"},
		{"impossible supply", "design_supply: 180 F", "design_supply: 400 F", 16, 20, "outside 25 to 130 °C"},
		{"bad preset", "inlet: 8 in", "inlet: 11 in", 22, 19, "no preset for a 11 in inlet"},
		{"rows out of range", "rows: 2}", "rows: 9}", 22, 31, "rows: 9 is out of range; expected 1 to 4"},
		{"valve missing cv", "valve: {cv: 1.0}", "valve: {characteristic: linear}", 23, 12, `"cv" is required`},
		{"bad characteristic", "valve: {cv: 1.0}", "valve: {cv: 1.0, characteristic: quick}", 23, 38, `"quick" is not one of: equal-percentage, linear`},
		{"point unit dimension", `unit: cfm}`, `unit: degF}`, 10, 42, `unit: "degF" is a temperature unit; expected a volume flow unit`},
		{"point unit missing", `{column: "{id} DAT", unit: degF}`, `{column: "{id} DAT"}`, 11, 18, "unit is required"},
		{"unknown placeholder", `"{id} DAT"`, `"{ID} DAT"`, 11, 27, "unknown placeholder {ID}"},
		{"bad time zone", "America/Chicago", "America/Chicagoo", 3, 14, `time_zone "America/Chicagoo": expected an IANA zone name`},
		{"bad source kind", "kind: trendfile", "kind: csv", 6, 11, `kind "csv" is not one of: trendfile, bacnet, influx`},
		{"token in file", "points_from: export\n", "  - {name: db, kind: influx, url: \"http://127.0.0.1:8086\", org: o, bucket: b, token_env: T, token: abc}\npoints_from: export\n", 13, 100, "an API token never goes in this file"},
		{"decimal comma with comma", "path: t.csv\n", "path: t.csv\n    decimal_comma: true\n", 8, 20, "decimal_comma needs a delimiter other than"},
		{"long layout needs columns", "path: t.csv\n", "path: t.csv\n    layout: long\n", 5, 5, `"point_column" is required`},
		{"bacnet without device", "", "  - id: VAV-2\n    points: {airflow: {source: bas, bacnet: \"AI:1\", unit: cfm}}\n", 26, 45, "no device instance"},
		{"explicit point two kinds", "  - id: VAV-1\n", "  - id: VAV-1\n    points: {discharge: {column: x, fixed: 55 F}}\n", 22, 25, "give exactly one of column"},
		{"fixed wrong dimension", "  - id: VAV-1\n", "  - id: VAV-1\n    points: {zone_setpoint: 5 gpm}\n", 22, 29, `"gpm" is a volume flow unit; expected a temperature`},
		{"not a mapping", "  - id: VAV-1\n", "  - id: VAV-1\n    airflow: 300 cfm\n", 22, 14, "expected a mapping"},
		{"yaml syntax tab", "    path: t.csv\n", "\tpath: t.csv\n", 7, 1, "YAML indentation must use spaces, not tabs"},
		{"unknown top-level key", "ahus:\n", "ahu:\nahus:\n", 18, 1, `unknown key "ahu" in the file; did you mean "ahus"?`},
		{"duplicate key", "    branch_dp: 5 psi\n", "    branch_dp: 5 psi\n    branch_dp: 6 psi\n", 18, 5, `duplicate key "branch_dp" (first at line 17)`},
		{"ua and rated", "rows: 2}", "rows: 2, ua_multiplier: 1.2, rated: {capacity: 18 MBH, airflow: 300 cfm, entering_air: 55 F, water_flow: 1.5 gpm, entering_water: 180 F}}", 22, 49, "give ua_multiplier or rated, not both"},
		{"rated beyond the coil", "rows: 2}", "rows: 2, rated: {capacity: 900 MBH, airflow: 300 cfm, entering_air: 55 F, water_flow: 1.5 gpm, entering_water: 180 F}}", 22, 41, "cannot match this rated point"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			text := base
			if c.from == "" {
				text += c.to
			} else {
				if !strings.Contains(text, c.from) {
					t.Fatalf("base lacks %q", c.from)
				}
				text = strings.Replace(text, c.from, c.to, 1)
			}
			if strings.Contains(c.name, "bacnet without device") {
				text = strings.Replace(text, "points_from: export\n", "  - {name: bas, kind: bacnet}\npoints_from: export\n", 1)
				c.line++
			}
			_, err := Parse("f.yaml", []byte(text))
			var list ErrorList
			if !errors.As(err, &list) {
				t.Fatalf("error %v, want an ErrorList", err)
			}
			if testing.Verbose() && len(list) > 1 {
				t.Logf("%d errors:\n%v", len(list), err)
			}
			for _, e := range list {
				if e.Line == c.line && e.Col == c.col && strings.Contains(e.Msg, c.want) && e.File == "f.yaml" {
					return
				}
			}
			t.Errorf("want f.yaml:%d:%d: ...%s...\ngot:\n%v", c.line, c.col, c.want, err)
		})
	}
}

// All errors are reported, sorted by line, and a template's mistake once.
func TestErrorsCollectedSortedDeduplicated(t *testing.T) {
	text := strings.Replace(base, "terminals:\n", `templates:
  box:
    coil: {inlet: 8 in, rows: 2}
    valve: {cv: 1.0, rangeability: 1}
    airflow: {min: 150 cfm, cooling_max: 600 cfm, heating_max: 300 cmf}
terminals:
  - {id: VAV-2, template: box}
  - {id: VAV-3, template: box}
`, 1)
	text = strings.Replace(text, "branch_dp: 5 psi", "branch_dp: 5 pis", 1)
	_, err := Parse("f.yaml", []byte(text))
	var list ErrorList
	if !errors.As(err, &list) {
		t.Fatalf("want ErrorList, got %v", err)
	}
	var lines []int
	count := map[int]int{}
	for _, e := range list {
		lines = append(lines, e.Line)
		count[e.Line]++
	}
	for i := 1; i < len(lines); i++ {
		if lines[i] < lines[i-1] {
			t.Errorf("not sorted: %v", lines)
		}
	}
	// Line 17 (branch_dp), 23 (rangeability), 24 (heating_max): each once.
	for _, l := range []int{17, 23, 24} {
		if count[l] != 1 {
			t.Errorf("line %d reported %d times:\n%v", l, count[l], err)
		}
	}
}

func TestParseEmptyAndGarbage(t *testing.T) {
	for _, in := range []string{"", "   \n", "# only a comment\n", "- a\n- b\n", "site: 3\n", "[", "site:\n  name: [\n", "\x00\xff"} {
		_, err := Parse("g.yaml", []byte(in))
		var list ErrorList
		if !errors.As(err, &list) || len(list) == 0 {
			t.Errorf("%q: want errors, got %v", in, err)
			continue
		}
		if list[0].Line < 1 || list[0].Col < 1 || list[0].File != "g.yaml" {
			t.Errorf("%q: bad position %+v", in, list[0])
		}
	}
}

// TestGeometryFieldErrorNotRepeated: a bad field in a template's coil
// geometry is reported once, at the field, and not again as a whole-geometry
// error about the zero left in its place ("rows 0") for each terminal that
// uses the template.
func TestGeometryFieldErrorNotRepeated(t *testing.T) {
	geom := `coil:
      inlet: 10 in
      geometry: {face_width: 16 in, face_height: 12.5 in, rows: 7, circuits: 2, tubes_per_row: 10,
        tube: {od: 0.5 in, wall: 0.016 in}, fin: {fpi: 12, thickness: 0.006 in},
        transverse_pitch: 1.25 in, longitudinal_pitch: 1.083 in}`
	text := strings.Replace(base, "terminals:\n", "templates:\n  box:\n    "+geom+`
    valve: {cv: 1.0}
    airflow: {min: 150 cfm, cooling_max: 600 cfm, heating_max: 300 cfm}
terminals:
  - {id: VAV-2, template: box}
  - {id: VAV-3, template: box}
`, 1)
	_, err := Parse("f.yaml", []byte(text))
	var list ErrorList
	if !errors.As(err, &list) {
		t.Fatalf("want ErrorList, got %v", err)
	}
	if len(list) != 1 || !strings.Contains(list[0].Msg, "rows: 7") {
		t.Errorf("want one error, about rows 7; got %d:\n%v", len(list), err)
	}
}
