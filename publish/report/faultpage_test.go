package report

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"risewatch/fdd"
	"risewatch/internal/testenv"
	"risewatch/rules"
	"risewatch/site"
)

// TestEvidenceFactorBeyondModel: an apparent water flow the fit puts at
// millions of percent (a coil with no rise at full command) is named as no
// estimate, not printed as a measurement; a plausible one is printed.
func TestEvidenceFactorBeyondModel(t *testing.T) {
	in := testInput()
	tr := in.Open[1]
	tr.Evidence.FlowFactor, tr.Evidence.UAFactor = 63323.94, 0.07
	lines := strings.Join(in.evidenceLines(tr), "\n")
	if strings.Contains(lines, "6332394") || !strings.Contains(lines, "Apparent water flow: no estimate") {
		t.Errorf("flow factor 63323.94:\n%s", lines)
	}
	if !strings.Contains(lines, "Apparent coil UA 7 % of baseline") {
		t.Errorf("UA factor 0.07:\n%s", lines)
	}
	tr.Evidence.FlowFactor = 1.39
	if lines := strings.Join(in.evidenceLines(tr), "\n"); !strings.Contains(lines, "Apparent water flow 139 % of expected") {
		t.Errorf("flow factor 1.39:\n%s", lines)
	}
}

// TestWeeklyImpactShortfallAndHours: a fault whose cost is comfort (a
// fouled coil, USD 0.00) says how much heat the zone went short of, in both
// units (130 kWh / 29.3071 kWh per therm = 4.4 therm, NIST SP 811 B.8), and
// the weekly figures name the heating hours they assume.
func TestWeeklyImpactShortfallAndHours(t *testing.T) {
	in := testInput()
	tr := in.Open[1]
	tr.Impact.WeeklyCost, tr.Impact.WeeklyShortfallKWh, tr.Impact.OperatingHoursPerWeek = 0, 130, 60
	line := in.evidenceLines(tr)[len(in.evidenceLines(tr))-1]
	for _, want := range []string{"4.4 therm (130 kWh) heat short of the zone (comfort, not costed)", "USD 0.00", "at 60 h of heating operation a week"} {
		if !strings.Contains(line, want) {
			t.Errorf("impact line lacks %q: %s", want, line)
		}
	}
}

// TestFaultPagesStatusWarningAndData: every fault page says since when the
// condition holds, its state (acknowledged by whom) and when its evidence
// was recorded; carries the hot-water warning above its checks (a page may
// go to site alone); names the rule's title; and a terminal with no data in
// the week says why it has no plot. The coil-data table keeps an oversized
// coil's inlet whole.
func TestFaultPagesStatusWarningAndData(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	for _, ip := range []bool{true, false} {
		in := testInput()
		in.IP = ip
		in.Site.Terminals[1].InletIn, in.Site.Terminals[1].Oversized = 14, true
		in.Open[0].Title = "Reheat valve passing water while closed"
		in.Open[1].To, in.Open[1].AckedBy = rules.StateAcked, "R. Okafor"
		in.Open[1].AckedAt = in.WeekStart.Add(100 * time.Hour)
		pages := pdfPages(t, pdftotext, in)
		flat := func(s string) string { return strings.Join(strings.Fields(s), " ") }
		var leak, foul, coil string
		for _, p := range pages {
			switch {
			case strings.Contains(p, "VAV-1-03 — leaking-valve"):
				leak = flat(p)
			case strings.Contains(p, "VAV-1-07 — fouled-coil"):
				foul = flat(p)
			case strings.Contains(p, "Terminals with open faults"):
				coil = p
			}
		}
		if leak == "" || foul == "" || coil == "" {
			t.Fatalf("ip=%v: fault or coil-data pages missing", ip)
		}
		for name, c := range map[string]struct{ page, want string }{
			"leak status": {leak, "Condition since Tue 13 Jan 2026 05:00; open. Evidence as recorded Tue 13 Jan 2026 06:00."},
			"foul status": {foul, "Condition since Wed 14 Jan 2026 22:00; acknowledged by R. Okafor Fri 16 Jan 2026 04:00. Evidence as recorded Thu 15 Jan 2026 08:00."},
			"title":       {leak, "Reheat valve passing water while closed"},
			"no plot":     {leak, "No plot: no evidence was recorded for VAV-1-03 during this week"},
		} {
			if !strings.Contains(c.page, c.want) {
				t.Errorf("ip=%v %s: page lacks %q:\n%s", ip, name, c.want, c.page)
			}
		}
		for name, f := range map[string]struct {
			page  string
			first string
		}{"leak": {leak, in.Open[0].Checks[0]}, "foul": {foul, in.Open[1].Checks[0]}} {
			page := f.page
			h, w, chk := strings.Index(page, "Checks to make"), strings.Index(page, flat(CheckWarning)), strings.Index(page, "1. "+f.first)
			if h < 0 || w < h || chk < w {
				t.Errorf("ip=%v %s: no hot-water warning between the heading and the checks:\n%s", ip, name, page)
			}
		}
		if strings.Contains(foul, "No plot") {
			t.Errorf("ip=%v: the terminal with a week of data says it has no plot", ip)
		}
		if !strings.Contains(coil, "14 in (oversized coil)") {
			t.Errorf("ip=%v: coil-data table cuts the oversized coil's inlet:\n%s", ip, coil)
		}
	}
}

// TestPDFNoTextPastMargins: no word on any page runs past the side
// margins (10 mm) on A4 or Letter, with a readiness-like section whose
// eight headings include a long one ("First option that meets"), in a
// table sized to what its columns hold (pdftotext -bbox word boxes).
func TestPDFNoTextPastMargins(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	for _, ip := range []bool{true, false} {
		in := testInput()
		in.IP = ip
		sec := Section{Title: "Low-temperature hot-water readiness at 120.0 °F supply",
			Header: []string{"Terminal", "Loop", "Status", "Load MBH", "Capacity MBH", "Margin", "Min supply °F", "First option that meets"}}
		for i := 0; i < 30; i++ {
			sec.Rows = append(sec.Rows, []string{fmt.Sprintf("VAV-Q-2%02d", i), "HW-1", "meets-low-dt", "14.7", "9.0", "-39 %", "158.1", "12 fins per inch"})
		}
		in.Sections = []Section{sec}
		path := filepath.Join(t.TempDir(), "week.pdf")
		f, err := os.Create(path)
		if err != nil {
			t.Fatal(err)
		}
		if err := WritePDF(f, in); err != nil {
			t.Fatal(err)
		}
		f.Close()
		out, err := exec.Command(pdftotext, "-bbox", path, "-").Output()
		if err != nil {
			t.Fatal(err)
		}
		page := regexp.MustCompile(`<page width="([0-9.]+)"`)
		word := regexp.MustCompile(`<word xMin="([0-9.]+)" yMin="[0-9.]+" xMax="([0-9.]+)" yMax="[0-9.]+">([^<]*)</word>`)
		const margin = 10 / 25.4 * 72 // pt
		pageW, words := 0.0, 0
		for _, line := range strings.Split(string(out), "\n") {
			if m := page.FindStringSubmatch(line); m != nil {
				pageW, _ = strconv.ParseFloat(m[1], 64)
			}
			if m := word.FindStringSubmatch(line); m != nil {
				words++
				x0, _ := strconv.ParseFloat(m[1], 64)
				x1, _ := strconv.ParseFloat(m[2], 64)
				if x0 < margin-1 || x1 > pageW-margin+1 {
					t.Errorf("ip=%v: %q at x %.1f-%.1f pt runs past a margin of the %.1f pt page", ip, m[3], x0, x1, pageW)
				}
			}
		}
		if words < 200 {
			t.Fatalf("ip=%v: only %d words read", ip, words)
		}
	}
}

// TestPDFNumberKeepsItsUnit: no printed line ends between a number and its
// unit ("5" / "°F (3 K)"), or between a currency code or "±" and its
// number, in a paragraph or a table's wrapped column, whatever the line
// lengths; text that is not a quantity still wraps.
func TestPDFNumberKeepsItsUnit(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	var msg []string
	for i := 0; i < 60; i++ {
		q := []string{"5 °F (3 K)", "20.4 MBH (5.98 kW)", "USD 12.40", "± 3.0 °F", "61 %", "584 cfm (275.6 L/s)", "2.3 h"}[i%7]
		msg = append(msg, strings.Repeat("w", 1+i%9), q)
	}
	for _, ip := range []bool{true, false} {
		in := testInput()
		in.IP, in.Series = ip, nil
		in.Open[0].Message, in.Open[0].MessageIP = strings.Join(msg, " "), strings.Join(msg, " ")
		in.Opened = []rules.Transition{in.Open[0]}
		lines := 0
		for _, page := range pdfPages(t, pdftotext, in) {
			for _, l := range strings.Split(page, "\n") {
				f := strings.Fields(l)
				if len(f) == 0 || !strings.Contains(l, "www") {
					continue
				}
				lines++
				first, last := f[0], f[len(f)-1]
				switch strings.TrimRight(first, ")") {
				case "°F", "K", "MBH", "kW", "%", "cfm", "L/s", "h":
					t.Errorf("ip=%v: a line starts with the unit %q: %q", ip, first, l)
				}
				if last == "USD" || last == "±" {
					t.Errorf("ip=%v: a line ends with %q: %q", ip, last, l)
				}
			}
		}
		if lines < 20 {
			t.Fatalf("ip=%v: the long message gave only %d lines", ip, lines)
		}
	}
}

// TestLoopFaultPageNamesTheLoop: a fault of a hot-water loop (a cold loop)
// has no box or coil: its page describes the loop, with its design supply
// temperature in both units (82.2 °C = 180.0 °F) and the terminals it
// serves, instead of a row of dashes for a box that does not exist.
func TestLoopFaultPageNamesTheLoop(t *testing.T) {
	in := testInput()
	in.Site.Loops = []site.Loop{{ID: "HW-1", DesignSupplyC: 82.2, DesignDeltaK: 11.1}}
	in.Site.LoopIndex = map[string]int{"HW-1": 0}
	cold := rules.Transition{FaultID: "HW-1/cold-loop", Entity: "HW-1", EntityKind: rules.EntityLoop, Kind: fdd.KindColdLoop,
		To: rules.StateOpen, At: in.WeekStart.Add(50 * time.Hour), Loop: "HW-1", Confidence: 0.9}
	for _, c := range []struct {
		ip   bool
		want string
	}{
		{true, "Hot-water loop HW-1, design supply 180.0 °F (82.2 °C), design ΔT 20.0 °F (11.1 K); it serves 2 terminal(s)."},
		{false, "Hot-water loop HW-1, design supply 82.2 °C (180.0 °F), design ΔT 11.1 K (20.0 °F); it serves 2 terminal(s)."},
	} {
		in.IP = c.ip
		if got := in.placeLine(cold); !strings.Contains(got, c.want) || strings.Contains(got, "Box inlet") {
			t.Errorf("ip=%v: %q, want %q", c.ip, got, c.want)
		}
	}
	if got := in.placeLine(in.Open[0]); !strings.HasPrefix(got, "Box inlet 8 in, 1 row(s), 10 FPI") {
		t.Errorf("terminal fault: %q", got)
	}
	// On the printed page too.
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	in.IP, in.Series, in.Open = false, nil, []rules.Transition{cold}
	for _, page := range pdfPages(t, pdftotext, in) {
		if flat := strings.Join(strings.Fields(page), " "); strings.Contains(flat, "1. HW-1 — cold-loop") {
			if !strings.Contains(flat, "Hot-water loop HW-1, design supply 82.2 °C") || strings.Contains(flat, "Box inlet") {
				t.Errorf("loop fault page:\n%s", flat)
			}
			return
		}
	}
	t.Error("no page for the loop fault")
}

// TestPDFContinuedTablesNameTheirSection: a page that a table continues
// on starts with the table's heading marked "(continued)", so a printed
// page on its own says which list it is.
func TestPDFContinuedTablesNameTheirSection(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	in := testInput()
	in.Series = nil
	sec := Section{Title: "Low-temperature hot-water readiness at 120.0 °F supply", Header: []string{"Terminal", "Status"}}
	for i := 0; i < 120; i++ {
		sec.Rows = append(sec.Rows, []string{fmt.Sprintf("VAV-Q-%03d", i), "short"})
	}
	in.Sections = []Section{sec}
	pages := pdfPages(t, pdftotext, in)
	cont := 0
	for _, p := range pages {
		flat := strings.Join(strings.Fields(p), " ")
		if strings.Contains(flat, "VAV-Q-") && !strings.Contains(flat, "VAV-Q-000") {
			cont++
			if !strings.HasPrefix(flat, sec.Title+" (continued) Terminal Status") {
				t.Errorf("continuation page does not start with the section heading: %.120s", flat)
			}
		}
	}
	if cont == 0 {
		t.Fatal("the 120-row table did not continue on another page")
	}
}

// TestPDFLongTerminalIDWhole: a terminal ID longer than its table column
// wraps (after its hyphens) instead of being cut, in the summary and in the
// coil-data table: "VAV-NORTHWING-2-107" and "...-2-108" stay told apart.
func TestPDFLongTerminalIDWhole(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	for _, ip := range []bool{true, false} {
		in := testInput()
		in.IP, in.Series = ip, nil
		const id = "VAV-NORTHWING-2-107"
		in.Site.Terminals[1].ID = id
		in.Site.TerminalIndex = map[string]int{"VAV-1-03": 0, id: 1}
		in.Open[1].Entity, in.Opened = id, nil
		for _, p := range pdfPages(t, pdftotext, in) {
			if !strings.Contains(p, "Open faults, highest weekly cost first") && !strings.Contains(p, "coil data") {
				continue
			}
			if strings.Contains(p, "…") || !strings.Contains(p, "NORTHWING-") || !strings.Contains(p, "2-107") {
				t.Errorf("ip=%v: terminal ID cut or lost:\n%s", ip, p)
			}
		}
	}
}

// TestPDFSummaryCostsWithCurrency: the summary table writes each weekly
// cost as the dashboard and e-mail do, currency first ("USD 14.20").
func TestPDFSummaryCostsWithCurrency(t *testing.T) {
	pdftotext := testenv.LookTool(t, "pdftotext", "apt-get install poppler-utils")
	in := testInput()
	in.Series = nil
	first, rows := pdfPages(t, pdftotext, in)[0], 0
	for _, l := range strings.Split(first, "\n") {
		f := strings.Fields(l)
		if len(f) > 2 && (f[1] == "VAV-1-07" || f[1] == "VAV-1-03") {
			rows++
			want := map[string]string{"VAV-1-07": "USD 14.20", "VAV-1-03": "USD 5.93"}[f[1]]
			if !strings.Contains(strings.Join(f, " "), want) {
				t.Errorf("summary row %q lacks %q", l, want)
			}
		}
	}
	if rows != 2 {
		t.Errorf("%d summary rows found, want 2:\n%s", rows, first)
	}
}
