package report

import (
	"bytes"
	"image/color"
	"math"
	"strconv"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"risewatch/units"
)

// weekPlot draws the week of a terminal as PNG in two panels over one
// time axis: observed and expected air temperature rise (°F for an IP
// report, K otherwise) above, valve command in percent below, each on an
// axis of its own unit. The time axis spans the report's week [from, to)
// (the points' own span when from is zero), so a week with a few days of
// data shows where in the week they fall.
func weekPlot(pts []Point, ip bool, title string, loc *time.Location, from, to time.Time) ([]byte, error) {
	rise, cmd, err := weekPanels(pts, ip, title, loc, from, to)
	if err != nil {
		return nil, err
	}
	const w, h = 7 * vg.Inch, plotAspect * 7 * vg.Inch
	img := vgimg.New(w, h)
	dc := draw.New(img)
	top := draw.Crop(dc, 0, 0, h*0.38, 0)
	bot := draw.Crop(dc, 0, 0, 0, -h*0.62)
	// Line the two data areas up: the wider left axis sets both.
	dt, db := rise.DataCanvas(top), cmd.DataCanvas(bot)
	left := max(dt.Min.X-top.Min.X, db.Min.X-bot.Min.X)
	right := max(top.Max.X-dt.Max.X, bot.Max.X-db.Max.X)
	top = draw.Crop(top, left-(dt.Min.X-top.Min.X), -(right - (top.Max.X - dt.Max.X)), 0, 0)
	bot = draw.Crop(bot, left-(db.Min.X-bot.Min.X), -(right - (bot.Max.X - db.Max.X)), 0, 0)
	rise.Draw(top)
	cmd.Draw(bot)
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// weekPanels builds weekPlot's two panels: rise (upper) and valve command
// (lower), over the same time range.
func weekPanels(pts []Point, ip bool, title string, loc *time.Location, from, to time.Time) (rise, cmd *plot.Plot, err error) {
	unit := "K"
	conv := func(k float64) float64 { return k }
	if ip {
		unit = "°F"
		conv = units.DeltaKToF
	}
	obs := segments(pts, func(p Point) float64 { return conv(p.ObservedRiseK) })
	exp := segments(pts, func(p Point) float64 { return conv(p.ExpectedRiseK) })
	valve := segments(pts, func(p Point) float64 { return p.ValveFrac * 100 })
	maxRise, minRise := 1.0, 0.0
	for _, seg := range append(append([]plotter.XYs(nil), obs...), exp...) {
		for _, xy := range seg {
			maxRise, minRise = math.Max(maxRise, xy.Y), math.Min(minRise, xy.Y)
		}
	}
	rise, cmd = plot.New(), plot.New()
	rise.Title.Text = title + ": air temperature rise and valve command, hourly means"
	rise.Y.Label.Text = "air temperature rise, " + unit
	cmd.Y.Label.Text = "valve command, %"
	cmd.X.Label.Text = "day, site time"
	for _, p := range []*plot.Plot{rise, cmd} {
		p.X.Tick.Marker = dayTicks{loc: loc}
		p.Y.Tick.Marker = stepTicks{}
		// Sans-serif text like the report's body (gonum's default is serif).
		for _, f := range []*font.Font{&p.Title.TextStyle.Font, &p.X.Label.TextStyle.Font, &p.Y.Label.TextStyle.Font,
			&p.X.Tick.Label.Font, &p.Y.Tick.Label.Font, &p.Legend.TextStyle.Font} {
			f.Variant = "Sans"
		}
		p.Y.Label.TextStyle.Font.Size = vg.Points(10)
		p.X.Label.TextStyle.Font.Size = vg.Points(10)
		p.Legend.TextStyle.Font.Size = vg.Points(10)
		p.Legend.Padding = vg.Points(2)
		p.Legend.Top, p.Legend.Left = true, true
		p.Legend.XOffs = vg.Points(4)
		p.Add(plotter.NewGrid())
	}
	// add draws one series, segment by segment, named once in the legend.
	add := func(p *plot.Plot, segs []plotter.XYs, c color.Color, dashed bool, name string) error {
		named := false
		for _, xy := range segs {
			l, err := plotter.NewLine(xy)
			if err != nil {
				return err
			}
			l.Color = c
			l.Width = vg.Points(1.2)
			if dashed {
				l.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
			}
			p.Add(l)
			if len(xy) == 1 { // an hour on its own: a mark, not a line of no length
				sc, err := plotter.NewScatter(xy)
				if err != nil {
					return err
				}
				sc.Color, sc.Radius = c, vg.Points(1.2)
				p.Add(sc)
			}
			if !named {
				p.Legend.Add(name, l)
				named = true
			}
		}
		return nil
	}
	if err := add(rise, exp, color.RGBA{40, 110, 200, 255}, true, "expected rise"); err != nil {
		return nil, nil, err
	}
	if err := add(rise, obs, color.RGBA{200, 60, 30, 255}, false, "observed rise"); err != nil {
		return nil, nil, err
	}
	if err := add(cmd, valve, color.RGBA{70, 70, 70, 255}, false, "valve command"); err != nil {
		return nil, nil, err
	}
	cmd.Legend = plot.NewLegend() // the axis names the one line
	// Headroom above the highest rise for the legend, so it covers no line.
	rise.Y.Min, rise.Y.Max = minRise, maxRise*1.35
	cmd.Y.Min, cmd.Y.Max = 0, 100
	// One time axis: both panels span the same instants.
	x0, x1 := float64(pts[0].At.Unix()), float64(pts[len(pts)-1].At.Unix())
	for _, pt := range pts {
		x0, x1 = math.Min(x0, float64(pt.At.Unix())), math.Max(x1, float64(pt.At.Unix()))
	}
	if !from.IsZero() && to.After(from) {
		x0, x1 = math.Min(x0, float64(from.Unix())), math.Max(x1, float64(to.Unix()-1)) // no label for the next Monday
	}
	rise.X.Min, rise.X.Max, cmd.X.Min, cmd.X.Max = x0, x1, x0, x1
	rise.X.Tick.Marker = unlabelled{dayTicks{loc: loc}} // the day labels are on the lower panel
	cmd.Y.Tick.Marker = plot.ConstantTicks([]plot.Tick{{Value: 0, Label: "0"}, {Value: 25}, {Value: 50, Label: "50"}, {Value: 75}, {Value: 100, Label: "100"}})

	return rise, cmd, nil
}

// maxPlotGap is the longest step between two of a series' hourly points
// that the week plot joins with a line; a longer one (the plant off
// overnight, the terminal not heating, no data) leaves a gap rather than a
// straight line across hours nothing was measured in.
const maxPlotGap = 90 * time.Minute

// segments returns the finite values of v over pts as runs of points
// no more than maxPlotGap apart: a line is drawn within a run only.
func segments(pts []Point, v func(Point) float64) []plotter.XYs {
	var out []plotter.XYs
	var cur plotter.XYs
	var last time.Time
	for _, p := range pts {
		y := v(p)
		if math.IsNaN(y) || math.IsInf(y, 0) {
			continue
		}
		if len(cur) > 0 && p.At.Sub(last) > maxPlotGap {
			out, cur = append(out, cur), nil
		}
		cur, last = append(cur, plotter.XY{X: float64(p.At.Unix()), Y: y}), p.At
	}
	if len(cur) > 0 {
		out = append(out, cur)
	}
	return out
}

// plotAspect is the week plot's height over its width (7 × 3.8 in).
const plotAspect = 3.8 / 7

// unlabelled is a ticker's marks without their labels.
type unlabelled struct{ plot.Ticker }

// Ticks implements plot.Ticker.
func (u unlabelled) Ticks(lo, hi float64) []plot.Tick {
	ts := u.Ticker.Ticks(lo, hi)
	for i := range ts {
		ts[i].Label = ""
	}
	return ts
}

// stepTicks marks a value axis at 1, 2 or 5 times a power of ten, three to
// six marks over the range, labelled with no more decimals than the step
// needs ("10", "20", not "10.00").
type stepTicks struct{}

// Ticks implements plot.Ticker.
func (stepTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || math.IsInf(hi-lo, 0) {
		return nil
	}
	mag := math.Pow(10, math.Floor(math.Log10((hi-lo)/4)))
	step := mag
	for _, m := range []float64{1, 2, 5, 10} {
		if step = m * mag; (hi-lo)/step <= 6 {
			break
		}
	}
	prec := max(0, int(-math.Floor(math.Log10(step)+1e-9)))
	var out []plot.Tick
	for v := math.Ceil(lo/step-1e-9) * step; v <= hi+step*1e-9; v += step {
		if math.Abs(v) < step*1e-9 {
			v = 0
		}
		out = append(out, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', prec, 64)})
	}
	return out
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
