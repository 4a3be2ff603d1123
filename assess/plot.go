package assess

import (
	"fmt"
	"image/color"
	"io"
	"path/filepath"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"risewatch/units"
)

// loopColours are distinguishable on screen and in grey print.
var loopColours = []color.RGBA{{0x1f, 0x4e, 0x99, 0xff}, {0xc0, 0x39, 0x2b, 0xff}, {0x27, 0x8f, 0x4b, 0xff},
	{0x8e, 0x44, 0xad, 0xff}, {0xd3, 0x84, 0x0b, 0xff}, {0x34, 0x49, 0x5e, 0xff}}

// Plot draws the number of terminals meeting their load against supply
// temperature, one line per loop, with the candidate supply marked.
func (a *Assessment) Plot(ip bool) (*plot.Plot, error) {
	u := unitSys{ip}
	p := plot.New()
	p.Title.Text = fmt.Sprintf("%s: terminals meeting heating load", a.Site)
	p.X.Label.Text = "hot-water supply temperature, " + u.tempUnit()
	p.Y.Label.Text = "terminals meeting load"
	p.Legend.Top = false
	p.Legend.Left = false
	p.Add(plotter.NewGrid())
	conv := func(c float64) float64 {
		if ip {
			return units.CToF(c)
		}
		return c
	}
	maxN := 0
	for i, l := range a.Loops {
		if len(l.Curve) == 0 {
			continue
		}
		pts := make(plotter.XYs, len(l.Curve))
		for j, c := range l.Curve {
			pts[j].X, pts[j].Y = conv(c.SupplyC), float64(c.Pass)
			maxN = max(maxN, c.Total)
		}
		line, err := plotter.NewLine(pts)
		if err != nil {
			return nil, fmt.Errorf("plot loop %s: %w", l.Loop, err)
		}
		line.Color = loopColours[i%len(loopColours)]
		line.Width = vg.Points(2)
		line.StepStyle = plotter.PostStep
		p.Add(line)
		p.Legend.Add(fmt.Sprintf("%s (%d)", l.Loop, l.Assessed), line)
	}
	if a.Conditions.SupplyC > 0 {
		x := conv(a.Conditions.SupplyC)
		mark, err := plotter.NewLine(plotter.XYs{{X: x, Y: 0}, {X: x, Y: float64(max(maxN, 1))}})
		if err != nil {
			return nil, err
		}
		mark.Color = color.RGBA{0x55, 0x55, 0x55, 0xff}
		mark.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		p.Add(mark)
		p.Legend.Add("candidate "+u.temp(a.Conditions.SupplyC)+" "+u.tempUnit(), mark)
	}
	p.Y.Min = 0
	p.Y.Max = float64(max(maxN, 1)) * 1.05
	return p, nil
}

// WritePlot writes the plot as PNG or SVG (by the file name's extension) to w.
func (a *Assessment) WritePlot(w io.Writer, name string, ip bool) error {
	ext := strings.TrimPrefix(strings.ToLower(filepath.Ext(name)), ".")
	if ext != "png" && ext != "svg" {
		return fmt.Errorf("plot %s: want a .png or .svg file name", name)
	}
	p, err := a.Plot(ip)
	if err != nil {
		return err
	}
	wt, err := p.WriterTo(8*vg.Inch, 5*vg.Inch, ext)
	if err != nil {
		return fmt.Errorf("plot %s: %w", name, err)
	}
	if _, err := wt.WriteTo(w); err != nil {
		return fmt.Errorf("plot %s: %w", name, err)
	}
	return nil
}
