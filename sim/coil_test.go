package sim

import (
	"errors"
	"math"
	"testing"

	"risewatch/coilmodel"
	"risewatch/units"
)

// coilGrid is the unfaulted operating grid of the cross-check: the demo's
// box sizes and row counts, airflow from minimum to heating maximum, water
// flow from a third of design to 1.5× design, entering water 120–180 °F.
func coilGrid(t *testing.T, fn func(name string, c coilmodel.Coil, op coilmodel.Operating)) {
	a := &AHUSpec{satAtLowC: units.FToC(60), ductGainK: 0.4, heatSetC: units.FToC(70), datMaxC: units.FToC(90)}
	l := &LoopSpec{supplyAtDesignC: units.FToC(180), designDeltaK: units.DeltaFToK(20), dpSetpointPa: units.PSIToPa(5), designOutdoorC: units.FToC(0)}
	for _, ts := range []TerminalSpec{
		{ID: "8in-1row", InletIn: 8, Rows: 1, FPI: 10, LoadFrac: 0.75, Exposure: "south"},
		{ID: "12in-1row", InletIn: 12, Rows: 1, FPI: 10, LoadFrac: 0.75, Exposure: "south"},
		{ID: "10in-2row", InletIn: 10, Rows: 2, FPI: 10, LoadFrac: 0.75, Exposure: "south"},
		{ID: "14in-2row-oversized", InletIn: 14, Rows: 2, FPI: 12, Oversized: true, LoadFrac: 0.75, Exposure: "south"},
	} {
		d, err := designTerminal(&ts, a, l, coilSegments, airSideCalibration)
		if err != nil {
			t.Fatal(err)
		}
		for _, af := range []float64{d.minM3s, d.heatMax} {
			for _, wf := range []float64{0.33, 0.6, 1, 1.5} {
				for _, ewtF := range []float64{120, 150, 180} {
					fn(ts.ID, d.coil, coilmodel.Operating{AirflowM3s: af, AirDensityKgM3: stdAirDensity,
						EnteringAirC: units.FToC(58), WaterFlowM3s: wf * d.designWaterM3s, EnteringWaterC: units.FToC(ewtF)})
				}
			}
		}
	}
}

// segmentRate runs the simulator's segment model at a coilmodel operating point.
func segmentRate(t *testing.T, c coilmodel.Coil, op coilmodel.Operating) coilResult {
	g, err := newCoilGeom(c, coilSegments)
	if err != nil {
		t.Fatal(err)
	}
	h := newCoilHydraulics(g)
	h.ensure(op.EnteringWaterC)
	circ := make([]float64, g.circuits)
	_, i, w := h.dpAt(op.WaterFlowM3s)
	h.split(op.WaterFlowM3s, i, w, circ)
	for k := range circ {
		circ[k] *= waterDensity(op.EnteringWaterC)
	}
	return newCoilSolver(g, airSideCalibration).solveExact(op.AirflowM3s*stdAirDensity, op.EnteringAirC, circ, op.EnteringWaterC)
}

// TestSegmentModelAgreesWithRate cross-checks two independent methods: the
// simulator's segment march (Gray & Webb air side, annular-fin efficiency,
// Gnielinski/Sieder–Tate water side, circuits split by resistance) against
// the detector's effectiveness-NTU rating (coilmodel.Rate) on the same
// geometry. The 3 % tolerance is the project's acceptance criterion (issue
// "campus simulator"); the correlations themselves scatter ±15 % about
// their data (Wang et al. 2000 abstract), so agreement beyond that is not
// expected of any pair.
func TestSegmentModelAgreesWithRate(t *testing.T) {
	worst := 0.0
	coilGrid(t, func(name string, c coilmodel.Coil, op coilmodel.Operating) {
		r, err := coilmodel.Rate(c, op)
		if err != nil {
			if errors.Is(err, coilmodel.ErrBadGeometry) {
				t.Fatalf("%s: %v", name, err)
			}
			t.Skipf("coilmodel.Rate not usable yet: %v", err)
		}
		s := segmentRate(t, c, op)
		dev := s.HeatW/r.CapacityW - 1
		worst = math.Max(worst, math.Abs(dev))
		if math.Abs(dev) > 0.03 {
			t.Errorf("%s air %.0f cfm water %.2f gpm EWT %.0f F: segment %.0f W, Rate %.0f W (%+.1f %%)",
				name, units.M3sToCFM(op.AirflowM3s), units.M3sToGPM(op.WaterFlowM3s), units.CToF(op.EnteringWaterC),
				s.HeatW, r.CapacityW, 100*dev)
		}
	})
	t.Logf("largest deviation %.2f %%", 100*worst)
}

// TestCoilEnergyBalance: heat gained by the air equals heat lost by the water.
func TestCoilEnergyBalance(t *testing.T) {
	coilGrid(t, func(name string, c coilmodel.Coil, op coilmodel.Operating) {
		s := segmentRate(t, c, op)
		mAir := op.AirflowM3s * stdAirDensity
		airW := mAir * airCp * (s.LeavingAirC - op.EnteringAirC)
		tw := (op.EnteringWaterC + s.LeavingWaterC) / 2
		waterW := op.WaterFlowM3s * waterDensity(op.EnteringWaterC) * waterCp(tw) * (op.EnteringWaterC - s.LeavingWaterC)
		// 0.2 %: the march uses cp at each row's entering water temperature,
		// the check uses cp at the mean.
		if math.Abs(airW/waterW-1) > 0.002 || math.Abs(airW/s.HeatW-1) > 1e-9 {
			t.Errorf("%s: air %.1f W, water %.1f W, reported %.1f W", name, airW, waterW, s.HeatW)
		}
		if s.LeavingAirC >= op.EnteringWaterC || s.LeavingWaterC <= op.EnteringAirC {
			t.Errorf("%s: temperatures cross (LAT %.2f, LWT %.2f)", name, s.LeavingAirC, s.LeavingWaterC)
		}
	})
}
