package coilmodel

import (
	"errors"
	"math"
	"testing"

	"risewatch/units"
)

func TestCalibrateReproducesRatedPoint(t *testing.T) {
	c := mustPreset(t, 12, 2, 10, false)
	// An invented submittal rated point: 38 MBH at 600 scfm, 2 gpm, 55 °F air, 180 °F water.
	rp := RatedPoint{CapacityW: units.MBHToW(38), AirflowM3s: units.CFMToM3s(600), EnteringAirC: units.FToC(55),
		WaterFlowM3s: units.GPMToM3s(2), EnteringWaterC: units.FToC(180)}
	cal, rep, err := Calibrate(c, rp)
	if err != nil {
		t.Fatal(err)
	}
	r := mustRate(t, cal, Operating{AirflowM3s: rp.AirflowM3s, AirDensityKgM3: StandardAirDensity, EnteringAirC: rp.EnteringAirC,
		WaterFlowM3s: rp.WaterFlowM3s, EnteringWaterC: rp.EnteringWaterC})
	if relErr(r.CapacityW, rp.CapacityW) > 1e-6 || cal.UAMultiplier != rep.UAMultiplier {
		t.Errorf("calibrated %.2f W vs rated %.2f W (multiplier %g)", r.CapacityW, rp.CapacityW, rep.UAMultiplier)
	}
	if math.Abs(rep.DeviationFrac-(rep.ModelCapacityW/rep.RatedCapacityW-1)) > 1e-12 || rep.ModelCapacityW <= 0 {
		t.Errorf("report %+v", rep)
	}
	// A rating the coil cannot reach at any UA is not identifiable.
	rp.CapacityW = units.MBHToW(400)
	if _, _, err := Calibrate(c, rp); !errors.Is(err, ErrNotIdentifiable) {
		t.Errorf("impossible rating: %v", err)
	}
}

func TestInversionRoundTrips(t *testing.T) {
	// Rate, then invert: the UA multiplier and the water flow come back within 0.1 %.
	for _, rows := range []int{1, 2, 4} {
		base := mustPreset(t, 10, rows, 10, false)
		for _, mult := range []float64{0.3, 0.8, 1, 1.4} {
			for _, gpm := range []float64{0.08, 0.4, 1.5, 4} {
				c := base
				c.UAMultiplier = mult
				op := ipOp(450, 55, gpm, 180)
				r := mustRate(t, c, op)
				gotM, err := InvertUA(c, op, r.LeavingAirC)
				if err != nil || relErr(gotM, mult) > 1e-3 {
					t.Errorf("%d rows %g gpm: UA multiplier %g → %g (%v)", rows, gpm, mult, gotM, err)
				}
				opGuess := op
				opGuess.WaterFlowM3s = op.WaterFlowM3s * 3 // the solver must not depend on the guess
				gotQ, err := InvertWaterFlow(c, opGuess, r.LeavingAirC)
				if err != nil || relErr(gotQ, op.WaterFlowM3s) > 1e-3 {
					t.Errorf("%d rows mult %g: water %g gpm → %g gpm (%v)", rows, mult, gpm, units.M3sToGPM(gotQ), err)
				}
			}
		}
	}
}

func TestInversionNotIdentifiable(t *testing.T) {
	c := mustPreset(t, 12, 1, 10, false)
	op := ipOp(600, 55, 1, 180)
	r := mustRate(t, c, op)
	k, _ := NewCalibrated(c)
	// Rise beyond what unlimited UA can give at this water flow (water-limited maximum):
	// P_a cannot exceed 1/R, nor reach the entering water temperature.
	maxRise := (op.EnteringWaterC - op.EnteringAirC) / r.RAir
	cases := []struct {
		name string
		lat  float64
	}{
		{"negative rise", op.EnteringAirC - 2},
		{"zero rise", op.EnteringAirC},
		{"above water-limited maximum", op.EnteringAirC + math.Min(maxRise, op.EnteringWaterC-op.EnteringAirC)*1.01},
		{"above entering water", op.EnteringWaterC + 1},
		{"NaN", math.NaN()},
	}
	for _, tc := range cases {
		if _, err := k.InvertUA(op, tc.lat); err == nil || (tc.name != "NaN" && !errors.Is(err, ErrNotIdentifiable)) {
			t.Errorf("InvertUA %s: %v", tc.name, err)
		}
	}
	if _, err := k.InvertWaterFlow(op, op.EnteringAirC-1); !errors.Is(err, ErrNotIdentifiable) {
		t.Errorf("InvertWaterFlow negative rise: %v", err)
	}
	// More rise than the coil gives at any water flow (air-side limited).
	inf := op
	inf.WaterFlowM3s = 0.01
	rInf := mustRate(t, c, inf)
	if _, err := k.InvertWaterFlow(op, rInf.LeavingAirC+1); !errors.Is(err, ErrNotIdentifiable) {
		t.Errorf("InvertWaterFlow above air-side limit: %v", err)
	}
	// No driving temperature difference.
	cold := op
	cold.EnteringWaterC = cold.EnteringAirC + 0.1
	if _, err := k.InvertUA(cold, cold.EnteringAirC+0.05); !errors.Is(err, ErrNotIdentifiable) {
		t.Errorf("no driving ΔT: %v", err)
	}
}

func TestCalibratedMatchesRate(t *testing.T) {
	c := mustPreset(t, 8, 2, 12, false)
	c.UAMultiplier = 0.9
	k, err := NewCalibrated(c)
	if err != nil {
		t.Fatal(err)
	}
	if k.Coil() != c || k.UAMultiplier() != 0.9 {
		t.Errorf("Coil() %+v", k.Coil())
	}
	for _, gpm := range []float64{0, 0.1, 1, 3} {
		op := ipOp(300, 55, gpm, 160)
		r := mustRate(t, c, op)
		if rise := k.ExpectedRise(op); math.Abs(rise-(r.LeavingAirC-op.EnteringAirC)) > 1e-12 {
			t.Errorf("%g gpm: ExpectedRise %.9f vs Rate %.9f", gpm, rise, r.LeavingAirC-op.EnteringAirC)
		}
		c2 := c
		c2.UAMultiplier = 0.5
		r2 := mustRate(t, c2, op)
		if a, b := k.WithUAMultiplier(0.5).ExpectedRise(op), r2.LeavingAirC-op.EnteringAirC; math.Abs(a-b) > 1e-12 {
			t.Errorf("WithUAMultiplier: %.9f vs %.9f", a, b)
		}
		op2 := op
		op2.WaterFlowM3s *= 0.7
		r3 := mustRate(t, c2, op2)
		if a, b := k.ExpectedRiseWith(op, 0.5, 0.7), r3.LeavingAirC-op.EnteringAirC; math.Abs(a-b) > 1e-12 {
			t.Errorf("ExpectedRiseWith: %.9f vs %.9f", a, b)
		}
	}
	if k.Coil().UAMultiplier != 0.9 {
		t.Error("WithUAMultiplier changed the original")
	}
}

func TestRiseAndGrad(t *testing.T) {
	k, _ := NewCalibrated(mustPreset(t, 12, 2, 10, false))
	op := ipOp(500, 55, 1.5, 170)
	rise, dA, dEAT, dEWT, dW := k.RiseAndGrad(op)
	if rise != k.ExpectedRise(op) {
		t.Errorf("rise %g vs %g", rise, k.ExpectedRise(op))
	}
	// Signs every practitioner expects; magnitudes against coarse differences.
	if !(dA < 0 && dEAT < 0 && dEWT > 0 && dW > 0) {
		t.Errorf("gradient signs: %g %g %g %g", dA, dEAT, dEWT, dW)
	}
	h := 0.01 * op.WaterFlowM3s
	up, dn := op, op
	up.WaterFlowM3s += h
	dn.WaterFlowM3s -= h
	if coarse := (k.ExpectedRise(up) - k.ExpectedRise(dn)) / (2 * h); relErr(dW, coarse) > 1e-3 {
		t.Errorf("dRise/dWater %g vs coarse %g", dW, coarse)
	}
	// Rise is proportional to EWT − EAT at fixed effectiveness, so dEWT ≈ P_a.
	r, _ := k.Rate(op)
	if relErr(dEWT, r.Effectiveness) > 0.05 { // properties shift it a little
		t.Errorf("dRise/dEWT %g vs P_a %g", dEWT, r.Effectiveness)
	}
}
