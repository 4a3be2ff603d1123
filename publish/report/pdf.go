package report

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"
	"strings"
	"time"

	"github.com/go-pdf/fpdf"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"risewatch/rules"
	"risewatch/units"
)

// WritePDF writes the weekly report as PDF: A4 portrait, or Letter when the
// report uses IP units (North American sites print on Letter).
func WritePDF(w io.Writer, in Input) error {
	size := "A4"
	if in.IP {
		size = "Letter"
	}
	pdf := fpdf.New("P", "mm", size, "")
	pdf.SetTitle("risewatch weekly coil report", true)
	pdf.SetCreator("risewatch", true)
	pdf.SetAutoPageBreak(true, 15)
	pdf.AliasNbPages("{nb}")
	tr := pdf.UnicodeTranslatorFromDescriptor("") // cp1252 covers °, ±, ³ and –
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

	h1 := func(s string) {
		pdf.SetFont("Helvetica", "B", 15)
		pdf.MultiCell(0, 8, tr(s), "", "L", false)
	}
	h2 := func(s string) {
		room(2 + 6 + 2*4.6) // the heading and two lines under it
		pdf.Ln(2)
		pdf.SetFont("Helvetica", "B", 12)
		pdf.MultiCell(0, 6, tr(s), "", "L", false)
	}
	para := func(s string) {
		pdf.SetFont("Helvetica", "", 9.5)
		pdf.MultiCell(0, 4.6, tr(s), "", "L", false)
	}
	// table draws a ruled table whose last column wraps (it holds the
	// free text: a check, a note, a location); the other cells are cut to
	// their column (fitCell). A row never splits across pages, and a page
	// the table continues on starts with the header row again.
	table := func(header []string, widths []float64, rows [][]string) {
		const headH, lineH, padH = 6.0, 3.8, 1.6
		pdf.SetFont("Helvetica", "", 8.5)
		cells := make([][][]string, len(rows))
		heights := make([]float64, len(rows))
		for r, row := range rows {
			cells[r] = make([][]string, len(header))
			n := 1
			for i := range header {
				txt := ""
				if i < len(row) {
					txt = row[i]
				}
				if i == len(header)-1 {
					cells[r][i] = wrapCell(txt, widths[i]-1.5, width)
				} else {
					cells[r][i] = []string{fitCell(txt, widths[i]-1.5, width)}
				}
				n = max(n, len(cells[r][i]))
			}
			heights[r] = float64(n)*lineH + padH
		}
		head := func() {
			pdf.SetFont("Helvetica", "B", 8.5)
			pdf.SetFillColor(225, 232, 240)
			for i, h := range header {
				pdf.CellFormat(widths[i], headH, tr(h), "1", 0, "L", true, 0, "")
			}
			pdf.Ln(-1)
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
	pdf.SetFillColor(255, 244, 214)
	pdf.SetFont("Helvetica", "", 8.5)
	pdf.MultiCell(0, 4.2, tr(Advisory), "1", "L", true)
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
			fmt.Sprintf("%.2f", t.Impact.WeeklyCost), fmt.Sprintf("%.0f %%", t.Confidence*100), firstOr(t.Checks, "")})
	}
	if len(rows) == 0 {
		para("No open faults.")
	} else {
		table([]string{"#", "Terminal", "Fault", "Since", "Cost/wk " + in.currency(), "Conf.", "Check first"}, scale([]float64{6, 18, 22, 20, 18, 11, 60}), rows)
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
		cl := in.coilLine(t.Entity)
		para(fmt.Sprintf("Box inlet %s, %s row(s), %s FPI, coil face %s. Zone %s. Location: %s. AHU %s, loop %s.",
			orDash(cl[1]), orDash(cl[2]), orDash(cl[3]), orDash(cl[4]), orDash(cl[5]), orDash(cl[6]), orDash(t.AHU), orDash(t.Loop)))
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
			h2("Checks to make")
			for j, c := range t.Checks {
				para(fmt.Sprintf("%d. %s", j+1, c))
			}
		}
		if pts := in.Series[t.Entity]; len(pts) > 1 {
			png, err := weekPlot(pts, in.IP, t.Entity, loc)
			if err != nil {
				return fmt.Errorf("report: plot %s: %w", t.Entity, err)
			}
			name := "plot-" + t.FaultID
			pdf.RegisterImageOptionsReader(name, fpdf.ImageOptions{ImageType: "PNG"}, bytes.NewReader(png))
			pdf.Ln(2)
			plotH := bodyW * 0.5
			room(plotH)
			pdf.ImageOptions(name, lm, pdf.GetY(), bodyW, plotH, true, fpdf.ImageOptions{ImageType: "PNG"}, 0, "")
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
		table([]string{"Terminal", "Inlet", "Rows", "FPI", "Coil face", "Zone", "Location"}, scale([]float64{20, 22, 9, 9, 24, 22, 50}), trs)
	}

	for _, s := range in.Sections {
		pdf.AddPage()
		h1(s.Title)
		for _, p := range s.Intro {
			para(p)
		}
		if len(s.Header) > 0 {
			ws := make([]float64, len(s.Header))
			for i := range ws {
				ws[i] = 1
			}
			table(s.Header, scale(ws), s.Rows)
		}
	}
	if err := pdf.Error(); err != nil {
		return fmt.Errorf("report: pdf: %w", err)
	}
	return pdf.Output(w)
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

// weekPlot draws observed and expected rise (left axis, °F or K) and valve
// command scaled onto the same axis (0-100 % mapped to the rise range) as PNG.
func weekPlot(pts []Point, ip bool, title string, loc *time.Location) ([]byte, error) {
	p := plot.New()
	p.Title.Text = title + ": air temperature rise and valve command"
	unit := "K"
	conv := func(k float64) float64 { return k }
	if ip {
		unit = "°F"
		conv = units.DeltaKToF
	}
	p.Y.Label.Text = "rise, " + unit + " (valve % scaled to the same axis)"
	p.X.Tick.Marker = dayTicks{loc: loc}
	obs, exp, valve := plotter.XYs{}, plotter.XYs{}, plotter.XYs{}
	maxRise := 1.0
	for _, pt := range pts {
		for _, v := range []float64{pt.ObservedRiseK, pt.ExpectedRiseK} {
			if !math.IsNaN(v) && conv(v) > maxRise {
				maxRise = conv(v)
			}
		}
	}
	for _, pt := range pts {
		x := float64(pt.At.Unix())
		if !math.IsNaN(pt.ObservedRiseK) {
			obs = append(obs, plotter.XY{X: x, Y: conv(pt.ObservedRiseK)})
		}
		if !math.IsNaN(pt.ExpectedRiseK) {
			exp = append(exp, plotter.XY{X: x, Y: conv(pt.ExpectedRiseK)})
		}
		if !math.IsNaN(pt.ValveFrac) {
			valve = append(valve, plotter.XY{X: x, Y: pt.ValveFrac * maxRise})
		}
	}
	add := func(xy plotter.XYs, c color.Color, dashed bool, name string) error {
		if len(xy) < 2 {
			return nil
		}
		l, err := plotter.NewLine(xy)
		if err != nil {
			return err
		}
		l.Color = c
		l.Width = vg.Points(1.1)
		if dashed {
			l.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		}
		p.Add(l)
		p.Legend.Add(name, l)
		return nil
	}
	if err := add(exp, color.RGBA{40, 110, 200, 255}, true, "expected rise"); err != nil {
		return nil, err
	}
	if err := add(obs, color.RGBA{200, 60, 30, 255}, false, "observed rise"); err != nil {
		return nil, err
	}
	if err := add(valve, color.RGBA{90, 90, 90, 255}, false, fmt.Sprintf("valve command (100 %% = %.0f)", maxRise)); err != nil {
		return nil, err
	}
	p.Legend.Top = true
	p.Legend.Left = true
	// Sans-serif text like the report's body (gonum's default is serif).
	for _, f := range []*font.Font{&p.Title.TextStyle.Font, &p.X.Label.TextStyle.Font, &p.Y.Label.TextStyle.Font,
		&p.X.Tick.Label.Font, &p.Y.Tick.Label.Font, &p.Legend.TextStyle.Font} {
		f.Variant = "Sans"
	}
	// Headroom above the highest rise for the legend, so it covers no line.
	p.Y.Min, p.Y.Max = math.Min(0, p.Y.Min), maxRise*1.45
	p.Add(plotter.NewGrid())
	wt, err := p.WriterTo(7*vg.Inch, 3.5*vg.Inch, "png")
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if _, err := wt.WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// fitCell trims txt to the width w (mm) that width measures, so a table's
// columns stay aligned: whole characters come off the end (never part of a
// multi-byte one, such as the ° of a temperature) and an ellipsis marks the
// cut, so a reader knows the text goes on (the fault's page has it whole).
func fitCell(txt string, w float64, width func(string) float64) string {
	if width(txt) <= w {
		return txt
	}
	r := []rune(txt)
	for len(r) > 0 && width(string(r)+"…") > w {
		r = r[:len(r)-1]
	}
	return strings.TrimRight(string(r), " ,;:") + "…"
}

// wrapCell breaks txt into lines no wider than w (width measures a
// string), at spaces where it can; a word wider than w on its own is cut
// into pieces at whole characters. Runs of spaces collapse to one.
func wrapCell(txt string, w float64, width func(string) float64) []string {
	var lines []string
	line := ""
	for _, word := range strings.Fields(txt) {
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

// dayTicks marks a week plot's time axis (Unix seconds) at local
// midnights, labelled with the day ("Mon 13"), and at local noons without
// a label.
type dayTicks struct{ loc *time.Location }

// Ticks implements plot.Ticker.
func (d dayTicks) Ticks(lo, hi float64) []plot.Tick {
	loc := d.loc
	if loc == nil {
		loc = time.UTC
	}
	t0, t1 := time.Unix(int64(math.Floor(lo)), 0).In(loc), time.Unix(int64(math.Ceil(hi)), 0).In(loc)
	y, m, dd := t0.Date()
	var out []plot.Tick
	for day := time.Date(y, m, dd, 0, 0, 0, 0, loc); !day.After(t1); day = day.AddDate(0, 0, 1) {
		noon := day.Add(12 * time.Hour)
		if !day.Before(t0) {
			out = append(out, plot.Tick{Value: float64(day.Unix()), Label: day.Format("Mon 2")})
		}
		if !noon.Before(t0) && !noon.After(t1) {
			out = append(out, plot.Tick{Value: float64(noon.Unix())})
		}
	}
	return out
}
