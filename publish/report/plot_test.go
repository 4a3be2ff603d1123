package report

import (
	"math"
	"strings"
	"testing"
	"time"
)

// TestSegmentsBreakAtGaps: the week plot joins hourly points only within
// 90 min of each other; an hour without a value or a longer step (the
// plant off overnight) leaves a gap instead of a straight line drawn across
// hours nothing was measured in.
func TestSegmentsBreakAtGaps(t *testing.T) {
	t0 := time.Date(2026, 1, 12, 6, 0, 0, 0, time.UTC)
	var pts []Point
	for _, h := range []int{0, 1, 2, 3, 9, 10, 11, 14} { // gaps 3 → 9 and 11 → 14
		v := float64(h)
		if h == 10 {
			v = math.NaN() // a measured hour without a rise
		}
		pts = append(pts, Point{At: t0.Add(time.Duration(h) * time.Hour), ObservedRiseK: v})
	}
	segs := segments(pts, func(p Point) float64 { return p.ObservedRiseK })
	var got []string
	for _, s := range segs {
		var xs []string
		for _, xy := range s {
			xs = append(xs, time.Unix(int64(xy.X), 0).UTC().Format("15"))
		}
		got = append(got, strings.Join(xs, ","))
	}
	if want := "06,07,08,09|15|17|20"; strings.Join(got, "|") != want {
		t.Errorf("segments %q, want %q", strings.Join(got, "|"), want)
	}
}

// TestWeekPanelsValveOnItsOwnAxis: the valve command is drawn on an axis
// of its own, 0-100 %, under the rise panel whose axis names the report's
// unit (°F for IP, K for SI) and whose title says the points are hourly
// means; both panels span the report's whole week,
// even when only its first day has data.
func TestWeekPanelsValveOnItsOwnAxis(t *testing.T) {
	in := testInput()
	pts := in.Series["VAV-1-07"][:20] // the first 20 h of the week
	for _, ip := range []bool{true, false} {
		rise, cmd, err := weekPanels(pts, ip, "VAV-1-07", in.loc(), in.WeekStart, in.WeekEnd)
		if err != nil {
			t.Fatal(err)
		}
		unit := map[bool]string{true: "°F", false: "K"}[ip]
		// The points are hourly means: a valve hunting within the hour
		// does not show, and the title says so.
		if !strings.Contains(rise.Title.Text, "hourly means") {
			t.Errorf("ip=%v: title %q does not say the points are hourly means", ip, rise.Title.Text)
		}
		if !strings.HasSuffix(rise.Y.Label.Text, ", "+unit) || strings.Contains(rise.Y.Label.Text, "valve") {
			t.Errorf("ip=%v: rise axis %q, want it in %s and for the rise alone", ip, rise.Y.Label.Text, unit)
		}
		if cmd.Y.Label.Text != "valve command, %" || cmd.Y.Min != 0 || cmd.Y.Max != 100 {
			t.Errorf("ip=%v: valve axis %q from %v to %v, want valve command, %% from 0 to 100", ip, cmd.Y.Label.Text, cmd.Y.Min, cmd.Y.Max)
		}
		// 9 K × 1.8 = 16.2 °F at the sine's crest: the axis holds it.
		if top := map[bool]float64{true: 16.2, false: 9}[ip]; rise.Y.Max < top {
			t.Errorf("ip=%v: rise axis tops at %v, below the observed %v", ip, rise.Y.Max, top)
		}
		for _, p := range []struct {
			name     string
			min, max float64
		}{{"rise", rise.X.Min, rise.X.Max}, {"valve", cmd.X.Min, cmd.X.Max}} {
			if p.min > float64(in.WeekStart.Unix()) || p.max < float64(in.WeekEnd.Unix()-3600) {
				t.Errorf("ip=%v: %s panel spans %v..%v, not the week", ip, p.name, time.Unix(int64(p.min), 0), time.Unix(int64(p.max), 0))
			}
		}
	}
	if png, err := weekPlot(pts, true, "VAV-1-07", in.loc(), in.WeekStart, in.WeekEnd); err != nil || len(png) < 1000 {
		t.Fatalf("weekPlot: %d bytes, %v", len(png), err)
	}
}

// TestStepTicksRoundLabels: a value axis is marked at round steps with no
// more decimals than the step needs ("10", not "10.00"; "0.5").
func TestStepTicksRoundLabels(t *testing.T) {
	for _, c := range []struct {
		lo, hi float64
		want   string
	}{
		{0, 55, "0,10,20,30,40,50"},
		{-2.5, 36, "0,10,20,30"},
		{0, 2.3, "0.0,0.5,1.0,1.5,2.0"},
	} {
		var labels []string
		for _, tk := range (stepTicks{}).Ticks(c.lo, c.hi) {
			labels = append(labels, tk.Label)
		}
		if got := strings.Join(labels, ","); got != c.want {
			t.Errorf("ticks %v..%v = %s, want %s", c.lo, c.hi, got, c.want)
		}
	}
}

// TestPlotBoxKeepsToPage: a plot that nearly fits in the room left on its
// fault's page shrinks (to 75 % at the least) rather than go to a page of
// its own; a plot that fits is drawn full width; less room than 75 % starts
// a new page.
func TestPlotBoxKeepsToPage(t *testing.T) {
	const body = 190.0
	full := body * plotAspect
	if w, h, next := plotBox(full+1, body); w != body || h != full || next {
		t.Errorf("room for it: %v x %v, next page %v", w, h, next)
	}
	if w, h, next := plotBox(0.8*full, body); next || h != 0.8*full || math.Abs(w-0.8*body) > 1e-9 {
		t.Errorf("80 %% room: %v x %v, next page %v; want it shrunk on this page", w, h, next)
	}
	if w, h, next := plotBox(0.6*full, body); !next || w != body || h != full {
		t.Errorf("60 %% room: %v x %v, next page %v; want full size on a new page", w, h, next)
	}
}
