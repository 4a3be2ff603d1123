package fdd

import (
	"testing"

	"risewatch/coilmodel"
)

// Terminals with identical coil data share one calibrated coil model; a
// terminal whose coil differs gets its own. Rises are the same as from a
// model built for the terminal alone.
func TestEngineSharesIdenticalCoils(t *testing.T) {
	s := testSite(t, 3, false)
	s.Terminals[2].Coil.Rows++
	en, err := NewEngine(s, Config{})
	if err != nil {
		t.Fatal(err)
	}
	model := func(i int) *coilmodel.Calibrated {
		p, ok := en.terms[i].phys.(calibratedPhysics)
		if !ok {
			t.Fatalf("terminal %d: physics %T, want calibratedPhysics", i, en.terms[i].phys)
		}
		return p.k
	}
	if model(0) != model(1) {
		t.Errorf("terminals 0 and 1 have identical coils but separate models")
	}
	if model(0) == model(2) {
		t.Errorf("terminal 2 has one more row but shares terminal 0's model")
	}
	op := coilmodel.Operating{AirflowM3s: 0.2, EnteringAirC: 14, WaterFlowM3s: 5e-5, EnteringWaterC: 75}
	for i := range s.Terminals {
		alone, _, err := buildPhysics(&s.Terminals[i], &s.Loops[0], nil)
		if err != nil {
			t.Fatal(err)
		}
		r1, err := alone.withUA(1.1)
		if err != nil {
			t.Fatal(err)
		}
		r2, err := en.terms[i].phys.withUA(1.1)
		if err != nil {
			t.Fatal(err)
		}
		if a, b := r1.ExpectedRise(op), r2.ExpectedRise(op); a != b || !(a > 0) {
			t.Errorf("terminal %d: rise %v with the shared model, %v alone", i, b, a)
		}
	}
}
