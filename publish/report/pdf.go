package report

import (
	"bytes"
	"fmt"
	"io"
	"regexp"
	"strings"

	"github.com/go-pdf/fpdf"

	"risewatch/rules"
)

// WritePDF writes the weekly report as PDF, portrait, on in.Paper: by
// default Letter when the report uses IP units (North American sites print
// on Letter) and A4 otherwise.
func WritePDF(w io.Writer, in Input) error {
	size := "A4"
	switch in.Paper {
	case PaperLetter:
		size = "Letter"
	case PaperA4:
	case "":
		if in.IP {
			size = "Letter"
		}
	default:
		return fmt.Errorf("report: paper %q: want %s or %s", in.Paper, PaperLetter, PaperA4)
	}
	pdf := fpdf.New("P", "mm", size, "")
	pdf.SetTitle("risewatch weekly coil report", true)
	pdf.SetCreator("risewatch", true)
	pdf.SetAutoPageBreak(true, 15)
	pdf.AliasNbPages("{nb}")
	cp1252 := pdf.UnicodeTranslatorFromDescriptor("") // cp1252 covers °, ±, ³, – and the no-break space
	// Every text goes through keepUnits, so no line ends between a number
	// and its unit ("5" / "°F (3 K)") or its currency.
	tr := func(s string) string { return cp1252(keepUnits(s)) }
	loc := in.loc()
	siteName := "site"
	if in.Site != nil && in.Site.Name != "" {
		siteName = in.Site.Name
	}
	week := fmt.Sprintf("%s – %s", in.WeekStart.In(loc).Format("Mon 2 Jan 2006"), in.WeekEnd.Add(-1).In(loc).Format("Mon 2 Jan 2006"))
	pdf.SetFooterFunc(func() {
		pdf.SetY(-12)
		pdf.SetFont("Helvetica", "I", 8)
		pdf.CellFormat(0, 5, tr(fmt.Sprintf("risewatch weekly coil report · %s · %s · page %d of {nb}", siteName, week, pdf.PageNo())), "", 0, "C", false, 0, "")
	})
	pageW, pageH := pdf.GetPageSize()
	lm, _, rm, _ := pdf.GetMargins()
	bodyW := pageW - lm - rm

	bottom := pageH - 15 // the automatic page break's margin (SetAutoPageBreak above)
	width := func(s string) float64 { return pdf.GetStringWidth(tr(s)) }
	// room starts a new page unless h mm fit above the bottom margin: a
	// heading keeps with what follows it, a table row with itself.
	room := func(h float64) {
		if pdf.GetY()+h > bottom {
			pdf.AddPage()
		}
	}

	// heading is the latest h1 or h2: a table that continues on a new page
	// repeats it, marked "(continued)", above its header row.
	heading := ""
	h1 := func(s string) {
		heading = s
		pdf.SetFont("Helvetica", "B", 15)
		pdf.MultiCell(0, 8, tr(s), "", "L", false)
	}
	h2 := func(s string) {
		heading = s
		room(2 + 6 + 2*4.6) // the heading and two lines under it
		pdf.Ln(2)
		pdf.SetFont("Helvetica", "B", 12)
		pdf.MultiCell(0, 6, tr(s), "", "L", false)
	}
	para := func(s string) {
		pdf.SetFont("Helvetica", "", 9.5)
		pdf.MultiCell(0, 4.6, tr(s), "", "L", false)
	}
	// notice draws a boxed, shaded safety or advisory text.
	notice := func(s string) {
		pdf.SetFillColor(255, 244, 214)
		pdf.SetFont("Helvetica", "", 8.5)
		pdf.MultiCell(0, 4.2, tr(s), "1", "L", true)
		pdf.Ln(1)
	}
	// table draws a ruled table whose cells wrap within their columns
	// (wrapCell): the free text of the last one (a check, a note, a
	// location) and a terminal ID or other cell too long for its column
	// alike, so nothing is cut. A row never splits across pages, and a page
	// the table continues on starts with the header row again.
	table := func(header []string, widths []float64, rows [][]string) {
		const minHeadH, lineH, padH = 6.0, 3.8, 1.6
		pdf.SetFont("Helvetica", "", 8.5)
		cells := make([][][]string, len(rows))
		heights := make([]float64, len(rows))
		for r, row := range rows {
			cells[r] = make([][]string, len(header))
			n := 1
			for i := range header {
				txt := ""
				if i < len(row) {
					txt = keepUnits(row[i])
				}
				cells[r][i] = wrapCell(txt, widths[i]-1.5, width)
				n = max(n, len(cells[r][i]))
			}
			heights[r] = float64(n)*lineH + padH
		}
		// The header cells wrap within their columns too, so a long
		// heading stays inside its box and the table.
		pdf.SetFont("Helvetica", "B", 8.5)
		heads := make([][]string, len(header))
		headH := minHeadH
		for i, h := range header {
			heads[i] = wrapCell(keepUnits(h), widths[i]-1.5, width)
			headH = max(headH, float64(len(heads[i]))*lineH+padH)
		}
		pdf.SetFont("Helvetica", "", 8.5)
		head := func() {
			pdf.SetFont("Helvetica", "B", 8.5)
			pdf.SetFillColor(225, 232, 240)
			x, y := lm, pdf.GetY()
			for i := range header {
				pdf.Rect(x, y, widths[i], headH, "FD")
				for k, line := range heads[i] {
					pdf.SetXY(x, y+padH/2+float64(k)*lineH)
					pdf.CellFormat(widths[i], lineH, tr(line), "", 0, "L", false, 0, "")
				}
				x += widths[i]
			}
			pdf.SetXY(lm, y+headH)
			pdf.SetFont("Helvetica", "", 8.5)
		}
		first := 0.0
		if len(rows) > 0 {
			first = heights[0]
		}
		room(headH + first)
		head()
		for r := range rows {
			if pdf.GetY()+heights[r] > bottom {
				pdf.AddPage()
				if heading != "" {
					pdf.SetFont("Helvetica", "B", 10)
					pdf.MultiCell(0, 5, tr(heading+" (continued)"), "", "L", false)
				}
				head()
			}
			x, y := lm, pdf.GetY()
			for i := range header {
				pdf.Rect(x, y, widths[i], heights[r], "D")
				for k, line := range cells[r][i] {
					pdf.SetXY(x, y+padH/2+float64(k)*lineH)
					pdf.CellFormat(widths[i], lineH, tr(line), "", 0, "L", false, 0, "")
				}
				x += widths[i]
			}
			pdf.SetXY(lm, y+heights[r])
		}
	}
	scale := func(ws []float64) []float64 {
		sum := 0.0
		for _, x := range ws {
			sum += x
		}
		out := make([]float64, len(ws))
		for i, x := range ws {
			out[i] = x * bodyW / sum
		}
		return out
	}

	// Page 1: summary.
	pdf.AddPage()
	h1("Weekly reheat coil report — " + siteName)
	para("Week " + week + ". Generated " + in.Generated.In(loc).Format("Mon 2 Jan 2006 15:04 MST") + ".")
	pdf.Ln(1)
	notice(Advisory)
	open := ranked(in.Open)
	total := 0.0
	for _, t := range open {
		total += t.Impact.WeeklyCost
	}
	h2("Summary")
	para(fmt.Sprintf("%d open fault(s), estimated %s %.2f a week. %d opened and %d cleared this week.",
		len(open), in.currency(), total, len(in.Opened), len(in.Cleared)))

	h2("Open faults, highest weekly cost first")
	var rows [][]string
	for i, t := range open {
		since := t.Since
		if since.IsZero() {
			since = t.At
		}
		rows = append(rows, []string{fmt.Sprint(i + 1), t.Entity, t.Kind.String(), since.In(loc).Format("Jan 2 15:04"),
			fmt.Sprintf("%s %.2f", in.currency(), t.Impact.WeeklyCost), fmt.Sprintf("%.0f %%", t.Confidence*100), firstOr(t.Checks, "")})
	}
	if len(rows) == 0 {
		para("No open faults.")
	} else {
		table([]string{"#", "Terminal", "Fault", "Since", "Cost/week", "Conf.", "Check first"}, scale([]float64{6, 18, 22, 20, 18, 11, 60}), rows)
	}
	listChanges := func(title string, ts []rules.Transition) {
		h2(title)
		if len(ts) == 0 {
			para("None.")
			return
		}
		var rs [][]string
		for _, t := range ts {
			rs = append(rs, []string{t.Entity, t.Kind.String(), t.At.In(loc).Format("Mon Jan 2 15:04"), t.MessageIn(in.IP)})
		}
		table([]string{"Terminal", "Fault", "When", "Note"}, scale([]float64{18, 22, 24, 90}), rs)
	}
	listChanges("New this week", in.Opened)
	listChanges("Cleared this week", in.Cleared)

	// One page section per open fault.
	for i, t := range open {
		pdf.AddPage()
		h1(fmt.Sprintf("%d. %s — %s", i+1, t.Entity, t.Kind))
		if t.Title != "" {
			pdf.SetFont("Helvetica", "B", 10)
			pdf.MultiCell(0, 5, tr(t.Title), "", "L", false)
		}
		para(in.statusLine(t))
		para(in.placeLine(t))
		if msg := t.MessageIn(in.IP); msg != "" {
			h2("What was seen")
			para(msg)
		}
		h2("Evidence")
		for _, l := range in.evidenceLines(t) {
			para("• " + l)
		}
		if len(t.Causes) > 0 {
			h2("Likely cause")
			for _, c := range t.Causes {
				para("• " + c)
			}
		}
		if len(t.Checks) > 0 {
			room(2 + 6 + 3*4.2 + 1 + 4.6) // the heading, the warning and the first check
			h2("Checks to make")
			// The page may be the only one taken to the ladder: the
			// hot-water warning stands before its checks too.
			notice(CheckWarning)
			for j, c := range t.Checks {
				para(fmt.Sprintf("%d. %s", j+1, c))
			}
		}
		if pts := in.Series[t.Entity]; len(pts) < 2 && in.terminal(t.Entity) != nil {
			pdf.Ln(2)
			para("No plot: no evidence was recorded for " + t.Entity + " during this week; the figures above are from the record named at the top of the page.")
		} else if len(pts) > 1 {
			png, err := weekPlot(pts, in.IP, t.Entity, loc, in.WeekStart, in.WeekEnd)
			if err != nil {
				return fmt.Errorf("report: plot %s: %w", t.Entity, err)
			}
			name := "plot-" + t.FaultID
			pdf.RegisterImageOptionsReader(name, fpdf.ImageOptions{ImageType: "PNG"}, bytes.NewReader(png))
			pdf.Ln(2)
			plotW, plotH, next := plotBox(bottom-pdf.GetY(), bodyW)
			if next {
				pdf.AddPage()
			}
			pdf.ImageOptions(name, lm+(bodyW-plotW)/2, pdf.GetY(), plotW, plotH, true, fpdf.ImageOptions{ImageType: "PNG"}, 0, "")
		}
	}

	// Terminal list for the technician.
	pdf.AddPage()
	h1("Terminals with open faults — coil data")
	var trs [][]string
	seen := map[string]bool{}
	for _, t := range open {
		if seen[t.Entity] || in.terminal(t.Entity) == nil {
			continue
		}
		seen[t.Entity] = true
		trs = append(trs, in.coilLine(t.Entity))
	}
	if len(trs) == 0 {
		para("None.")
	} else {
		table([]string{"Terminal", "Inlet", "Rows", "FPI", "Coil face", "Zone", "Location"}, scale([]float64{20, 30, 8, 8, 24, 20, 46}), trs)
	}

	for _, s := range in.Sections {
		pdf.AddPage()
		h1(s.Title)
		for _, p := range s.Intro {
			para(p)
		}
		if len(s.Header) > 0 {
			hw := func(s string) float64 {
				pdf.SetFont("Helvetica", "B", 8.5)
				defer pdf.SetFont("Helvetica", "", 8.5)
				return width(s)
			}
			pdf.SetFont("Helvetica", "", 8.5)
			table(s.Header, scale(naturalWidths(s.Header, s.Rows, hw, width, bodyW)), s.Rows)
		}
	}
	if err := pdf.Error(); err != nil {
		return fmt.Errorf("report: pdf: %w", err)
	}
	return pdf.Output(w)
}

// naturalWidths gives a section table's columns widths (mm, before scaling
// to the body width bodyW) from what they hold: each column as wide as its
// widest cell and the longest word of its heading (headW measures the
// bold heading, cellW a cell), the last one, which wraps, at most 40 % of
// the body; so narrow numbers leave room for the free text, and no cell of
// a sized column needs cutting when the whole fits.
func naturalWidths(header []string, rows [][]string, headW, cellW func(string) float64, bodyW float64) []float64 {
	ws := make([]float64, len(header))
	for i, h := range header {
		for _, word := range strings.Fields(h) {
			ws[i] = max(ws[i], headW(word))
		}
		for _, r := range rows {
			if i < len(r) {
				ws[i] = max(ws[i], cellW(r[i]))
			}
		}
		ws[i] += 2.5
	}
	if n := len(ws) - 1; n >= 0 {
		ws[n] = min(ws[n], 0.4*bodyW)
	}
	return ws
}

// plotBox sizes a fault's plot for the room (mm) left on its page: the body
// width bodyW when it fits there; else shrunk, centred, to as little as 75 %
// so it stays on its fault's page; else full size at the top of a new page
// (next).
func plotBox(room, bodyW float64) (w, h float64, next bool) {
	w, h = bodyW, bodyW*plotAspect
	switch {
	case room >= h:
		return w, h, false
	case room >= 0.75*h:
		return room / plotAspect, room, false
	}
	return w, h, true
}

func firstOr(s []string, def string) string {
	if len(s) > 0 {
		return s[0]
	}
	return def
}

func orDash(s string) string {
	if strings.TrimSpace(s) == "" {
		return "–"
	}
	return s
}

// unitAfter matches a number and the unit after it, and unitBefore a
// currency code or "±" and the number after it, each pair joined by one
// space (the unit followed by the end of a word).
var (
	unitAfter  = regexp.MustCompile(`(\d) (°F|°C|K|%|kW|kWh|MBH|therm|ton-h|cfm|L/s|gpm|in\.?|mm|Pa|kPa|psi|h|min|FPI)([\s).,;:]|$)`)
	unitBefore = regexp.MustCompile(`(±|\b[A-Z]{3}) (\d)`)
)

// keepUnits joins each number to its unit, and a currency code or "±" to
// the number after it, with a no-break space, so that a line never ends
// between the two halves of one quantity (typesetting practice).
func keepUnits(s string) string {
	const nbsp = "\u00a0"
	s = unitAfter.ReplaceAllString(s, "${1}"+nbsp+"${2}${3}")
	return unitBefore.ReplaceAllString(s, "${1}"+nbsp+"${2}")
}

// wrapCell breaks txt into lines no wider than w (width measures a
// string), at spaces (not no-break spaces) where it can; a word wider than w on its own is cut
// into pieces at whole characters. Runs of spaces collapse to one.
func wrapCell(txt string, w float64, width func(string) float64) []string {
	var lines []string
	line := ""
	// Break at ASCII spaces only: a no-break space (keepUnits) holds a
	// number to its unit.
	for _, word := range strings.FieldsFunc(txt, func(r rune) bool { return r == ' ' || r == '\t' || r == '\n' || r == '\r' }) {
		if line != "" && width(line+" "+word) <= w {
			line += " " + word
			continue
		}
		if line != "" {
			lines = append(lines, line)
			line = ""
		}
		for width(word) > w {
			r := []rune(word)
			k := 1
			for k < len(r) && width(string(r[:k+1])) <= w {
				k++
			}
			// An identifier ("VAV-NORTH-2-107") breaks after a hyphen
			// or slash where it can, not in the middle of a number.
			for j := k - 1; j > 1 && k < len(r); j-- {
				if r[j-1] == '-' || r[j-1] == '/' {
					k = j
					break
				}
			}
			lines = append(lines, string(r[:k]))
			word = string(r[k:])
		}
		line = word
	}
	if line != "" || len(lines) == 0 {
		lines = append(lines, line)
	}
	return lines
}
