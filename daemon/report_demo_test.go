package daemon

import (
	"context"
	"encoding/csv"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"risewatch/internal/testenv"
	"risewatch/publish/report"
	"risewatch/rules"
	"risewatch/sim"
	"risewatch/site"
	"risewatch/store"
)

// TestWeeklyReportFromDemoCampus runs the daemon over one simulated week of
// the demo campus (ISO week 2025-W03, which the demo scenario starts on),
// builds that week's contractor report from the store, renders the PDF to
// PNG pages with pdftoppm and reads its text back with pdftotext: the pages
// exist, the site and every open fault are named with its weekly cost, and
// the leaking valves the simulator injected that week are on it.
func TestWeeklyReportFromDemoCampus(t *testing.T) {
	if testing.Short() {
		t.Skip("simulates and analyses a week of the demo campus")
	}
	pdftoppm := testenv.LookTool(t, "pdftoppm", "apt-get install poppler-utils")
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	cfgPath, data := simSite(t, 7)
	r := start(t, cfgPath)
	weekEndUTC := time.Date(2025, 1, 20, 5, 0, 0, 0, time.UTC) // Sun 19 Jan 23:00 site time (UTC−6)
	waitFor(t, 120*time.Second, "the week of history to be analysed", func() bool {
		pl := r.d.cur
		pl.mu.RLock()
		defer pl.mu.RUnlock()
		return !pl.prog.LastStep.Before(weekEndUTC)
	})
	r.stop(t)

	s, err := site.Load(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	st, err := store.Open(ctx, data, store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	start, end, err := report.ParseWeek("2025-W03", s.Location)
	if err != nil {
		t.Fatal(err)
	}
	in, err := ReportInput(ctx, st, s, nil, start, end, true)
	if err != nil {
		t.Fatal(err)
	}
	if len(in.Open) == 0 {
		t.Fatal("no open fault at the end of a week with injected faults")
	}
	rf, err := WriteReport(t.TempDir(), in)
	if err != nil {
		t.Fatal(err)
	}

	// Pages: summary, one per open fault, the terminal list.
	pngDir := t.TempDir()
	if out, err := exec.Command(pdftoppm, "-r", "30", "-png", rf.PDF, filepath.Join(pngDir, "p")).CombinedOutput(); err != nil {
		t.Fatalf("pdftoppm: %v\n%s", err, out)
	}
	pages, _ := filepath.Glob(filepath.Join(pngDir, "p-*.png"))
	if want := 2 + len(in.Open); len(pages) < want {
		t.Errorf("%d pages, want at least %d (summary, %d faults, terminal list)", len(pages), want, len(in.Open))
	}
	raw, err := exec.Command(pdftotext, rf.PDF, "-").Output()
	if err != nil {
		t.Fatal(err)
	}
	text := strings.Join(strings.Fields(string(raw)), " ")
	if !strings.Contains(text, "Weekly reheat coil report — "+s.Name) {
		t.Errorf("report does not name the site %q", s.Name)
	}
	for _, f := range in.Open {
		for _, want := range []string{f.Entity, f.Kind.String(), fmt.Sprintf("%.2f", f.Impact.WeeklyCost)} {
			if !strings.Contains(text, want) {
				t.Errorf("report text lacks %q (fault %s)", want, f.FaultID)
			}
		}
	}

	// The leaking valves the simulator injected during the week are reported.
	sc, _ := sim.DemoScenario()
	sc, _ = sc.With(7, 0)
	reported := map[string]bool{}
	for _, f := range append(append([]rules.Transition(nil), in.Open...), in.Opened...) {
		reported[f.Entity+"/"+f.Kind.String()] = true
	}
	leaks := 0
	for _, g := range sc.GroundTruth() {
		if g.Kind != "leaking-valve" || !g.Start.Before(end.Add(-24*time.Hour)) {
			continue
		}
		leaks++
		if !reported[g.Entity+"/leaking-valve"] {
			t.Errorf("injected leaking valve on %s (from %s) is not in the weekly report", g.Entity, g.Start.Format(time.RFC3339))
		}
	}
	if leaks == 0 {
		t.Fatal("the demo scenario injected no leaking valve in its first week; the test checks nothing")
	}

	// The CSV work list has one row per open fault, ranked by weekly cost.
	fh, err := os.Open(rf.CSV)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	cr := csv.NewReader(fh)
	cr.Comment = '#'
	rows, err := cr.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 1+len(in.Open) {
		t.Fatalf("CSV has %d rows, want header + %d", len(rows), len(in.Open))
	}
}

// TestReportWeekPicksFullerWeek: the scheduled report covers the full week
// before; the demo's first report covers the week in progress only once it
// holds at least half a week of history, else the week before (ISO 8601
// weeks from Monday 00:00 site time: 2025-W04 is 20-26 January 2025).
func TestReportWeekPicksFullerWeek(t *testing.T) {
	loc, err := time.LoadLocation("America/Chicago")
	if err != nil {
		t.Fatal(err)
	}
	w03 := time.Date(2025, 1, 13, 0, 0, 0, 0, loc)
	w04 := time.Date(2025, 1, 20, 0, 0, 0, 0, loc)
	for _, c := range []struct {
		at      time.Time
		current bool
		want    time.Time
	}{
		{w04.Add(6 * time.Hour), false, w03},     // Monday 06:00: the scheduled report of last week
		{w04.Add(80 * time.Hour), false, w03},    // Thursday: still last week
		{w04.Add(6 * time.Hour), true, w03},      // demo history ending Monday morning: last week
		{w04.Add(83 * time.Hour), true, w03},     // Thursday 11:00: 83 h of this week, less than half
		{w04.Add(84 * time.Hour), true, w04},     // Thursday noon: half the week
		{w04.Add(7*24*time.Hour - 1), true, w04}, // Sunday night: this week
	} {
		start, end := reportWeek(c.at, loc, c.current)
		if !start.Equal(c.want) || !end.Equal(c.want.AddDate(0, 0, 7)) {
			t.Errorf("reportWeek(%v, current=%v) = %v..%v, want the week from %v", c.at, c.current, start, end, c.want)
		}
	}
}

// TestReportUnitsAreTheReports: the weekly report takes its unit order and
// paper from its own settings; the dashboard's ip_units does not change it
// (the scheduled report had used either, `risewatch report` only its own).
func TestReportUnitsAreTheReports(t *testing.T) {
	c := &Config{Web: WebConfig{IP: true}}
	if ip, paper := c.ReportUnits(); ip || paper != "" {
		t.Errorf("dashboard in IP, report unset: ip %v, paper %q; want SI and the default paper", ip, paper)
	}
	c.Report.IP, c.Report.Paper = true, report.PaperA4
	if ip, paper := c.ReportUnits(); !ip || paper != report.PaperA4 {
		t.Errorf("report ip_units and paper a4: got %v, %q", ip, paper)
	}
}
