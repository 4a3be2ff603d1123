package report

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"risewatch/coilmodel"
	"risewatch/fdd"
	"risewatch/internal/testenv"
	"risewatch/rules"
	"risewatch/site"
	"risewatch/units"
)

func testSite() *site.Site {
	loc, _ := time.LoadLocation("America/Chicago")
	s := &site.Site{Name: "Larkspur Commons", Location: loc, Energy: site.EnergyPrices{Currency: "USD", HeatPerKWh: 0.045, CoolingPerKWh: 0.03}}
	mk := func(id string, inlet float64, rows int, loc string) site.Terminal {
		return site.Terminal{ID: id, AHU: "AHU-1", Loop: "HW-1", Zone: "Z-" + id[4:], Building: "North Hall", Location: loc, InletIn: inlet,
			Coil: coilmodel.Coil{Rows: rows, FaceWidthM: units.InToM(15), FaceHeightM: units.InToM(12.5), Fin: coilmodel.Fin{PerM: units.FPIToPerM(10)}}}
	}
	s.Terminals = []site.Terminal{mk("VAV-1-03", 8, 1, "room 114 corridor ceiling"), mk("VAV-1-07", 12, 2, "room 131 above door")}
	s.TerminalIndex = map[string]int{"VAV-1-03": 0, "VAV-1-07": 1}
	return s
}

func testInput() Input {
	s := testSite()
	start := time.Date(2026, 1, 12, 0, 0, 0, 0, s.Location)
	leak := rules.Transition{FaultID: "VAV-1-03/leaking-valve", Entity: "VAV-1-03", Kind: fdd.KindLeakingValve, To: rules.StateOpen,
		At: start.Add(30 * time.Hour), Since: start.Add(29 * time.Hour), Severity: 2, Confidence: 0.9, AHU: "AHU-1", Loop: "HW-1",
		Evidence: rules.Evidence{ObservedRiseK: 4.1, ExpectedRiseK: 0, ValveFrac: 0, AirflowM3s: 0.094, LeakFlowFrac: 0.07, UAFactor: math.NaN(), FlowFactor: math.NaN()},
		Impact:   rules.Impact{WastedHeatW: 470, AddedCoolingW: 470, WeeklyHeatKWh: 79, WeeklyCoolKWh: 79, WeeklyCost: 5.93},
		Message:  "Valve commanded closed, discharge 7.4 °F above supply.",
		Causes:   []string{"worn valve seat"}, Checks: []string{"override the valve closed and watch the discharge temperature"}}
	foul := rules.Transition{FaultID: "VAV-1-07/fouled-coil", Entity: "VAV-1-07", Kind: fdd.KindFouledCoil, To: rules.StateOpen,
		At: start.Add(80 * time.Hour), Since: start.Add(70 * time.Hour), Severity: 3, Confidence: 0.8, AHU: "AHU-1", Loop: "HW-1",
		Evidence: rules.Evidence{ObservedRiseK: 9.0, ExpectedRiseK: 13.5, SigmaK: 0.8, ValveFrac: 0.85, AirflowM3s: 0.2, UAFactor: 0.62, FlowFactor: 1.0},
		Impact:   rules.Impact{ShortfallW: 1080, WeeklyCost: 14.2},
		Message:  "Coil delivers 67 % of the expected rise at every valve position.",
		Causes:   []string{"dust on the fins", "scale in the tubes"}, Checks: []string{"inspect the upstream face of the coil"}}
	series := map[string][]Point{}
	for h := 0; h < 7*24; h++ {
		at := start.Add(time.Duration(h) * time.Hour)
		v := 0.5 + 0.5*math.Sin(float64(h)/6)
		series["VAV-1-07"] = append(series["VAV-1-07"], Point{At: at, ValveFrac: v, ExpectedRiseK: 14 * v, ObservedRiseK: 9 * v})
	}
	return Input{Site: s, WeekStart: start, WeekEnd: start.AddDate(0, 0, 7), Open: []rules.Transition{leak, foul},
		Opened: []rules.Transition{foul}, Series: series, IP: true, Generated: start.AddDate(0, 0, 7).Add(6 * time.Hour),
		Sections: []Section{{Title: "Low-temperature hot-water readiness", Header: []string{"Terminal", "Margin"}, Rows: [][]string{{"VAV-1-03", "+12 %"}}}}}
}

func TestCSVWorkListRankedByCost(t *testing.T) {
	var buf bytes.Buffer
	if err := WriteCSV(&buf, testInput()); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	recs[0][0] = strings.TrimPrefix(recs[0][0], "\ufeff")
	if len(recs) != 3 {
		t.Fatalf("%d rows, want header + 2", len(recs))
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	get := func(row int, name string) string {
		i, ok := col[name]
		if !ok {
			t.Fatalf("no column %s in %v", name, recs[0])
		}
		return recs[row][i]
	}
	if get(1, "terminal") != "VAV-1-07" || get(2, "terminal") != "VAV-1-03" {
		t.Errorf("not ranked by weekly cost: %v, %v", recs[1][:3], recs[2][:3])
	}
	if get(1, "weekly_cost_usd") != "14.20" || get(1, "rows") != "2" || get(1, "inlet_in") != "12" {
		t.Errorf("row 1 = %v", recs[1])
	}
	if !strings.Contains(get(2, "location"), "room 114") {
		t.Errorf("location missing: %v", recs[2])
	}
	// SI and IP side by side: a rise of 1 K is 1.8 °F; 1 therm is
	// 29.3071 kWh and 1 ton-hour 3.51685 kWh (NIST SP 811, B.8).
	for r := 1; r < len(recs); r++ {
		pairs := []struct {
			si, ip string
			per    float64 // SI units per IP unit
		}{
			{"observed_rise_k", "observed_rise_f", 1 / 1.8},
			{"expected_rise_k", "expected_rise_f", 1 / 1.8},
			{"weekly_heat_kwh", "weekly_heat_therm", 29.3071},
			{"weekly_cooling_kwh", "weekly_cooling_ton_h", 3.51685},
		}
		for _, p := range pairs {
			si, ip := get(r, p.si), get(r, p.ip)
			if si == "" && ip == "" {
				continue
			}
			a, err1 := strconv.ParseFloat(si, 64)
			b, err2 := strconv.ParseFloat(ip, 64)
			if err1 != nil || err2 != nil || math.Abs(b*p.per-a) > 0.01*math.Max(1, math.Abs(a)) {
				t.Errorf("row %d: %s %q and %s %q disagree", r, p.si, si, p.ip, ip)
			}
		}
	}
	if get(1, "observed_rise_f") == "" {
		t.Errorf("row 1: no observed rise in °F: %v", recs[1])
	}
}

func TestPDFPagesAndTextWithPoppler(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	pdftoppm := testenv.LookTool(t, "pdftoppm", "apt-get install poppler-utils")
	dir := t.TempDir()
	path := filepath.Join(dir, "week.pdf")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := WritePDF(f, testInput()); err != nil {
		t.Fatal(err)
	}
	f.Close()
	if out, err := exec.Command(pdftoppm, "-r", "40", "-png", path, filepath.Join(dir, "page")).CombinedOutput(); err != nil {
		t.Fatalf("pdftoppm: %v\n%s", err, out)
	}
	pages, _ := filepath.Glob(filepath.Join(dir, "page-*.png"))
	// summary, two fault pages, terminal list, one extra section
	if len(pages) < 5 {
		t.Fatalf("%d pages rendered, want at least 5", len(pages))
	}
	out, err := exec.Command(pdftotext, "-layout", path, "-").Output()
	if err != nil {
		t.Fatal(err)
	}
	text := string(out)
	for _, want := range []string{
		"Weekly reheat coil report — Larkspur Commons",
		"override the valve closed and watch the discharge temperature", // the summary table's check, wrapped whole
		"2 open fault(s), estimated USD 20.13 a week",
		"VAV-1-07", "fouled-coil", "leaking-valve",
		"Observed air temperature rise 16.2 °F (9.0 K), expected 24.3 °F (13.5 K)", // 9 K × 1.8 = 16.2 °F
		"Apparent coil UA 62 % of baseline",
		"Estimated leak flow 7 % of design",
		"override the valve closed",
		"room 131 above door",
		"Low-temperature hot-water readiness",
		"Advisory only", "scald",
	} {
		if !strings.Contains(strings.Join(strings.Fields(text), " "), strings.Join(strings.Fields(want), " ")) {
			t.Errorf("PDF text lacks %q", want)
		}
	}
	// Ranked: the fouled coil (USD 14.20) comes before the leak (USD 5.93).
	if !strings.Contains(text, "1. VAV-1-07") || strings.Index(text, "2. VAV-1-03") < strings.Index(text, "1. VAV-1-07") {
		t.Error("fault pages not ranked by weekly cost")
	}
}

func TestScheduleAndWeeks(t *testing.T) {
	loc, _ := time.LoadLocation("America/Chicago")
	s, err := ParseSchedule("", loc)
	if err != nil {
		t.Fatal(err)
	}
	// Wednesday 14 Jan 2026 → next Monday 19 Jan 06:00 Chicago.
	next := s.Next(time.Date(2026, 1, 14, 12, 0, 0, 0, loc))
	if want := time.Date(2026, 1, 19, 6, 0, 0, 0, loc); !next.Equal(want) {
		t.Errorf("next run %v, want %v", next, want)
	}
	if _, err := ParseSchedule("61 * * * *", loc); err == nil {
		t.Error("bad cron spec accepted")
	}
	// ISO 8601: 2026-W03 starts Monday 12 January 2026.
	st, en, err := ParseWeek("2026-W03", loc)
	if err != nil || !st.Equal(time.Date(2026, 1, 12, 0, 0, 0, 0, loc)) || en.Sub(st) != 7*24*time.Hour {
		t.Errorf("2026-W03 = %v..%v, %v", st, en, err)
	}
	st2, _, err := ParseWeek("2026-01-15", loc)
	if err != nil || !st2.Equal(st) {
		t.Errorf("2026-01-15 in week %v, %v", st2, err)
	}
	ps, _ := PreviousWeek(time.Date(2026, 1, 19, 6, 0, 0, 0, loc), loc)
	if !ps.Equal(st) {
		t.Errorf("previous week of Mon 19 Jan = %v", ps)
	}
	if _, _, err := ParseWeek("2026-W60", loc); err == nil {
		t.Error("week 60 accepted")
	}
}

// TestPDFLongTablesRepeatHeaderAndWrap: a work list longer than a page
// continues with its header row on every page, and its free-text column is
// wrapped, not cut: a technician reading the printed list gets every check
// whole.
func TestPDFLongTablesRepeatHeaderAndWrap(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	for _, ip := range []bool{true, false} { // Letter and A4
		in := testInput()
		in.IP = ip
		base := in.Open[1]
		in.Open, in.Opened, in.Series = nil, nil, nil
		const n = 70
		for i := 0; i < n; i++ {
			tr := base
			tr.Entity = fmt.Sprintf("VAV-9-%02d", i)
			tr.FaultID = tr.Entity + "/fouled-coil"
			tr.Impact.WeeklyCost = float64(n - i) // ranked in this order
			tr.Checks = []string{fmt.Sprintf("check %02d: inspect the upstream face of the coil for dust and lint, then comb the fins straight and clean them with a soft brush before retesting", i)}
			in.Open = append(in.Open, tr)
		}
		pages := pdfPages(t, pdftotext, in)
		seen, summary := 0, ""
		for p, page := range pages {
			if strings.Contains(page, "1. VAV-9-00") { // the first fault page: the table is over
				break
			}
			summary += page
			rows := strings.Count(page, "fouled-coil")
			if rows == 0 {
				continue
			}
			seen += rows
			if h, r := strings.Index(page, "Check first"), strings.Index(page, "fouled-coil"); h < 0 || h > r {
				t.Errorf("ip=%v page %d: table rows without the header row above them", ip, p+1)
			}
		}
		if seen != n {
			t.Errorf("ip=%v: %d summary rows found before the fault pages, want %d", ip, seen, n)
		}
		flat := strings.Join(strings.Fields(summary), " ")
		for i := 0; i < n; i++ {
			if want := strings.Join(strings.Fields(in.Open[i].Checks[0]), " "); !strings.Contains(flat, want) {
				t.Errorf("ip=%v: check %02d not whole in the summary table", ip, i)
				break
			}
		}
	}
}

// TestPDFHeadingsKeepWithWhatFollows: however long the list of faults
// opened this week, no page ends with a heading whose text is on the next.
func TestPDFHeadingsKeepWithWhatFollows(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	headings := map[string]bool{"Summary": true, "New this week": true, "Cleared this week": true,
		"Open faults, highest weekly cost first": true, "What was seen": true, "Evidence": true, "Likely cause": true, "Checks to make": true}
	for _, ip := range []bool{true, false} {
		for k := 0; k <= 48; k++ {
			in := testInput()
			in.IP, in.Series, in.Sections = ip, nil, nil
			in.Opened = nil
			for i := 0; i < k; i++ {
				tr := in.Open[i%2]
				tr.Entity = fmt.Sprintf("VAV-8-%02d", i)
				in.Opened = append(in.Opened, tr)
			}
			for p, page := range pdfPages(t, pdftotext, in) {
				var body []string
				for _, l := range strings.Split(page, "\n") {
					if l = strings.TrimSpace(l); l != "" && !strings.Contains(l, "risewatch weekly coil report ·") {
						body = append(body, l)
					}
				}
				if len(body) > 0 && headings[body[len(body)-1]] {
					t.Errorf("ip=%v, %d opened: page %d ends with the heading %q", ip, k, p+1, body[len(body)-1])
				}
			}
		}
	}
}

// pdfPages writes in as PDF and returns the text of each page (pdftotext
// -layout).
func pdfPages(t *testing.T, pdftotext string, in Input) []string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "week.pdf")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := WritePDF(f, in); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(pdftotext, "-layout", path, "-").Output()
	if err != nil {
		t.Fatal(err)
	}
	return strings.Split(string(out), "\f")
}

// TestWrapCellWholeWords: a long cell breaks at spaces into lines within
// the width; a word wider than the width is cut at whole characters; the
// words come out in order, none lost.
func TestWrapCellWholeWords(t *testing.T) {
	runes := func(s string) float64 { return float64(utf8.RuneCountInString(s)) }
	for _, c := range []struct {
		in   string
		w    float64
		want []string
	}{
		{"rise 8.8 °F", 20, []string{"rise 8.8 °F"}},
		{"check the valve; then the actuator", 16, []string{"check the valve;", "then the", "actuator"}},
		{"re-stroke  the   actuator", 12, []string{"re-stroke", "the actuator"}},
		{"°°°°°°°°°°°°°", 5, []string{"°°°°°", "°°°°°", "°°°"}},
		{"VAV-NORTHWING-2-107", 16, []string{"VAV-NORTHWING-", "2-107"}}, // after a hyphen, not inside 107
		{"-3.1 K", 3, []string{"-3.", "1 K"}},                            // a leading minus is not a break
		{"", 10, []string{""}},
	} {
		got := wrapCell(c.in, c.w, runes)
		if strings.Join(got, "|") != strings.Join(c.want, "|") {
			t.Errorf("wrapCell(%q, %v) = %q, want %q", c.in, c.w, got, c.want)
		}
		for _, l := range got {
			if runes(l) > c.w || !utf8.ValidString(l) {
				t.Errorf("wrapCell(%q, %v): line %q too wide or not UTF-8", c.in, c.w, l)
			}
		}
	}
}

// TestWeeklyImpactInBothUnits: the fault page's weekly energy is in therms
// and ton-hours beside kWh, IP first for an IP report: 79 kWh / 29.3071 kWh
// per therm = 2.70; 79 kWh / 3.51685 kWh per ton-hour = 22.5 (NIST SP 811,
// B.8).
func TestWeeklyImpactInBothUnits(t *testing.T) {
	in := testInput()
	for _, c := range []struct {
		ip   bool
		want string
	}{
		{true, "Weekly impact: 2.7 therm (79 kWh) heat, 22.5 ton-h (79 kWh) cooling, USD 5.93"},
		{false, "Weekly impact: 79 kWh (2.7 therm) heat, 79 kWh (22.5 ton-h) cooling, USD 5.93"},
	} {
		in.IP = c.ip
		lines := strings.Join(in.evidenceLines(in.Open[0]), "\n")
		if !strings.Contains(lines, c.want) {
			t.Errorf("IP %v: evidence lacks %q:\n%s", c.ip, c.want, lines)
		}
	}
	// A fault that wastes no energy (a fouled coil's cost is comfort) lists
	// only its cost.
	if lines := strings.Join(in.evidenceLines(in.Open[1]), "\n"); !strings.Contains(lines, "Weekly impact: USD 14.20; confidence 80 %") {
		t.Errorf("fouled coil: %s", lines)
	}
}

// TestDayTicksAtLocalMidnight: the week plot's time axis is labelled at the
// site's midnights ("Mon 12" ... "Sun 18") with unlabelled noons between.
func TestDayTicksAtLocalMidnight(t *testing.T) {
	loc := time.FixedZone("CST", -6*3600)
	start := time.Date(2026, 1, 12, 0, 0, 0, 0, loc)
	ticks := dayTicks{loc: loc}.Ticks(float64(start.Unix()), float64(start.Add(7*24*time.Hour-time.Hour).Unix()))
	var labels []string
	noons := 0
	for _, tk := range ticks {
		at := time.Unix(int64(tk.Value), 0).In(loc)
		switch {
		case tk.Label != "":
			if at.Hour() != 0 || at.Minute() != 0 {
				t.Errorf("labelled tick %s not at midnight", at)
			}
			labels = append(labels, tk.Label)
		case at.Hour() == 12:
			noons++
		default:
			t.Errorf("tick at %s", at)
		}
	}
	if got := strings.Join(labels, ","); got != "Mon 12,Tue 13,Wed 14,Thu 15,Fri 16,Sat 17,Sun 18" || noons != 7 {
		t.Errorf("labels %s, %d noons", got, noons)
	}
}

// TestPDFMessageInReportUnits: the fault page's "What was seen" is the
// rule's message with the report's units first.
func TestPDFMessageInReportUnits(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	for _, ip := range []bool{false, true} {
		in := testInput()
		in.IP, in.Series = ip, nil
		in.Open[0].Message, in.Open[0].MessageIP = "discharge 4.1 K (7.4 °F) above supply", "discharge 7.4 °F (4.1 K) above supply"
		want, not := in.Open[0].Message, in.Open[0].MessageIP
		if ip {
			want, not = not, want
		}
		text := strings.Join(strings.Fields(strings.Join(pdfPages(t, pdftotext, in), " ")), " ")
		if !strings.Contains(text, want) || strings.Contains(text, not) {
			t.Errorf("ip=%v: report lacks %q or has %q", ip, want, not)
		}
	}
}
