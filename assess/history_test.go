package assess

import (
	"math"
	"strings"
	"testing"
	"time"

	"risewatch/coilmodel"
	"risewatch/collector"
)

// synthDays feeds h with one terminal whose heat is an exact line in
// outdoor temperature, Q = 3000 − 150·T_out W (chosen), for an occupied
// 07:00-17:00 day with the outdoor temperature falling by 1 K a day; the
// airflow is fixed and the discharge temperature carries the heat.
func synthDays(h *History, days int, withOAT bool) {
	const air = 0.2 // m³/s
	cp := coilmodel.MoistAirCp(0.003)
	start := time.Date(2025, 1, 6, 0, 0, 0, 0, time.UTC)
	for m := 0; m < days*24*60; m++ {
		at := start.Add(time.Duration(m) * time.Minute)
		day := m / (24 * 60)
		oat := -2 - float64(day)
		q := 3000 - 150*oat
		occ := at.Hour() >= 7 && at.Hour() < 17
		s := collector.Sample{Terminal: 0, At: at, AirflowM3s: air, SupplyC: 13, FanOn: true, PlantOn: true, Occupied: occ,
			ValveFrac: 0.5, OutdoorC: oat, ZoneC: 21, ZoneSetC: 21}
		s.DischargeC = 13 + q/(coilmodel.StandardAirDensity*air*cp)
		if !withOAT {
			s.Flags |= collector.FlagOutdoor
			s.OutdoorC = math.NaN()
		}
		h.Add([]collector.Sample{s})
	}
}

func TestHistoryRegressionRecoversLine(t *testing.T) {
	s := oneBox(t, 1, 10, false, 0)
	d := -20.0
	s.DesignOutdoorC = &d
	h := NewHistory(s, HistoryOptions{ColdFraction: 1})
	synthDays(h, 10, true)
	e := h.Estimates()[0]
	if e == nil || e.Method != MethodRegression {
		t.Fatalf("estimate %+v", e)
	}
	want := 3000 - 150*d // the line at the design temperature
	if math.Abs(e.DesignW-want) > 1e-6*want || math.Abs(e.SlopeWPerK+150) > 1e-6 {
		t.Errorf("design load %.3f W (slope %.4f), want %.0f W (-150 W/K)", e.DesignW, e.SlopeWPerK, want)
	}
	// An exact line leaves only the sensor uncertainty: 5 % airflow and
	// 0.6 K over the rise, in quadrature (the defaults).
	if !(e.DesignUncW > 0.05*want) || e.DesignUncW > 0.2*want {
		t.Errorf("uncertainty %.0f W for a %.0f W load", e.DesignUncW, want)
	}
	if e.Days != 10 || e.FitDays != 10 || e.ExtrapolationK != d*-1-11 {
		t.Errorf("days %d, fit %d, extrapolation %.1f K (coldest day -11 °C, design -20 °C)", e.Days, e.FitDays, e.ExtrapolationK)
	}
	// The first hour of occupancy is skipped (warm-up recovery).
	for _, r := range h.Hours(0) {
		if r.Start.Hour() < 8 || r.Start.Hour() >= 17 {
			t.Errorf("hour %v used: outside the steady occupied period", r.Start)
		}
	}
}

func TestHistoryWithoutOutdoorIsObservedPeak(t *testing.T) {
	s := oneBox(t, 1, 10, false, 0)
	d := -20.0
	s.DesignOutdoorC = &d
	h := NewHistory(s, HistoryOptions{})
	synthDays(h, 6, false)
	e := h.Estimates()[0]
	if e == nil || e.Method != MethodObservedPeak || !strings.Contains(e.Note, "outdoor") {
		t.Fatalf("estimate %+v", e)
	}
	want := 3000 - 150*(-7.0) // the coldest day's heat
	if math.Abs(e.DesignW-want) > 1e-6*want {
		t.Errorf("observed peak %.1f W, want %.0f W", e.DesignW, want)
	}
	// The history load is used when the site file has none.
	u := Prepare(s, []*LoadEstimate{e}, Options{})[0]
	if u.Err != nil || u.LoadW != e.DesignW || !strings.HasPrefix(u.LoadBasis, "history") {
		t.Errorf("unit load %.0f (%s), err %v", u.LoadW, u.LoadBasis, u.Err)
	}
}

// TestHistoryZoneOutOfRangeIsMissing: zone readings outside the
// plausibility ranges (an open room sensor at −40 °C, a setpoint of 70
// read as °C) are missing, so the hour records equal those of the same run
// with exactly those readings flagged; without the range check the hour
// means would carry them.
func TestHistoryZoneOutOfRangeIsMissing(t *testing.T) {
	run := func(mark func(s *collector.Sample, m int)) []HourRecord {
		h := NewHistory(oneBox(t, 1, 10, false, 0), HistoryOptions{ColdFraction: 1})
		const air = 0.2
		start := time.Date(2025, 1, 6, 0, 0, 0, 0, time.UTC)
		for m := 0; m < 2*24*60; m++ {
			at := start.Add(time.Duration(m) * time.Minute)
			s := collector.Sample{Terminal: 0, At: at, AirflowM3s: air, SupplyC: 13, DischargeC: 30, FanOn: true, PlantOn: true,
				Occupied: at.Hour() >= 7 && at.Hour() < 17, ValveFrac: 1, OutdoorC: -5, ZoneC: 20, ZoneSetC: 21}
			mark(&s, m)
			h.Add([]collector.Sample{s})
		}
		return h.Hours(0)
	}
	bad := func(m int) (zone, set bool) { return m%7 == 3, m%11 == 5 }
	got := run(func(s *collector.Sample, m int) {
		z, sp := bad(m)
		if z {
			s.ZoneC = -40
		}
		if sp {
			s.ZoneSetC = 70
		}
	})
	want := run(func(s *collector.Sample, m int) {
		z, sp := bad(m)
		if z {
			s.Flags |= collector.FlagZone
		}
		if sp {
			s.Flags |= collector.FlagZoneSet
		}
	})
	if len(got) == 0 || len(got) != len(want) {
		t.Fatalf("%d hour records, want %d (and some)", len(got), len(want))
	}
	for i := range got {
		g, w := got[i], want[i]
		if g.ZoneC != w.ZoneC || g.ZoneSetC != w.ZoneSetC || math.IsNaN(g.ZoneC) || math.Abs(g.ZoneC-20) > 1e-9 {
			t.Errorf("hour %v: zone %.3f / setpoint %.3f °C, want %.3f / %.3f (the readings in range only)", g.Start, g.ZoneC, g.ZoneSetC, w.ZoneC, w.ZoneSetC)
		}
	}
}
