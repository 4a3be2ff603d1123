package report

import (
	"bytes"
	"encoding/csv"
	"strconv"
	"strings"
	"testing"
)

// TestCSVOpensInSpreadsheet: the work list opens in a spreadsheet as it
// is: a UTF-8 byte order mark (without it a double-clicked file shows "°F"
// as "Â°F"), the header on the first line, one row per fault with as many
// cells as the header, every column that names a unit holding a bare number,
// the checks numbered (a check may hold a semicolon of its own) and the
// advisory with its hot-water warning on every row.
func TestCSVOpensInSpreadsheet(t *testing.T) {
	in := testInput()
	in.Open[0].Checks = []string{"check the actuator reaches its closed end stop; re-stroke it", "replace the cartridge"}
	var buf bytes.Buffer
	if err := WriteCSV(&buf, in); err != nil {
		t.Fatal(err)
	}
	raw := buf.String()
	if !strings.HasPrefix(raw, "\ufeffrank,terminal,") {
		t.Fatalf("CSV does not start with the byte order mark and the header: %.60q", raw)
	}
	r := csv.NewReader(strings.NewReader(strings.TrimPrefix(raw, "\ufeff")))
	r.FieldsPerRecord = 0 // every row as wide as the header
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 1+len(in.Open) {
		t.Fatalf("%d rows, want header + %d faults", len(recs), len(in.Open))
	}
	numeric := func(name string) bool {
		for _, suf := range []string{"_k", "_f", "_kwh", "_therm", "_ton_h", "_pct", "_in", "_usd"} {
			if strings.HasSuffix(name, suf) {
				return true
			}
		}
		return name == "rank" || name == "severity" || name == "rows" || name == "fpi"
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
		if h != strings.ToLower(h) || strings.ContainsAny(h, " ()°%") {
			t.Errorf("column name %q: want lower case with the unit as a suffix", h)
		}
	}
	for _, name := range []string{"inlet_in", "face_in", "face_mm", "oversized_coil", "state", "advisory"} {
		if _, ok := col[name]; !ok {
			t.Errorf("no column %s in %v", name, recs[0])
		}
	}
	for r, row := range recs[1:] {
		for i, cell := range row {
			if name := recs[0][i]; numeric(name) && name != "face_in" && cell != "" {
				if _, err := strconv.ParseFloat(cell, 64); err != nil {
					t.Errorf("row %d: %s = %q is not a number", r+1, name, cell)
				}
			}
		}
		if a := row[col["advisory"]]; a != Advisory || !strings.Contains(a, "scald") {
			t.Errorf("row %d: advisory %q", r+1, a)
		}
	}
	leak := recs[2] // USD 5.93, ranked second
	if got, want := leak[col["checks"]], "1. check the actuator reaches its closed end stop; re-stroke it; 2. replace the cartridge"; got != want {
		t.Errorf("checks = %q, want %q", got, want)
	}
	if leak[col["face_in"]] != "15.0 x 12.5" || leak[col["face_mm"]] != "381 x 318" || leak[col["oversized_coil"]] != "no" || leak[col["state"]] != "open" {
		t.Errorf("coil or state cells: %v", leak)
	}
}

// TestCSVUnitOrderFollowsReport: each quantity's SI and IP columns stand
// side by side, the IP one first in an IP report and the SI one first
// otherwise, with the values under their own names (9 K = 16.2 °F).
func TestCSVUnitOrderFollowsReport(t *testing.T) {
	for _, ip := range []bool{true, false} {
		in := testInput()
		in.IP = ip
		var buf bytes.Buffer
		if err := WriteCSV(&buf, in); err != nil {
			t.Fatal(err)
		}
		recs, err := csv.NewReader(strings.NewReader(strings.TrimPrefix(buf.String(), "\ufeff"))).ReadAll()
		if err != nil {
			t.Fatal(err)
		}
		col := map[string]int{}
		for i, h := range recs[0] {
			col[h] = i
		}
		for _, p := range csvPairs {
			si, imp := col[p[0]], col[p[1]]
			if ip && imp != si-1 || !ip && imp != si+1 {
				t.Errorf("ip=%v: %s at %d, %s at %d", ip, p[0], si, p[1], imp)
			}
		}
		if recs[1][col["observed_rise_k"]] != "9.00" || recs[1][col["observed_rise_f"]] != "16.20" || recs[1][col["face_in"]] != "15.0 x 12.5" {
			t.Errorf("ip=%v: values not under their names: %v", ip, recs[1])
		}
	}
}
