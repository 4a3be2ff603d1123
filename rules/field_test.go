package rules

import (
	"math"
	"reflect"
	"testing"
	"unsafe"

	"risewatch/fdd"
)

// Every tagged field read through its compiled offset must equal the value
// reflection sees: a guard against offset mistakes when fdd adds fields.
func TestFieldOffsetsMatchReflection(t *testing.T) {
	for _, typ := range []reflect.Type{reflect.TypeFor[fdd.Evidence](), reflect.TypeFor[fdd.LoopEvidence]()} {
		s, err := buildSchema(typ)
		if err != nil {
			t.Fatal(err)
		}
		v := reflect.New(typ).Elem()
		n := 0
		for i := 0; i < typ.NumField(); i++ {
			f := v.Field(i)
			if !f.CanSet() {
				continue // padding
			}
			switch f.Kind() {
			case reflect.Float64:
				f.SetFloat(float64(i) + 0.25)
			case reflect.Bool:
				f.SetBool(i%2 == 0)
			case reflect.Int:
				f.SetInt(int64(i * 3))
			}
		}
		p := unsafe.Pointer(v.Addr().Pointer())
		for i := 0; i < typ.NumField(); i++ {
			sf := typ.Field(i)
			tag := sf.Tag.Get("rule")
			if tag == "" || tag == "-" {
				continue
			}
			fl, ok := s.fields[tag]
			if !ok {
				t.Errorf("%s: tag %q not in schema", typ.Name(), tag)
				continue
			}
			var want float64
			switch sf.Type.Kind() {
			case reflect.Float64:
				want = v.Field(i).Float()
			case reflect.Bool:
				if v.Field(i).Bool() {
					want = 1
				}
			case reflect.Int:
				want = float64(v.Field(i).Int())
			}
			if got := fl.read(p); got != want {
				t.Errorf("%s.%s: read %v, want %v", typ.Name(), sf.Name, got, want)
			}
			n++
		}
		if n == 0 {
			t.Errorf("%s: no tagged fields", typ.Name())
		}
	}
	// Scores and Best pseudo-fields.
	var e fdd.Evidence
	e.Scores[fdd.KindFouledCoil] = 0.7
	e.Best = fdd.KindFouledCoil
	e.Gates = fdd.GateStale
	s, _ := buildSchema(reflect.TypeFor[fdd.Evidence]())
	p := unsafe.Pointer(&e)
	if s.fields["score.fouled-coil"].read(p) != 0.7 || s.fields["best.fouled-coil"].read(p) != 1 ||
		s.fields["best.hunting"].read(p) != 0 || s.fields["gate_stale"].read(p) != 1 || s.fields["gate_missing"].read(p) != 0 {
		t.Error("pseudo-fields read wrong values")
	}
}

// Evaluating healthy evidence does not allocate (the zero-allocation hot
// path; a property, not a timing).
func TestStepDoesNotAllocate(t *testing.T) {
	e := mustEval(t, testSite(2, 50))
	ev := make([]fdd.Evidence, 100)
	loops := make([]fdd.LoopEvidence, 2)
	out := make([]Transition, 0, 16)
	i := 0
	allocs := testing.AllocsPerRun(200, func() {
		for k := range ev {
			ev[k] = quiet(k, minute(i))
			ev[k].LeakRiseK, ev[k].LeakSigmaK, ev[k].UAFactor, ev[k].FlowFactor = 0.1, 0.3, 1, 1
		}
		for l := range loops {
			loops[l] = fdd.LoopEvidence{Loop: l, At: minute(i), PlantOn: true, SupplyC: 60, ExpectedC: 60, Terminals: 50, ShortFraction: 0, LowSupplyK: 0, Measured: true}
		}
		out = e.Step(ev, loops, out[:0])
		i++
	})
	if allocs != 0 || len(out) != 0 {
		t.Fatalf("%v allocations per step, %d transitions; want 0", allocs, len(out))
	}
	_ = math.NaN
}
