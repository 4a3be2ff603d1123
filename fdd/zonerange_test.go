package fdd

import (
	"math"
	"testing"
	"time"

	"risewatch/collector"
)

// TestImplausibleZoneIsMissing: zone temperatures and setpoints outside the
// plausibility ranges (an open room sensor reading -40 °C, a shorted one at
// 150 °C, a setpoint in °F read as °C, NaN) must not enter the zone-deficit
// evidence: the run gives exactly what the same run with those readings
// flagged missing gives.
func TestImplausibleZoneIsMissing(t *testing.T) {
	s := testSite(t, 1, true)
	bad := [][2]float64{{-40, 21}, {150, 21}, {20, 70}, {math.NaN(), 21}, {20, math.Inf(1)}}
	run := func(flagBad bool) []float64 {
		en, err := NewEngine(s, DefaultConfig())
		if err != nil {
			t.Fatal(err)
		}
		g := newGen(t, fNone, 7, t0.Add(48*time.Hour))
		var out []Evidence
		var def []float64
		for k := 0; k < 30*60; k++ {
			smp := []collector.Sample{g.sample(0, t0.Add(time.Duration(k)*time.Minute), 0)}
			smp[0].Flags &^= collector.FlagZone | collector.FlagZoneSet
			smp[0].ZoneC, smp[0].ZoneSetC = 20.5, 21
			if k%3 == 0 {
				b := bad[(k/3)%len(bad)]
				smp[0].ZoneC, smp[0].ZoneSetC = b[0], b[1]
				if flagBad {
					smp[0].Flags |= collector.FlagZone
				}
			}
			out = en.Step(smp, out[:0])
			def = append(def, out[0].ZoneDeficitK)
		}
		return def
	}
	got, want := run(false), run(true)
	seen := false
	for k := range got {
		if !(got[k] == want[k] || math.IsNaN(got[k]) && math.IsNaN(want[k])) {
			t.Fatalf("minute %d: zone deficit %v with implausible zone readings, %v with them flagged missing", k, got[k], want[k])
		}
		if !math.IsNaN(got[k]) {
			seen = true
			if math.Abs(got[k]-0.5) > 1e-9 {
				t.Fatalf("minute %d: zone deficit %v K, want 0.5 (setpoint 21, zone 20.5)", k, got[k])
			}
		}
	}
	if !seen {
		t.Fatal("no zone deficit published in 30 h: the test exercises nothing")
	}
}
