package sim

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"testing"
)

// TestSameSeedSameFiles: two runs of one scenario write identical files,
// byte for byte; another seed changes the trends.
func TestSameSeedSameFiles(t *testing.T) {
	sc := loadTest(t, testScenario)
	sc, err := sc.With(2, 0)
	if err != nil {
		t.Fatal(err)
	}
	write := func(sc *Scenario) string {
		dir := t.TempDir()
		s, err := New(sc)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := s.WriteOutputs(context.Background(), dir); err != nil {
			t.Fatal(err)
		}
		return dir
	}
	a, b := write(sc), write(sc)
	names := []string{GroundTruthFile, PeaksFile, filepath.Join(TrendDirName, "2025-01-13.csv"), filepath.Join(TrendDirName, "2025-01-14.csv")}
	for _, n := range names {
		x, err1 := os.ReadFile(filepath.Join(a, n))
		y, err2 := os.ReadFile(filepath.Join(b, n))
		if err1 != nil || err2 != nil {
			t.Fatalf("%s: %v %v", n, err1, err2)
		}
		if !bytes.Equal(x, y) {
			t.Errorf("%s differs between two runs with the same seed", n)
		}
	}
	// The site files differ only in the absolute trend path.
	sa, _ := os.ReadFile(filepath.Join(a, SiteFile))
	sb, _ := os.ReadFile(filepath.Join(b, SiteFile))
	if !bytes.Equal(bytes.ReplaceAll(sa, []byte(a), nil), bytes.ReplaceAll(sb, []byte(b), nil)) {
		t.Errorf("site files differ beyond the output path")
	}
	other, err := sc.With(0, sc.Seed+1)
	if err != nil {
		t.Fatal(err)
	}
	c := write(other)
	x, _ := os.ReadFile(filepath.Join(a, TrendDirName, "2025-01-13.csv"))
	y, _ := os.ReadFile(filepath.Join(c, TrendDirName, "2025-01-13.csv"))
	if bytes.Equal(x, y) {
		t.Errorf("a different seed gave the same trends")
	}
}

// TestDemoScenarioParses: the embedded demo has the campus the issue asks
// for (3 AHUs, a 180 °F and a 120 °F loop, about 60 terminals, 6–16 in, 1–2
// rows) and at least one fault of every kind.
func TestDemoScenarioParses(t *testing.T) {
	sc, err := DemoScenario()
	if err != nil {
		t.Fatal(err)
	}
	if len(sc.AHUs) != 3 || len(sc.Loops) != 2 {
		t.Fatalf("want 3 AHUs and 2 loops, got %d and %d", len(sc.AHUs), len(sc.Loops))
	}
	if sc.Loops[0].DesignSupplyF != 180 || sc.Loops[1].DesignSupplyF != 120 {
		t.Errorf("loop design supplies %.0f, %.0f °F: want 180 and 120", sc.Loops[0].DesignSupplyF, sc.Loops[1].DesignSupplyF)
	}
	n, inlets, rows := 0, map[float64]bool{}, map[int]bool{}
	for _, a := range sc.AHUs {
		for _, ts := range a.Terminals {
			n++
			inlets[ts.InletIn] = true
			rows[ts.Rows] = true
		}
	}
	if n < 50 || n > 70 || len(inlets) < 5 || !rows[1] || !rows[2] {
		t.Errorf("%d terminals, inlets %v, rows %v", n, inlets, rows)
	}
	kinds := map[string]bool{}
	for _, f := range sc.Faults {
		kinds[f.Kind] = true
	}
	for _, k := range FaultKinds {
		if !kinds[k] {
			t.Errorf("demo has no %s fault", k)
		}
	}
}

func TestScenarioErrorsNameTheLine(t *testing.T) {
	bad := testScenario + "  - {target: T-NOPE, kind: leaking-valve, severity: 0.1}\n"
	_, err := ParseScenario([]byte(bad), "bad.yaml")
	if err == nil || !bytes.Contains([]byte(err.Error()), []byte("bad.yaml:")) {
		t.Fatalf("want a file:line error, got %v", err)
	}
	_, err = ParseScenario([]byte(testScenario+"bogus_key: 1\n"), "bad.yaml")
	if err == nil {
		t.Fatal("unknown key accepted")
	}
}

func FuzzParseScenario(f *testing.F) {
	f.Add([]byte(testScenario))
	f.Add(DemoYAML())
	f.Add([]byte("loops: [{id: A}]\nahus: [{id: B, loop: A, terminals: [{id: C, inlet_in: 8}]}]\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		sc, err := ParseScenario(b, "fuzz.yaml")
		if err != nil {
			return
		}
		if sc.Days > 2 {
			return
		}
		if _, err := New(sc); err != nil {
			return
		}
	})
}
