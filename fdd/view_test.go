package fdd

import (
	"math"
	"reflect"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// TestStepViewSameAsStep: StepView, which updates the engine's own records
// in place and writes only what may have changed, gives bit for bit the
// evidence and loop evidence of Step, which writes every field. Two engines
// see the same samples over every path (data gates, fan off, start-up,
// steady, learning and its end, the leak inversion, a cold loop whose
// isolation rewrites scores), with the sample order changed and terminals
// missing now and then (records then hold another terminal's evidence),
// and unknown terminal indices. A third engine runs the sharded form
// (StepTerminals, then AggregateLoops, whose loop sums come from the
// records instead of from process) and must agree as well.
func TestStepViewSameAsStep(t *testing.T) {
	const nTerm = 12
	faults := []fault{fColdLoop, fColdLoop, fColdLoop, fColdLoop, fColdLoop, fNone,
		fLeak, fFouled, fHunting, fOffset, fReversed, fFailed}
	s := testSite(t, nTerm, true)
	s.Terminals[nTerm-1].Valve.Cv = 0 // no water-flow model: GateNoModel path
	// Zone points configured on terminals 5-8 (missing readings count
	// there); 9 and 10 carry zone readings without configured points.
	for i := 5; i <= 8; i++ {
		s.Terminals[i].Points.ZoneTemp = site.PointRef{Name: s.Terminals[i].ID + ".ZNT", Kind: site.PointTrendColumn}
		s.Terminals[i].Points.ZoneSetpoint = site.PointRef{Name: s.Terminals[i].ID + ".ZNSP", Kind: site.PointTrendColumn}
	}
	gens := make([]*gen, nTerm)
	for i := range gens {
		gens[i] = newGen(t, faults[i], uint64(i+1), t0.Add(20*time.Hour))
	}
	cfg := DefaultConfig()
	ref, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	view, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	// The sharded form: StepTerminals, then AggregateLoops (accumulate
	// over the records instead of the sums process keeps on the way).
	shard, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	var c []Evidence
	var all, smp []collector.Sample
	var a []Evidence
	steps := 50 * 60
	if testing.Short() {
		steps = 10 * 60
	}
	var cold, reordered, partial int
	// Zone sensors going bad and recovering on an idle record (fan off or
	// data-gated), and bad while active.
	var idleBad, idleRecover, activeBad int
	prevBad := make([]bool, nTerm)
	for k := 0; k < steps; k++ {
		at := t0.Add(time.Duration(k) * time.Minute)
		all = all[:0]
		for i, g := range gens {
			x := g.sample(i, at, i)
			if i >= 5 && i <= 10 {
				zoneSpell(&x, k+53*i)
			}
			switch (k + 7*i) % 97 { // data gates now and then
			case 0:
				x.Flags |= collector.FlagAirflow
			case 1:
				x.DischargeC = math.NaN()
			case 2:
				x.HotWaterC = math.NaN() // the loop has a supply point: GateNoLoop
			}
			all = append(all, x)
		}
		smp = append(smp[:0], all...)
		switch {
		case k%211 == 5: // reversed order for a step
			for i, j := 0, len(smp)-1; i < j; i, j = i+1, j-1 {
				smp[i], smp[j] = smp[j], smp[i]
			}
			reordered++
		case k%157 == 3: // two terminals missing, an unknown one
			smp = append(smp[:2], smp[4:]...)
			smp = append(smp, collector.Sample{Terminal: nTerm + 3, At: at})
			partial++
		case k%389 == 7: // one terminal only
			smp = smp[6:7]
			partial++
		}
		a = ref.Step(smp, a[:0])
		b := view.StepView(smp)
		c = shard.StepTerminals(smp, c[:0])
		shard.AggregateLoops(c)
		if len(a) != len(b) || len(a) != len(c) {
			t.Fatalf("step %d: %d, %d and %d evidences", k, len(a), len(b), len(c))
		}
		for i := range a {
			if ti := a[i].Terminal; ti < nTerm {
				bad := a[i].ZoneBadMinutes > 0 || a[i].ZoneSetBadMinutes > 0
				idle := !a[i].Usable || a[i].Gates&GateFanOff != 0
				switch {
				case idle && bad && !prevBad[ti]:
					idleBad++
				case idle && !bad && prevBad[ti]:
					idleRecover++
				case !idle && bad:
					activeBad++
				}
				prevBad[ti] = bad
			}
			if f := firstBitDifference(&a[i], &b[i]); f != "" {
				t.Fatalf("step %d record %d (terminal %d): field %s: Step %v, StepView %v", k, i, a[i].Terminal, f,
					reflect.ValueOf(a[i]).FieldByName(f), reflect.ValueOf(b[i]).FieldByName(f))
			}
			if f := firstBitDifference(&a[i], &c[i]); f != "" {
				t.Fatalf("step %d record %d (terminal %d): field %s: Step %v, StepTerminals+AggregateLoops %v", k, i, a[i].Terminal, f,
					reflect.ValueOf(a[i]).FieldByName(f), reflect.ValueOf(c[i]).FieldByName(f))
			}
		}
		la, lb, lc := ref.Loops(), view.Loops(), shard.Loops()
		if !reflect.DeepEqual(loopBits(la), loopBits(lb)) {
			t.Fatalf("step %d: loop evidence differs:\n%+v\n%+v", k, la, lb)
		}
		if !reflect.DeepEqual(loopBits(la), loopBits(lc)) {
			t.Fatalf("step %d: loop evidence of Step and of AggregateLoops differs:\n%+v\n%+v", k, la, lc)
		}
		for _, l := range lb {
			if l.Score > 0 {
				cold++
			}
		}
	}
	if cold == 0 || reordered == 0 || partial == 0 {
		t.Errorf("paths not covered: %d cold-loop steps, %d reordered, %d partial", cold, reordered, partial)
	}
	if idleBad == 0 || idleRecover == 0 || activeBad == 0 {
		t.Errorf("zone paths not covered: %d idle records going bad, %d recovering, %d active bad", idleBad, idleRecover, activeBad)
	}
}

// zoneSpell gives a sample zone readings (zone 19 °C below its 21 °C
// heating setpoint, so a short box still counts toward a cold loop) with,
// by m, spells of an open room sensor (−40 °C), a setpoint in °F (70), a
// flagged-missing zone temperature, an unflagged NaN, and a shorted sensor
// (120 °C) with a zero setpoint.
func zoneSpell(x *collector.Sample, m int) {
	x.Flags &^= collector.FlagZone | collector.FlagZoneSet
	x.ZoneC, x.ZoneSetC = 19, 21
	switch p := m % 230; {
	case p < 25:
		x.ZoneC = -40
	case p >= 60 && p < 80:
		x.ZoneSetC = 70
	case p >= 110 && p < 125:
		x.Flags |= collector.FlagZone
		x.ZoneC = math.NaN()
	case p >= 150 && p < 160:
		x.ZoneC = math.NaN()
	case p >= 180 && p < 190:
		x.ZoneC, x.ZoneSetC = 120, 0
	}
}

// firstBitDifference names the first field where a and b differ in their
// bits (floats by IEEE 754 pattern, so 0 and −0 or two NaNs differ too).
func firstBitDifference(a, b *Evidence) string {
	return firstFieldDifference(a, b, func(p, q float64) bool { return math.Float64bits(p) == math.Float64bits(q) })
}

// loopBits is loop evidence with the floats as bit patterns (NaN-safe
// comparison).
func loopBits(ls []LoopEvidence) [][]uint64 {
	var out [][]uint64
	for _, l := range ls {
		v := reflect.ValueOf(l)
		var row []uint64
		for i := 0; i < v.NumField(); i++ {
			switch f := v.Field(i); f.Kind() {
			case reflect.Float64:
				row = append(row, math.Float64bits(f.Float()))
			case reflect.Int:
				row = append(row, uint64(f.Int()))
			case reflect.Bool:
				if f.Bool() {
					row = append(row, 1)
				} else {
					row = append(row, 0)
				}
			case reflect.Struct: // time.Time
				row = append(row, uint64(f.Interface().(time.Time).UnixNano()))
			}
		}
		out = append(out, row)
	}
	return out
}
