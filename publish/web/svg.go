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

// axis describes a chart's value axis: the unit of the plotted values
// and, when Alt is set, a second unit labelled on the right-hand side at
// its own round values (Alt = AltScale × value: a pure scale, as between
// K and °F or L/s and cfm). With Fixed the axis spans at least Lo to Hi
// (a valve command 0-100 %).
type axis struct {
	Unit, Alt string
	AltScale  float64
	Lo, Hi    float64
	Fixed     bool
}

// chart is a titled chart drawn twice, 900 px wide and 420 px wide for
// narrow screens (a phone held upright), where the wide drawing scaled
// down would shrink its labels past reading; the page's CSS shows one.
// The title is HTML, so it wraps.
func chart(title string, ax axis, h int, series []Series) template.HTML {
	return template.HTML(`<figure class="chart"><figcaption>`+template.HTMLEscapeString(title)+`</figcaption>`) +
		drawChart("chart wide", title, false, ax, 900, h, series) + drawChart("chart narrow", title, false, ax, 420, h, series) +
		template.HTML(`</figure>`)
}

// lineChart renders series as an inline SVG chart with a title, a time
// axis and a labelled value axis. It is deliberately small: a polyline per
// series.
func lineChart(title string, ax axis, w, h int, series []Series) template.HTML {
	return drawChart("chart", title, true, ax, w, h, series)
}

// drawChart draws the chart of class class, labelled title for screen
// readers and, with showTitle, above the plot. Every chart keeps room for
// a right-hand axis, so charts stacked on a page share their time axis.
func drawChart(class, title string, showTitle bool, ax axis, w, h int, series []Series) template.HTML {
	const ml, mr, mt, mb = 52, 52, 22, 28
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
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 %d %d" width="%d" height="%d" role="img" aria-label="%s" class="%s">`, w, h, w, h, template.HTMLEscapeString(title), class)
	if showTitle {
		fmt.Fprintf(&b, `<text x="%d" y="14" font-size="12" font-weight="bold">%s</text>`, ml, template.HTMLEscapeString(title))
	}
	if math.IsInf(ymin, 0) || !t1.After(t0) {
		fmt.Fprintf(&b, `<text x="%d" y="%d" font-size="12" fill="#777">no data yet</text></svg>`, ml, mt+int(ph/2))
		return template.HTML(b.String())
	}
	if ax.Fixed {
		ymin, ymax = math.Min(ymin, ax.Lo), math.Max(ymax, ax.Hi)
	}
	if ymax-ymin < 1e-9 {
		ymax, ymin = ymax+1, ymin-1
	}
	yt := valueTicks(ymin, ymax, 5)
	ymin, ymax = yt[0], yt[len(yt)-1]
	prec := max(0, -int(math.Floor(math.Log10(yt[1]-yt[0])+1e-9)))
	sx := func(t time.Time) float64 { return ml + pw*float64(t.Sub(t0))/float64(t1.Sub(t0)) }
	sy := func(y float64) float64 { return mt + ph*(1-(y-ymin)/(ymax-ymin)) }
	// Axes, grid and labels.
	fmt.Fprintf(&b, `<rect x="%d" y="%d" width="%.0f" height="%.0f" fill="#fbfbfb" stroke="#bbb"/>`, ml, mt, pw, ph)
	for _, y := range yt {
		fmt.Fprintf(&b, `<line x1="%d" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#e4e4e4"/><text x="%d" y="%.1f" font-size="10" text-anchor="end">%.*f</text>`,
			ml, ml+pw, sy(y), sy(y), ml-4, sy(y)+3, prec, y)
	}
	ticks, format := timeTicks(t0, t1, max(2, int(pw/90)))
	for _, t := range ticks {
		// A label at either end of the axis is anchored inside the chart.
		anchor := "middle"
		switch x := sx(t); {
		case x > ml+pw-20:
			anchor = "end"
		case x < ml+20:
			anchor = "start"
		}
		fmt.Fprintf(&b, `<line x1="%.1f" x2="%.1f" y1="%d" y2="%.1f" stroke="#eeeeee"/><text x="%.1f" y="%d" font-size="10" text-anchor="%s">%s</text>`,
			sx(t), sx(t), mt, mt+ph, sx(t), h-10, anchor, t.Format(format))
	}
	fmt.Fprintf(&b, `<text x="10" y="%.0f" font-size="10" transform="rotate(-90 10 %.0f)" text-anchor="middle">%s</text>`, mt+ph/2, mt+ph/2, template.HTMLEscapeString(ax.Unit))
	if ax.Alt != "" && ax.AltScale > 0 {
		// The other unit's own round values, placed where they fall on
		// the first unit's scale.
		xr := float64(ml) + pw
		at := valueTicks(ymin*ax.AltScale, ymax*ax.AltScale, 5)
		aprec := max(0, -int(math.Floor(math.Log10(at[1]-at[0])+1e-9)))
		for _, v := range at {
			y := v / ax.AltScale
			if y < ymin-1e-9 || y > ymax+1e-9 {
				continue
			}
			fmt.Fprintf(&b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#999"/><text x="%.1f" y="%.1f" font-size="10" fill="#555">%.*f</text>`,
				xr, xr+4, sy(y), sy(y), xr+6, sy(y)+3, aprec, v)
		}
		fmt.Fprintf(&b, `<text x="%d" y="%.0f" font-size="10" fill="#555" transform="rotate(90 %d %.0f)" text-anchor="middle">%s</text>`,
			w-8, mt+ph/2, w-8, mt+ph/2, template.HTMLEscapeString(ax.Alt))
	}
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

// niceStep is the tick step of "nice numbers for graph labels" (Heckbert,
// Graphics Gems, 1990): 1, 2 or 5 times a power of ten, the smallest not
// below raw.
func niceStep(raw float64) float64 {
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*p >= raw*(1-1e-12) {
			return m * p
		}
	}
	return 10 * p
}

// valueTicks returns evenly spaced round values from at or below lo to at
// or above hi, about n intervals apart (Heckbert's loose labelling): the
// axis runs from the first to the last.
func valueTicks(lo, hi float64, n int) []float64 {
	step := niceStep((hi - lo) / float64(n))
	first, last := math.Floor(lo/step+1e-9), math.Ceil(hi/step-1e-9)
	var out []float64
	for k := first; k <= last; k++ {
		v := k * step
		if v == 0 {
			v = 0 // no −0 label
		}
		out = append(out, v)
	}
	if len(out) < 2 {
		out = append(out, out[0]+step)
	}
	return out
}

// timeTicks returns tick times inside [t0, t1] on round wall-clock
// boundaries of t0's zone — local midnights for spans of days (every
// k-th day to keep at most max ticks), whole hours otherwise — and the
// label format.
func timeTicks(t0, t1 time.Time, maxTicks int) ([]time.Time, string) {
	span := t1.Sub(t0)
	loc := t0.Location()
	var out []time.Time
	if span > 36*time.Hour {
		days := int(span.Hours()/24) + 1
		every := (days + maxTicks - 1) / maxTicks
		y, m, d := t0.Date()
		for t := time.Date(y, m, d, 0, 0, 0, 0, loc); !t.After(t1); t = t.AddDate(0, 0, every) {
			if !t.Before(t0) {
				out = append(out, t)
			}
		}
		return out, "Mon 2"
	}
	hours := int(span.Hours()) + 1
	every := 1
	for _, e := range []int{1, 2, 3, 4, 6, 12, 24} {
		every = e
		if hours/e <= maxTicks {
			break
		}
	}
	y, m, d := t0.Date()
	for t := time.Date(y, m, d, t0.Hour(), 0, 0, 0, loc); !t.After(t1); t = t.Add(time.Hour) {
		if !t.Before(t0) && t.Hour()%every == 0 {
			out = append(out, t)
		}
	}
	return out, "15:04"
}
