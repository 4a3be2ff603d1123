package coilmodel

import (
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
