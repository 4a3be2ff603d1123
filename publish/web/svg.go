package web

import (
	"fmt"
	"html/template"
	"math"
	"strings"
	"time"
)

// Series is one line on a chart.
type Series struct {
	Name   string
	Color  string
	Dashed bool
	X      []time.Time
	Y      []float64 // NaN breaks the line
}

// lineChart renders series as an inline SVG chart with a time axis and a
// labelled value axis. It is deliberately small: a polyline per series.
func lineChart(title, yLabel string, w, h int, series []Series) template.HTML {
	const ml, mr, mt, mb = 52, 12, 22, 28
	pw, ph := float64(w-ml-mr), float64(h-mt-mb)
	var t0, t1 time.Time
	ymin, ymax := math.Inf(1), math.Inf(-1)
	for _, s := range series {
		for i, x := range s.X {
			if t0.IsZero() || x.Before(t0) {
				t0 = x
			}
			if x.After(t1) {
				t1 = x
			}
			if y := s.Y[i]; !math.IsNaN(y) && !math.IsInf(y, 0) {
				ymin = math.Min(ymin, y)
				ymax = math.Max(ymax, y)
			}
		}
	}
	var b strings.Builder
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 %d %d" width="%d" height="%d" role="img" aria-label="%s" class="chart">`, w, h, w, h, template.HTMLEscapeString(title))
	fmt.Fprintf(&b, `<text x="%d" y="14" font-size="12" font-weight="bold">%s</text>`, ml, template.HTMLEscapeString(title))
	if math.IsInf(ymin, 0) || !t1.After(t0) {
		fmt.Fprintf(&b, `<text x="%d" y="%d" font-size="12" fill="#777">no data yet</text></svg>`, ml, mt+int(ph/2))
		return template.HTML(b.String())
	}
	if ymax-ymin < 1e-9 {
		ymax, ymin = ymax+1, ymin-1
	}
	pad := 0.05 * (ymax - ymin)
	ymin, ymax = ymin-pad, ymax+pad
	sx := func(t time.Time) float64 { return ml + pw*float64(t.Sub(t0))/float64(t1.Sub(t0)) }
	sy := func(y float64) float64 { return mt + ph*(1-(y-ymin)/(ymax-ymin)) }
	// Axes, grid and labels.
	fmt.Fprintf(&b, `<rect x="%d" y="%d" width="%.0f" height="%.0f" fill="#fbfbfb" stroke="#bbb"/>`, ml, mt, pw, ph)
	for i := 0; i <= 4; i++ {
		y := ymin + (ymax-ymin)*float64(i)/4
		fmt.Fprintf(&b, `<line x1="%d" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#e4e4e4"/><text x="%d" y="%.1f" font-size="10" text-anchor="end">%.1f</text>`,
			ml, ml+pw, sy(y), sy(y), ml-4, sy(y)+3, y)
	}
	span := t1.Sub(t0)
	format := "15:04"
	if span > 36*time.Hour {
		format = "Mon 2"
	}
	for i := 0; i <= 5; i++ {
		t := t0.Add(time.Duration(float64(span) * float64(i) / 5))
		fmt.Fprintf(&b, `<text x="%.1f" y="%d" font-size="10" text-anchor="middle">%s</text>`, sx(t), h-10, t.Format(format))
	}
	fmt.Fprintf(&b, `<text x="10" y="%.0f" font-size="10" transform="rotate(-90 10 %.0f)" text-anchor="middle">%s</text>`, mt+ph/2, mt+ph/2, template.HTMLEscapeString(yLabel))
	// Lines.
	lx := ml + 8
	for _, s := range series {
		var pts []string
		flush := func() {
			if len(pts) > 1 {
				dash := ""
				if s.Dashed {
					dash = ` stroke-dasharray="5 3"`
				}
				fmt.Fprintf(&b, `<polyline fill="none" stroke="%s" stroke-width="1.6"%s points="%s"/>`, s.Color, dash, strings.Join(pts, " "))
			}
			pts = pts[:0]
		}
		for i, x := range s.X {
			y := s.Y[i]
			if math.IsNaN(y) || math.IsInf(y, 0) {
				flush()
				continue
			}
			pts = append(pts, fmt.Sprintf("%.1f,%.1f", sx(x), sy(y)))
		}
		flush()
		fmt.Fprintf(&b, `<rect x="%d" y="%d" width="10" height="3" fill="%s"/><text x="%d" y="%d" font-size="10">%s</text>`, lx, mt+6, s.Color, lx+13, mt+10, template.HTMLEscapeString(s.Name))
		lx += 20 + 6*len(s.Name)
	}
	b.WriteString(`</svg>`)
	return template.HTML(b.String())
}
