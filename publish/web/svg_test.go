package web

import (
	"math"
	"strings"
	"testing"
	"time"
)

// TestValueTicksRound: the value axis is labelled at 1, 2 or 5 times a
// power of ten (Heckbert, "Nice numbers for graph labels", Graphics Gems,
// 1990), spanning the data, about five intervals.
func TestValueTicksRound(t *testing.T) {
	for _, c := range []struct {
		lo, hi float64
		want   []float64
	}{
		{-3.1, 29.8, []float64{-10, 0, 10, 20, 30}},
		{-8.9, 186.9, []float64{-50, 0, 50, 100, 150, 200}},
		{0.2, 0.93, []float64{0.2, 0.4, 0.6, 0.8, 1}},
		{14.3, 15.1, []float64{14.2, 14.4, 14.6, 14.8, 15, 15.2}},
		{-1, 1, []float64{-1, -0.5, 0, 0.5, 1}},
	} {
		got := valueTicks(c.lo, c.hi, 5)
		if len(got) != len(c.want) {
			t.Errorf("valueTicks(%v, %v) = %v, want %v", c.lo, c.hi, got, c.want)
			continue
		}
		for i := range got {
			if math.Abs(got[i]-c.want[i]) > 1e-9 {
				t.Errorf("valueTicks(%v, %v) = %v, want %v", c.lo, c.hi, got, c.want)
				break
			}
		}
		if got[0] > c.lo || got[len(got)-1] < c.hi {
			t.Errorf("valueTicks(%v, %v) = %v does not span the data", c.lo, c.hi, got)
		}
	}
}

// TestTimeTicksOnBoundaries: a week is labelled at local midnights, a day
// at whole hours, never outside the data.
func TestTimeTicksOnBoundaries(t *testing.T) {
	loc := time.FixedZone("CST", -6*3600)
	t0 := time.Date(2025, 1, 13, 6, 20, 0, 0, loc)
	ticks, f := timeTicks(t0, t0.Add(7*24*time.Hour), 8)
	if f != "Mon 2" || len(ticks) != 7 || ticks[0].Format("Mon 2 15:04") != "Tue 14 00:00" {
		t.Errorf("week: %v (%s)", ticks, f)
	}
	ticks, _ = timeTicks(t0, t0.Add(30*24*time.Hour), 8)
	if len(ticks) > 8 || len(ticks) < 4 {
		t.Errorf("month: %d ticks %v", len(ticks), ticks)
	}
	ticks, f = timeTicks(t0, t0.Add(20*time.Hour), 8)
	if f != "15:04" || len(ticks) == 0 || len(ticks) > 8 {
		t.Errorf("day: %v (%s)", ticks, f)
	}
	for _, tk := range ticks {
		if tk.Minute() != 0 || tk.Before(t0) || tk.After(t0.Add(20*time.Hour)) {
			t.Errorf("day tick %v not on a whole hour inside the data", tk)
		}
	}
}

// TestLineChartLabels: the chart's value labels are the round ticks.
func TestLineChartLabels(t *testing.T) {
	t0 := time.Date(2025, 1, 13, 0, 0, 0, 0, time.UTC)
	svg := string(lineChart("rise", axis{Unit: "°F"}, 600, 200, []Series{{Name: "observed", Color: "#c00",
		X: []time.Time{t0, t0.Add(24 * time.Hour), t0.Add(48 * time.Hour)}, Y: []float64{-3.1, 29.8, 12}}}))
	for _, w := range []string{">-10<", ">0<", ">30<", ">Tue 14<"} {
		if !strings.Contains(svg, w) {
			t.Errorf("chart lacks label %s", w)
		}
	}
	// The last midnight sits on the right edge: its label ends there.
	if !strings.Contains(svg, `text-anchor="end">Wed 15<`) {
		t.Error("label at the right edge not anchored inside the chart")
	}
	if strings.Contains(svg, ">31.3<") || strings.Contains(svg, ">-4.8<") {
		t.Error("chart labelled at padded data limits, not round ticks")
	}
}
