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
func segmentRate(t *testing.T, c coilmodel.Coil, op coilmodel.Operating, corr airCorrelation) coilResult {
	g, err := newCoilGeom(c, coilSegments)
	if err != nil {
		t.Fatal(err)
	}
	g.airCorr = corr
	h := newCoilHydraulics(g)
	h.ensure(op.EnteringWaterC)
	circ := make([]float64, g.circuits)
	_, i, w := h.dpAt(op.WaterFlowM3s)
	h.split(op.WaterFlowM3s, i, w, circ)
	for k := range circ {
		circ[k] *= waterDensity(op.EnteringWaterC)
	}
	hf := airSideCalibration
	if corr != airGrayWebb {
		hf = wangCheckCalibration
	}
	return newCoilSolver(g, hf).solveExact(op.AirflowM3s*stdAirDensity, op.EnteringAirC, circ, op.EnteringWaterC)
}

// TestSegmentMethodAgreesWithRate cross-checks two independent solution
// methods on equal air-side correlations: the simulator's segment march
// (annular-fin efficiency, Gnielinski/Sieder–Tate water side, circuits split
// by their resistance, local balance per segment) run with the Wang, Chi &
// Chang (2000) j, against the detector's effectiveness-NTU rating
// (coilmodel.Rate: Schmidt fin efficiency, Hausen/Gnielinski, row-relation
// effectiveness). 3 % is the project's acceptance criterion.
// The comparison is made where both water sides are fully turbulent
// (both then use Gnielinski); in laminar and transitional flow the two
// water-side choices differ by design and TestSimulatorCoilAgainstRate
// covers that range.
func TestSegmentMethodAgreesWithRate(t *testing.T) {
	compareWithRate(t, airWangChiChang, 0.03, true)
}

// TestSimulatorCoilAgainstRate bounds how far the simulator's own coil
// (Gray & Webb 1986 air side, calibrated as documented at
// airSideCalibration) is from the detector's rating over the grid. The two
// air-side correlations each fit their data only within about ±15 %
// (Wang, Chi & Chang 2000, abstract: 88.6 % of data within ±15 % for j), and
// their Reynolds and row dependences differ, so this bound is the scatter
// the detector must tolerate as model-form error, not a precision claim.
func TestSimulatorCoilAgainstRate(t *testing.T) {
	compareWithRate(t, airGrayWebb, 0.10, false)
}

func compareWithRate(t *testing.T, corr airCorrelation, tol float64, turbulentOnly bool) {
	worst, sum, n := 0.0, 0.0, 0
	coilGrid(t, func(name string, c coilmodel.Coil, op coilmodel.Operating) {
		r, err := coilmodel.Rate(c, op)
		if err != nil {
			if errors.Is(err, coilmodel.ErrBadGeometry) {
				t.Fatalf("%s: %v", name, err)
			}
			t.Skipf("coilmodel.Rate not usable yet: %v", err)
		}
		if turbulentOnly && r.Regime != coilmodel.Turbulent {
			return
		}
		s := segmentRate(t, c, op, corr)
		dev := s.HeatW/r.CapacityW - 1
		worst = math.Max(worst, math.Abs(dev))
		sum += dev
		n++
		if math.Abs(dev) > tol {
			t.Errorf("%s air %.0f cfm water %.2f gpm EWT %.0f F: segment %.0f W, Rate %.0f W (%+.1f %%)",
				name, units.M3sToCFM(op.AirflowM3s), units.M3sToGPM(op.WaterFlowM3s), units.CToF(op.EnteringWaterC),
				s.HeatW, r.CapacityW, 100*dev)
		}
	})
	t.Logf("largest deviation %.2f %%, mean %+.2f %% over %d points", 100*worst, 100*sum/float64(n), n)
}

// TestCoilEnergyBalance: heat gained by the air equals heat lost by the water.
func TestCoilEnergyBalance(t *testing.T) {
	coilGrid(t, func(name string, c coilmodel.Coil, op coilmodel.Operating) {
		s := segmentRate(t, c, op, airGrayWebb)
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
