package coilmodel

import (
	"testing"

	"risewatch/units"
)

// Practitioner facts (common practice), on the common-practice presets.

func mustPreset(t *testing.T, inlet float64, rows int, fpi float64, oversized bool) Coil {
	t.Helper()
	c, err := Preset(inlet, rows, fpi, oversized)
	if err != nil {
		t.Fatalf("Preset(%g, %d, %g, %v): %v", inlet, rows, fpi, oversized, err)
	}
	return c
}

func TestPresetSizes(t *testing.T) {
	// Common practice: a 12 in inlet box has about a 15 × 15 in discharge and an
	// oversized cabinet about 16-17 in.
	c := mustPreset(t, 12, 1, 10, false)
	if w, h := units.MToIn(c.FaceWidthM), units.MToIn(c.FaceHeightM); w < 14 || w > 16 || h < 14 || h > 16 {
		t.Errorf("12 in standard face %.2f × %.2f in", w, h)
	}
	o := mustPreset(t, 12, 1, 10, true)
	if w, h := units.MToIn(o.FaceWidthM), units.MToIn(o.FaceHeightM); w < 16 || w > 17.5 || h < 16 || h > 17.5 {
		t.Errorf("12 in oversized face %.2f × %.2f in", w, h)
	}
	prev := 0.0
	for _, in := range PresetInlets() {
		c := mustPreset(t, in, 2, 10, false)
		if c.FaceAreaM2() <= prev {
			t.Errorf("%g in preset face %.3f m² not larger than the smaller inlet's", in, c.FaceAreaM2())
		}
		prev = c.FaceAreaM2()
	}
	if _, err := Preset(11, 1, 10, false); err == nil {
		t.Error("11 in inlet accepted")
	}
	if _, err := Preset(12, 0, 10, false); err == nil {
		t.Error("0 rows accepted")
	}
}

// Common practice: each added row adds capacity and air pressure drop.
func TestMoreRowsMoreCapacityMoreAirDrop(t *testing.T) {
	op := ipOp(500, 55, 2, 180)
	prev := Rating{}
	for rows := 1; rows <= 4; rows++ {
		r := mustRate(t, mustPreset(t, 12, rows, 10, false), op)
		if rows > 1 && (r.CapacityW <= prev.CapacityW || r.AirDropPa <= prev.AirDropPa) {
			t.Errorf("%d rows: %.0f W %.1f Pa, %d rows: %.0f W %.1f Pa", rows, r.CapacityW, r.AirDropPa, rows-1, prev.CapacityW, prev.AirDropPa)
		}
		prev = r
	}
}

// Common practice: more parallel circuits lower the water pressure drop at the same flow.
func TestMoreCircuitsLowerWaterDrop(t *testing.T) {
	op := ipOp(1200, 55, 4, 180)
	one := mustPreset(t, 16, 2, 10, false)
	one.Circuits = 1
	prev := mustRate(t, one, op)
	for _, n := range []int{2, 7} {
		c := one
		c.Circuits = n
		r := mustRate(t, c, op)
		if r.WaterDropPa >= prev.WaterDropPa {
			t.Errorf("%d circuits: %.0f Pa not below %.0f Pa", n, r.WaterDropPa, prev.WaterDropPa)
		}
		prev = r
	}
}

// Common practice: 12 FPI gives more capacity and more air pressure drop than 10 FPI.
func TestTwelveFPIBeatsTen(t *testing.T) {
	op := ipOp(500, 55, 2, 180)
	for rows := 1; rows <= 2; rows++ {
		ten := mustRate(t, mustPreset(t, 12, rows, 10, false), op)
		twelve := mustRate(t, mustPreset(t, 12, rows, 12, false), op)
		if twelve.CapacityW <= ten.CapacityW || twelve.AirDropPa <= ten.AirDropPa {
			t.Errorf("%d rows: 12 FPI %.0f W %.1f Pa vs 10 FPI %.0f W %.1f Pa", rows, twelve.CapacityW, twelve.AirDropPa, ten.CapacityW, ten.AirDropPa)
		}
	}
}

// Common practice: 120 °F water on the same coil gives roughly half the capacity of 180 °F.
func TestLowTemperatureWaterMuchLessCapacity(t *testing.T) {
	// 120 °F water on a coil selected for 180 °F gives much less heat: the
	// driving difference falls from 125 to 65 °F at 55 °F air.
	c := mustPreset(t, 12, 2, 10, false)
	hot := mustRate(t, c, ipOp(500, 55, 2, 180))
	warm := mustRate(t, c, ipOp(500, 55, 2, 120))
	if ratio := warm.CapacityW / hot.CapacityW; ratio > 0.6 || ratio < 0.4 {
		t.Errorf("120 °F/180 °F capacity ratio %.2f, expected about half", ratio)
	}
}

// Common practice: an oversized face at equal capacity needs less water.
func TestOversizedFaceAtEqualCapacity(t *testing.T) {
	// At the same airflow and capacity, an oversized face needs less water and
	// returns it colder, with lower air and water pressure drops.
	std := mustPreset(t, 12, 2, 10, false)
	big := mustPreset(t, 12, 2, 10, true)
	op := ipOp(600, 55, 2, 180)
	rs := mustRate(t, std, op)
	q, err := InvertWaterFlow(big, op, rs.LeavingAirC)
	if err != nil {
		t.Fatal(err)
	}
	opBig := op
	opBig.WaterFlowM3s = q
	rb := mustRate(t, big, opBig)
	if relErr(rb.CapacityW, rs.CapacityW) > 1e-4 {
		t.Fatalf("capacities differ: %.1f vs %.1f W", rb.CapacityW, rs.CapacityW)
	}
	if !(q < op.WaterFlowM3s && rb.LeavingWaterC < rs.LeavingWaterC && rb.AirDropPa < rs.AirDropPa && rb.WaterDropPa < rs.WaterDropPa) {
		t.Errorf("oversized: %.2f gpm LWT %.1f °F air %.1f Pa water %.0f Pa; standard: %.2f gpm LWT %.1f °F air %.1f Pa water %.0f Pa",
			units.M3sToGPM(q), units.CToF(rb.LeavingWaterC), rb.AirDropPa, rb.WaterDropPa,
			units.M3sToGPM(op.WaterFlowM3s), units.CToF(rs.LeavingWaterC), rs.AirDropPa, rs.WaterDropPa)
	}
}

func TestAirDropMagnitude(t *testing.T) {
	// Common practice: 1-2 row heating coils at about 500 fpm drop of order
	// 0.05-0.25 in. w.g.
	for rows := 1; rows <= 2; rows++ {
		c := mustPreset(t, 12, rows, 10, false)
		faceFt2 := c.FaceAreaM2() / (units.MetrePerFoot * units.MetrePerFoot)
		r := mustRate(t, c, ipOp(500*faceFt2, 55, 2, 180)) // 500 fpm face velocity
		if in := units.PaToInWC(r.AirDropPa); in < 0.04 || in > 0.25 {
			t.Errorf("%d rows at 500 fpm: %.3f in. w.g.", rows, in)
		}
	}
}
