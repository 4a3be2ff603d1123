package coilmodel

import (
	"errors"
	"math"
	"testing"
)

// FuzzRate: for any input Rate either returns an error or a finite rating
// whose energy balance closes; it never panics. Geometry comes from a preset
// perturbed by the fuzzer, so most inputs are valid coils.
func FuzzRate(f *testing.F) {
	f.Add(uint8(5), uint8(2), 10.0, false, 0.2, 12.8, 1.2e-4, 82.0, 1.0, 1.0, uint8(1), 0.0)
	f.Add(uint8(0), uint8(1), 8.0, true, 0.0, -10.0, 0.0, 50.0, 0.5, 2.0, uint8(2), 1e-4)
	f.Add(uint8(7), uint8(4), 14.0, false, 3.0, 40.0, 1e-6, 110.0, 3.0, 0.3, uint8(9), 0.0)
	f.Add(uint8(3), uint8(3), 0.0, true, 1e-9, 55.0, 0.5, 1.0, 0.0, -1.0, uint8(0), math.NaN())
	f.Fuzz(func(t *testing.T, inlet, rows uint8, fpi float64, oversized bool, airflow, eat, water, ewt, widthScale, pitchScale float64, circuits uint8, fouling float64) {
		inlets := PresetInlets()
		c, err := Preset(inlets[int(inlet)%len(inlets)], 1+int(rows)%4, math.Mod(math.Abs(fpi), 30), oversized)
		if err != nil {
			return
		}
		c.FaceWidthM *= widthScale
		c.TransversePitchM *= pitchScale
		c.Circuits = int(circuits)
		c.FoulingWaterM2KW = fouling
		op := Operating{AirflowM3s: airflow, EnteringAirC: eat, WaterFlowM3s: water, EnteringWaterC: ewt}
		r, err := Rate(c, op)
		if err != nil {
			return
		}
		for name, v := range map[string]float64{"capacity": r.CapacityW, "LAT": r.LeavingAirC, "LWT": r.LeavingWaterC,
			"air dp": r.AirDropPa, "water dp": r.WaterDropPa, "UA": r.UAWK, "P": r.Effectiveness} {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("%s = %g for %+v at %+v", name, v, c, op)
			}
		}
		if r.AirDropPa < 0 || r.WaterDropPa < 0 || r.Effectiveness < 0 || r.Effectiveness > 1+1e-9 {
			t.Fatalf("out of range: %+v", r)
		}
		// leaving temperatures between the inlets
		lo, hi := math.Min(eat, ewt)-1e-6, math.Max(eat, ewt)+1e-6
		if r.LeavingAirC < lo || r.LeavingAirC > hi || r.LeavingWaterC < lo || r.LeavingWaterC > hi {
			t.Fatalf("leaving temperatures outside the inlets: %+v for %+v", r, op)
		}
		k, err := NewCalibrated(c)
		if err != nil {
			t.Fatalf("NewCalibrated rejected a coil Rate accepted: %v", err)
		}
		if rise := k.ExpectedRise(op); math.Abs(rise-(r.LeavingAirC-eat)) > 1e-9*math.Max(1, math.Abs(rise)) {
			t.Fatalf("ExpectedRise %g vs Rate %g", rise, r.LeavingAirC-eat)
		}
	})
}

// FuzzInvert: an inversion either reproduces the observed leaving air (the
// rating at the returned multiplier or flow gives it back) or says why not
// with ErrNotIdentifiable; it never panics or returns NaN.
func FuzzInvert(f *testing.F) {
	f.Add(uint8(5), uint8(2), 0.2, 12.8, 1.2e-4, 82.0, 1.0, 2.0)
	f.Add(uint8(1), uint8(1), 0.05, -5.0, 1e-6, 45.0, 0.2, -3.0)
	f.Add(uint8(7), uint8(4), 1.5, 30.0, 5e-4, 110.0, 3.0, 0.5)
	f.Fuzz(func(t *testing.T, inlet, rows uint8, airflow, eat, water, ewt, mult, latOffset float64) {
		inlets := PresetInlets()
		c, err := Preset(inlets[int(inlet)%len(inlets)], 1+int(rows)%4, 10, false)
		if err != nil {
			t.Fatal(err)
		}
		c.UAMultiplier = mult
		op := Operating{AirflowM3s: airflow, EnteringAirC: eat, WaterFlowM3s: water, EnteringWaterC: ewt}
		k, err := NewCalibrated(c)
		if err != nil || op.Validate() != nil || math.IsNaN(latOffset) || math.IsInf(latOffset, 0) {
			return
		}
		r, err := k.Rate(op)
		if err != nil {
			return
		}
		obs := r.LeavingAirC + latOffset
		if m, err := k.InvertUA(op, obs); err == nil {
			if math.IsNaN(m) || m <= 0 {
				t.Fatalf("InvertUA returned %g", m)
			}
			if got := op.EnteringAirC + k.WithUAMultiplier(m).ExpectedRise(op); math.Abs(got-obs) > 1e-6*math.Max(1, math.Abs(obs-op.EnteringAirC)) {
				t.Fatalf("InvertUA %g gives LAT %.9f, observed %.9f", m, got, obs)
			}
		} else if !errors.Is(err, ErrNotIdentifiable) {
			t.Fatalf("InvertUA: unexpected error kind: %v", err)
		}
		if q, err := k.InvertWaterFlow(op, obs); err == nil {
			o := op
			o.WaterFlowM3s = q
			if got := op.EnteringAirC + k.ExpectedRise(o); math.IsNaN(q) || math.Abs(got-obs) > 1e-6*math.Max(1, math.Abs(obs-op.EnteringAirC)) {
				t.Fatalf("InvertWaterFlow %g gives LAT %.9f, observed %.9f", q, got, obs)
			}
		} else if !errors.Is(err, ErrNotIdentifiable) {
			t.Fatalf("InvertWaterFlow: unexpected error kind: %v", err)
		}
	})
}
