package fdd

import (
	"math"
	"reflect"
	"testing"
	"time"

	"risewatch/collector"
)

// TestEvidenceWrittenInPlace: Step writes every field of the evidence in
// the caller's backing array (it does not start from a cleared value), on
// every path — data gates, fan off, start-up, unsteady, steady with and
// without the model, closed valve. Two engines see the same samples; one
// writes into a slice whose backing array is filled with poison values
// before every step. Their evidence must be identical, NaN for NaN.
func TestEvidenceWrittenInPlace(t *testing.T) {
	const nTerm = 10
	faults := []fault{fNone, fLeak, fFouled, fStarved, fHunting, fOffset, fStuck, fReversed, fFailed, fColdLoop}
	s := testSite(t, nTerm, true)
	s.Terminals[nTerm-1].Valve.Cv = 0 // no water-flow model: GateNoModel path
	gens := make([]*gen, nTerm)
	for i := range gens {
		gens[i] = newGen(t, faults[i], uint64(i+1), t0.Add(6*time.Hour))
	}
	cfg := DefaultConfig()
	clean, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	dirty, err := NewEngine(s, cfg)
	if err != nil {
		t.Fatal(err)
	}
	smp := make([]collector.Sample, nTerm)
	poisoned := make([]Evidence, nTerm)
	var a, b []Evidence
	steps := 50 * 60 // 50 h: night, start-up, learning and its end, plant off with the fan on
	if testing.Short() {
		steps = 8 * 60
	}
	for k := 0; k < steps; k++ {
		at := t0.Add(time.Duration(k) * time.Minute)
		for i, g := range gens {
			smp[i] = g.sample(i, at, i)
			switch (k + 7*i) % 97 { // data gates now and then
			case 0:
				smp[i].Flags |= collector.FlagAirflow
			case 1:
				smp[i].DischargeC = math.NaN()
			case 2:
				smp[i].Flags &^= collector.FlagZone | collector.FlagZoneSet
				smp[i].ZoneC, smp[i].ZoneSetC = 20, 21
			}
		}
		for i := range poisoned {
			poison(&poisoned[i], k)
		}
		a = clean.Step(smp, a[:0])
		b = dirty.Step(smp, poisoned[:0])
		if len(a) != len(b) {
			t.Fatalf("step %d: %d and %d evidences", k, len(a), len(b))
		}
		for i := range a {
			if f := firstDifference(&a[i], &b[i]); f != "" {
				t.Fatalf("step %d terminal %d: field %s differs with a poisoned output slice: %v",
					k, i, f, reflect.ValueOf(b[i]).FieldByName(f))
			}
		}
	}
}

// poison fills every field of e with a value no path produces.
func poison(e *Evidence, k int) {
	v := reflect.ValueOf(e).Elem()
	for i := 0; i < v.NumField(); i++ {
		f := v.Field(i)
		if !f.CanSet() {
			continue // the padding
		}
		switch f.Kind() {
		case reflect.Float64:
			f.SetFloat(-1234.5 - float64(k))
		case reflect.Bool:
			f.SetBool(k%2 == 0)
		case reflect.Int:
			f.SetInt(-77)
		case reflect.Uint32:
			f.SetUint(0xdead)
		case reflect.Array:
			for j := 0; j < f.Len(); j++ {
				f.Index(j).SetFloat(9.5)
			}
		case reflect.Struct: // time.Time
			f.Set(reflect.ValueOf(time.Unix(1, 0)))
		}
	}
}

// firstDifference names the first field where a and b differ (NaN equals NaN).
func firstDifference(a, b *Evidence) string {
	return firstFieldDifference(a, b, func(p, q float64) bool { return p == q || (math.IsNaN(p) && math.IsNaN(q)) })
}

// firstFieldDifference names the first field (or array element's field)
// where a and b differ, floats compared by sameFloat, the rest by ==.
func firstFieldDifference(a, b *Evidence, sameFloat func(p, q float64) bool) string {
	va, vb := reflect.ValueOf(a).Elem(), reflect.ValueOf(b).Elem()
	same := func(x, y reflect.Value) bool {
		if x.Kind() == reflect.Float64 {
			return sameFloat(x.Float(), y.Float())
		}
		return x.Equal(y)
	}
	for i := 0; i < va.NumField(); i++ {
		if !va.Type().Field(i).IsExported() {
			continue // the padding
		}
		fa, fb := va.Field(i), vb.Field(i)
		if fa.Kind() == reflect.Array {
			for j := 0; j < fa.Len(); j++ {
				if !same(fa.Index(j), fb.Index(j)) {
					return va.Type().Field(i).Name
				}
			}
			continue
		}
		if !same(fa, fb) {
			return va.Type().Field(i).Name
		}
	}
	return ""
}
