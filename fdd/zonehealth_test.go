package fdd

import (
	"math"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// zoneScript is what the zone readings of one minute of TestZoneHealth are.
type zoneScript struct {
	from, to   int     // minutes [from, to)
	zone, set  float64 // readings (NaN: missing, flagged)
	boxMissing bool    // the box's airflow and valve missing too (controller down)
}

// TestZoneHealth: the zone sensor runs count minutes of a present reading
// outside its plausibility range (an open room sensor at −40 °C, a shorted
// one at 120 °C, a setpoint of 80 °C) and of a missing reading of a
// configured point while the box reports, hold while the whole box is
// missing, and return to 0 on the first plausible reading. A terminal
// without zone points counts only present implausible readings, never a
// missing one. The coil evidence (gates, scores, every other field) is the
// same as with plausible zone readings throughout.
func TestZoneHealth(t *testing.T) {
	s := testSite(t, 2, true)
	s.Terminals[0].Points.ZoneTemp = site.PointRef{Name: "VAV-A0.ZNT", Kind: site.PointTrendColumn}
	s.Terminals[0].Points.ZoneSetpoint = site.PointRef{Name: "VAV-A0.ZNSP", Kind: site.PointTrendColumn}
	nan := math.NaN()
	// From 07:00, with the fan on (schedule: 06:00-20:00).
	const start = 7 * 60
	script := []zoneScript{
		{0, 40, -40, 21, false},   // open sensor
		{40, 50, 20.5, 21, false}, // recovered
		{50, 80, 120, 80, false},  // shorted sensor, setpoint in the wrong unit
		{80, 95, nan, 21, false},  // missing while configured, box reporting
		{95, 105, nan, 21, true},  // missing with the box's points: holds
		{105, 110, nan, 21, false},
		{110, 140, 20.5, 21, false},
	}
	reading := func(k int) zoneScript {
		for _, z := range script {
			if k >= z.from && k < z.to {
				return z
			}
		}
		t.Fatalf("minute %d not scripted", k)
		return zoneScript{}
	}
	// Expected runs (minutes, Step 1 min) per terminal after minute k.
	var wantZone, wantSet [2]int
	expect := func(k int) {
		z := reading(k)
		for i := range 2 {
			configured := i == 0
			switch {
			case z.zone >= collector.ZoneMinC && z.zone <= collector.ZoneMaxC:
				wantZone[i] = 0
			case !math.IsNaN(z.zone) || configured && !z.boxMissing:
				wantZone[i]++
			}
			switch {
			case z.set >= collector.ZoneSetMinC && z.set <= collector.ZoneSetMaxC:
				wantSet[i] = 0
			default:
				wantSet[i]++
			}
		}
	}

	run := func(bad bool) [][2]Evidence {
		en, err := NewEngine(s, DefaultConfig())
		if err != nil {
			t.Fatal(err)
		}
		gens := []*gen{newGen(t, fNone, 3, t0.Add(48*time.Hour)), newGen(t, fNone, 4, t0.Add(48*time.Hour))}
		var out [][2]Evidence
		for k := -start; k < script[len(script)-1].to; k++ {
			var smp []collector.Sample
			for i, g := range gens {
				x := g.sample(i, t0.Add(time.Duration(k+start)*time.Minute), i)
				x.Flags &^= collector.FlagZone | collector.FlagZoneSet
				x.ZoneC, x.ZoneSetC = 20.5, 21
				if k >= 0 && reading(k).boxMissing { // in both runs
					x.Flags |= collector.FlagAirflow | collector.FlagValve
				}
				if bad && k >= 0 {
					z := reading(k)
					x.ZoneC, x.ZoneSetC = z.zone, z.set
					if math.IsNaN(z.zone) {
						x.Flags |= collector.FlagZone
					}
				}
				smp = append(smp, x)
			}
			ev := en.StepView(smp)
			if k >= 0 {
				out = append(out, [2]Evidence{ev[0], ev[1]})
			}
		}
		return out
	}
	good, bad := run(false), run(true)
	usableBad := 0
	for k := range bad {
		expect(k)
		z := reading(k)
		for i := range 2 {
			e, g := &bad[k][i], &good[k][i]
			if e.ZoneBadMinutes != float64(wantZone[i]) || e.ZoneSetBadMinutes != float64(wantSet[i]) {
				t.Fatalf("minute %d terminal %d (zone %v, setpoint %v): zone_bad_min %v, zone_set_bad_min %v; want %d, %d",
					k, i, z.zone, z.set, e.ZoneBadMinutes, e.ZoneSetBadMinutes, wantZone[i], wantSet[i])
			}
			if !(e.ZoneC == z.zone || math.IsNaN(e.ZoneC) && math.IsNaN(z.zone)) || e.ZoneSetC != z.set {
				t.Fatalf("minute %d terminal %d: zone_c %v, zone_set_c %v; want the readings %v, %v", k, i, e.ZoneC, e.ZoneSetC, z.zone, z.set)
			}
			if g.ZoneBadMinutes != 0 || g.ZoneSetBadMinutes != 0 {
				t.Fatalf("minute %d terminal %d: plausible readings give zone_bad_min %v, zone_set_bad_min %v", k, i, g.ZoneBadMinutes, g.ZoneSetBadMinutes)
			}
			if z.boxMissing {
				continue // a data gate of its own
			}
			if e.Usable && (e.ZoneBadMinutes > 0 || e.ZoneSetBadMinutes > 0) {
				usableBad++
			}
			// Coil evidence: as with plausible readings, less the zone
			// values (the deficit only averages plausible readings, and
			// the loop-short count reads it).
			a, b := *e, *g
			for _, p := range []*Evidence{&a, &b} {
				p.ZoneC, p.ZoneSetC, p.ZoneBadMinutes, p.ZoneSetBadMinutes, p.ZoneDeficitK, p.LoopShort = 0, 0, 0, 0, 0, false
			}
			if f := firstBitDifference(&a, &b); f != "" {
				t.Fatalf("minute %d terminal %d: field %s differs from the run with plausible zone readings", k, i, f)
			}
		}
	}
	if usableBad == 0 {
		t.Fatal("no usable sample with a bad zone reading: the test exercises nothing")
	}
	// The last 30 minutes are plausible again: every run back at 0.
	last := bad[len(bad)-1]
	if last[0].ZoneBadMinutes != 0 || last[1].ZoneBadMinutes != 0 || last[0].ZoneSetBadMinutes != 0 {
		t.Fatalf("runs not reset after recovery: %v %v", last[0].ZoneBadMinutes, last[1].ZoneBadMinutes)
	}
}

// TestZoneBitLimits: the bit-pattern limits of gate's zone test are the
// patterns of the collector's plausibility ranges, and the test agrees
// with collector.ZoneOK and ZoneSetOK wherever it passes (−0 fails it and
// takes the exact path).
func TestZoneBitLimits(t *testing.T) {
	if zoneMaxBits != math.Float64bits(collector.ZoneMaxC) || zoneSetMinBits != math.Float64bits(collector.ZoneSetMinC) ||
		zoneSetSpanBits != math.Float64bits(collector.ZoneSetMaxC)-math.Float64bits(collector.ZoneSetMinC) {
		t.Fatal("zone bit-pattern limits differ from the collector's ranges")
	}
	vals := []float64{math.Inf(-1), -40, -1e-300, math.Copysign(0, -1), 0, 1e-300, 4.999999999999999, 5, 20, 35, 35.00000000000001,
		45, 45.00000000000001, 120, math.Inf(1), math.NaN(), -math.NaN()}
	for _, z := range vals {
		for _, zs := range vals {
			s := collector.Sample{ZoneC: z, ZoneSetC: zs}
			fast := math.Float64bits(z) <= zoneMaxBits && math.Float64bits(zs)-zoneSetMinBits <= zoneSetSpanBits
			exact := s.ZoneOK() && s.ZoneSetOK()
			if fast && !exact {
				t.Errorf("zone %v, setpoint %v: bit test passes, ZoneOK/ZoneSetOK fail", z, zs)
			}
			if !fast && exact && !(z == 0 && math.Signbit(z)) {
				t.Errorf("zone %v, setpoint %v: bit test fails a plausible pair", z, zs)
			}
		}
	}
}

// TestZoneDeficitForgottenWhenStale: while the zone readings are
// implausible the deficit holds its last value, for zoneStaleMinutes; then
// it is forgotten (NaN, as without zone points, so a loop is not judged on
// a room condition of long ago), and the first plausible reading after
// that starts it afresh. A shorter bad run keeps the deficit throughout.
func TestZoneDeficitForgottenWhenStale(t *testing.T) {
	s := testSite(t, 1, true)
	s.Terminals[0].Points.ZoneTemp = site.PointRef{Name: "VAV-A0.ZNT", Kind: site.PointTrendColumn}
	s.Terminals[0].Points.ZoneSetpoint = site.PointRef{Name: "VAV-A0.ZNSP", Kind: site.PointTrendColumn}
	const start = 7 * 60 // 07:00, fan on (schedule 06:00-20:00)
	run := func(badFrom, badTo int) []Evidence {
		en, err := NewEngine(s, DefaultConfig())
		if err != nil {
			t.Fatal(err)
		}
		g := newGen(t, fNone, 3, t0.Add(48*time.Hour))
		var out []Evidence
		for k := -start; k < 120; k++ {
			x := g.sample(0, t0.Add(time.Duration(k+start)*time.Minute), 0)
			x.Flags &^= collector.FlagZone | collector.FlagZoneSet
			x.ZoneC, x.ZoneSetC = 22.5, 21 // a met zone: deficit −1.5 K
			if k >= badFrom && k < badTo {
				x.ZoneC = -40 // open room sensor
			} else if k >= badTo {
				x.ZoneC = 19 // recovered, now 2 K short
			}
			ev := en.StepView([]collector.Sample{x})
			if k >= 0 {
				out = append(out, ev[0])
			}
		}
		return out
	}
	// Step is 1 minute in the test site.
	long := run(10, 10+zoneStaleMinutes+15)
	for k, e := range long {
		d := e.ZoneDeficitK
		switch {
		case k < 10+zoneStaleMinutes-1:
			if math.Abs(d-(-1.5)) > 1e-9 {
				t.Fatalf("minute %d: deficit %v, want the held −1.5 K", k, d)
			}
		case k < 10+zoneStaleMinutes+15:
			if !math.IsNaN(d) {
				t.Fatalf("minute %d (bad run %v min): deficit %v, want NaN (forgotten)", k, e.ZoneBadMinutes, d)
			}
		case k == 10+zoneStaleMinutes+15:
			if d != 2 {
				t.Fatalf("minute %d: first plausible reading gives deficit %v, want 2 K afresh", k, d)
			}
		}
	}
	short := run(10, 10+zoneStaleMinutes-5)
	for k, e := range short[:10+zoneStaleMinutes-5] {
		if math.Abs(e.ZoneDeficitK-(-1.5)) > 1e-9 {
			t.Fatalf("short bad run, minute %d: deficit %v, want the held −1.5 K", k, e.ZoneDeficitK)
		}
	}
	if d := short[len(short)-1].ZoneDeficitK; !(d > 1.5 && d < 2) {
		t.Fatalf("short bad run: deficit at the end %v, want between the old −1.5 and the new 2 K, near 2", d)
	}
}
