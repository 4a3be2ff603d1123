package sim

import (
	"fmt"
	"math"
	"testing"

	"risewatch/coilmodel"
	"risewatch/units"
)

// issueCoils are the coils of the issue's cross-check grid (coilGrid): 1-
// and 2-row boxes, one with unequal circuits (10 in, 2 rows: 3 circuits
// over 10 tubes per row), one oversized at 12 fpi.
func issueCoils() []TerminalSpec {
	return []TerminalSpec{
		{ID: "8in-1row", InletIn: 8, Rows: 1, FPI: 10},
		{ID: "12in-1row", InletIn: 12, Rows: 1, FPI: 10},
		{ID: "10in-2row", InletIn: 10, Rows: 2, FPI: 10},
		{ID: "14in-2row-oversized-12fpi", InletIn: 14, Rows: 2, FPI: 12, Oversized: true},
	}
}

// allCoils are every demo inlet size with 1 and 2 rows, the oversized faces
// and a 12 fpi coil.
func allCoils() []TerminalSpec {
	var specs []TerminalSpec
	for _, in := range []float64{6, 8, 10, 12, 14, 16} {
		for _, rows := range []int{1, 2} {
			specs = append(specs, TerminalSpec{ID: fmt.Sprintf("%.0fin-%drow", in, rows), InletIn: in, Rows: rows, FPI: 10})
		}
	}
	return append(specs,
		TerminalSpec{ID: "8in-1row-oversized", InletIn: 8, Rows: 1, FPI: 10, Oversized: true},
		TerminalSpec{ID: "14in-2row-oversized-12fpi", InletIn: 14, Rows: 2, FPI: 12, Oversized: true},
		TerminalSpec{ID: "16in-2row-oversized", InletIn: 16, Rows: 2, FPI: 10, Oversized: true})
}

// crossGrid is the unfaulted grid of the method cross-check over the given
// coils: entering water 100–180 °F, entering air 50 and 65 °F. The heating
// envelope (stress false) is airflow at minimum and heating maximum with
// water from a third of the 180 °F-loop design flow (laminar) to 2.5×
// (turbulent; the flows of the 120 °F loop). The stress points (stress true)
// add the cooling-maximum airflow (a coil heats there only when its valve
// leaks or acts in reverse) and a fifth of design water flow, where the
// water cools by 25–50 K in early-transition flow.
func crossGrid(t *testing.T, specs []TerminalSpec, fn func(name string, c coilmodel.Coil, op coilmodel.Operating, stress bool)) {
	a := &AHUSpec{satAtLowC: units.FToC(60), ductGainK: 0.4, heatSetC: units.FToC(70), datMaxC: units.FToC(90)}
	l := &LoopSpec{supplyAtDesignC: units.FToC(180), designDeltaK: units.DeltaFToK(20), dpSetpointPa: units.PSIToPa(5), designOutdoorC: units.FToC(0)}
	for _, ts := range specs {
		ts.LoadFrac, ts.Exposure = 0.75, "south"
		d, err := designTerminal(&ts, a, l, coilSegments, airSideCalibration)
		if err != nil {
			t.Fatal(err)
		}
		for ai, af := range []float64{d.minM3s, d.heatMax, d.coolMaxM3s} {
			for _, wf := range []float64{0.2, 0.33, 0.6, 1, 1.5, 2.5} {
				stress := ai == 2 || wf < 0.3
				for _, ewtF := range []float64{100, 120, 150, 180} {
					for _, eatF := range []float64{50, 65} {
						fn(ts.ID, d.coil, coilmodel.Operating{AirflowM3s: af, AirDensityKgM3: stdAirDensity,
							EnteringAirC: units.FToC(eatF), WaterFlowM3s: wf * d.designWaterM3s, EnteringWaterC: units.FToC(ewtF)}, stress)
					}
				}
			}
		}
	}
}

// devStats collects signed relative deviations by water-side regime.
type devStats struct {
	worst, sum [3]float64
	n          [3]int
	at         [3]string
}

func (d *devStats) add(reg coilmodel.Regime, dev float64, where string) {
	if math.Abs(dev) > d.worst[reg] {
		d.worst[reg], d.at[reg] = math.Abs(dev), where
	}
	d.sum[reg] += dev
	d.n[reg]++
}

func (d *devStats) log(t *testing.T, what string) {
	t.Helper()
	all, n := 0.0, 0
	for reg := range 3 {
		if d.n[reg] == 0 {
			continue
		}
		all, n = math.Max(all, d.worst[reg]), n+d.n[reg]
		t.Logf("%s, %-12s: largest %.2f %% (%s), mean %+.2f %%, %d points", what, coilmodel.Regime(reg),
			100*d.worst[reg], d.at[reg], 100*d.sum[reg]/float64(d.n[reg]), d.n[reg])
	}
	t.Logf("%s: largest %.2f %% over %d points", what, 100*all, n)
}

// Cross-check bounds. crossCheckTol is the project's acceptance criterion
// (issue 4). crossCheckWideTol is this package's documented bound over
// every demo coil and the stress points: there the closed form's two
// idealisations, identical circuits (the march splits unequal circuits by
// their resistance) and mean-temperature properties (the march evaluates
// them per segment), reach about 1.9 % and 3.4 % on their own, while the
// march reproduces the closed form to 0.15 % where that is exact (see the
// two tests below).
const (
	crossCheckTol     = 0.03
	crossCheckWideTol = 0.045
)

// TestSegmentMethodAgreesWithRate cross-checks two independent solution
// methods on equal physical inputs: the simulator's segment march (circuits
// split by their hydraulic resistance, each segment's UA from its own mean
// air and water temperatures and its circuit's Reynolds number, local heat
// balance per segment, Gauss–Seidel over the rows) in the rate-inputs
// physics, against the detector's closed-form effectiveness-NTU rating
// (coilmodel.Rate: the same correlations at the mean stream temperatures,
// identical circuits, row-relation effectiveness). Laminar, transitional
// and turbulent water alike, no fitted factor: within crossCheckTol over the
// heating envelope of the issue's coils, within crossCheckWideTol over every
// demo coil and the stress points.
func TestSegmentMethodAgreesWithRate(t *testing.T) {
	var issue, env, stressed devStats
	check := func(st *devStats, name string, c coilmodel.Coil, op coilmodel.Operating, tol float64) {
		r := rateOrFail(t, name, c, op)
		s := segmentRate(t, c, op, physicsRateInputs)
		dev := s.HeatW/r.CapacityW - 1
		st.add(r.Regime, dev, opName(name, op))
		if math.Abs(dev) > tol {
			t.Errorf("%s (%s): segment %.0f W, Rate %.0f W (%+.2f %%, bound %.1f %%)", opName(name, op), r.Regime, s.HeatW, r.CapacityW, 100*dev, 100*tol)
		}
	}
	crossGrid(t, issueCoils(), func(name string, c coilmodel.Coil, op coilmodel.Operating, stress bool) {
		if !stress {
			check(&issue, name, c, op, crossCheckTol)
		}
	})
	crossGrid(t, allCoils(), func(name string, c coilmodel.Coil, op coilmodel.Operating, stress bool) {
		st := &env
		if stress {
			st = &stressed
		}
		check(st, name, c, op, crossCheckWideTol)
	})
	issue.log(t, "march vs Rate, issue coils, heating envelope")
	env.log(t, "march vs Rate, all demo coils, heating envelope")
	stressed.log(t, "march vs Rate, all demo coils, stress points")
}

// TestLocalPropertyEvaluation separates the two differences between the
// methods over the whole grid (every demo coil, stress points included):
// (a) the solution method with the closed form's circuit idealisation: the
// march with every property frozen at Rate's own mean stream temperatures
// ((EAT + LAT)/2, (EWT + LWT)/2 from coilmodel.Rate), so that only the
// closed form vs the march, the resistance split of unequal circuits and
// the discretisation differ; (b) local against mean-temperature property
// evaluation: the same march with local properties against (a). On the
// issue's coils each is inside the 3 % criterion; over every coil each is
// inside crossCheckWideTol. The logged largest values are the numbers the
// issue asks for.
func TestLocalPropertyEvaluation(t *testing.T) {
	var method, local [2]devStats
	issue := map[string]bool{}
	for _, ts := range issueCoils() {
		issue[ts.ID] = true
	}
	crossGrid(t, allCoils(), func(name string, c coilmodel.Coil, op coilmodel.Operating, stress bool) {
		r := rateOrFail(t, name, c, op)
		gs := newGridSolver(t, c, op, physicsRateInputs, coilSegments)
		loc := gs.run(op)
		gs.s.fixed = true
		gs.s.fixAirC = (op.EnteringAirC + r.LeavingAirC) / 2
		gs.s.fixWaterC = (op.EnteringWaterC + r.LeavingWaterC) / 2
		fix := gs.run(op)
		dm, dl := fix.HeatW/r.CapacityW-1, loc.HeatW/fix.HeatW-1
		k := 0
		if stress {
			k = 1
		}
		method[k].add(r.Regime, dm, opName(name, op))
		local[k].add(r.Regime, dl, opName(name, op))
		tol := crossCheckWideTol
		if issue[name] && !stress {
			tol = crossCheckTol
		}
		if math.Abs(dm) > tol || math.Abs(dl) > tol {
			t.Errorf("%s: frozen-property march vs Rate %+.2f %%, local vs frozen %+.2f %% (bound %.1f %%)", opName(name, op), 100*dm, 100*dl, 100*tol)
		}
	})
	for k, what := range []string{"heating envelope", "stress points"} {
		method[k].log(t, "(a) march at Rate's mean temperatures vs Rate, all coils, "+what)
		local[k].log(t, "(b) local vs mean-temperature properties, all coils, "+what)
	}
}

// TestSegmentMethodExactLimits: where the closed form is exact for the
// arrangement the march resolves, the two must agree to the property
// coding. With properties frozen at Rate's mean temperatures:
//   - one row: P_a = (1/R)·[1 − exp(−R·(1 − e^(−NTU)))] holds for the whole
//     row whatever the circuiting (each air streamline crosses one tube;
//     Incropera & DeWitt, Table 11.3, Cmax mixed / Cmin unmixed written from
//     the air side), so the march must reproduce it for any segment count;
//   - two rows with equal circuits (16 tubes per row, 4 circuits): each air
//     streamline meets the circuit at path positions s and 2L − s, the
//     arrangement of the Nicole (1972) two-row serpentine relation (as given
//     in Thulukkanam, Heat Exchanger Design Handbook, 2nd ed., 2013).
//
// The tolerance 0.15 % is the difference of the two water cp codings
// (waterCp here, a quadratic within about 0.1 % of IAPWS-95; coilmodel's
// IF97 fit), which enters C_water and the water Prandtl number.
func TestSegmentMethodExactLimits(t *testing.T) {
	a := &AHUSpec{satAtLowC: units.FToC(60), ductGainK: 0.4, heatSetC: units.FToC(70), datMaxC: units.FToC(90)}
	l := &LoopSpec{supplyAtDesignC: units.FToC(180), designDeltaK: units.DeltaFToK(20), dpSetpointPa: units.PSIToPa(5), designOutdoorC: units.FToC(0)}
	for _, ts := range []TerminalSpec{
		{ID: "12in-1row", InletIn: 12, Rows: 1, FPI: 10, LoadFrac: 0.75, Exposure: "south"},
		{ID: "14in-2row-oversized", InletIn: 14, Rows: 2, FPI: 12, Oversized: true, LoadFrac: 0.75, Exposure: "south"},
	} {
		d, err := designTerminal(&ts, a, l, coilSegments, airSideCalibration)
		if err != nil {
			t.Fatal(err)
		}
		if d.coil.TubesPerRow%d.coil.Circuits != 0 {
			t.Fatalf("%s: %d circuits over %d tubes per row; the limit needs equal circuits", ts.ID, d.coil.Circuits, d.coil.TubesPerRow)
		}
		for _, segs := range []int{1, coilSegments, 12} {
			for _, wf := range []float64{0.2, 0.6, 1.5} {
				for _, ewtF := range []float64{100, 180} {
					op := coilmodel.Operating{AirflowM3s: d.heatMax, AirDensityKgM3: stdAirDensity, EnteringAirC: units.FToC(55),
						WaterFlowM3s: wf * d.designWaterM3s, EnteringWaterC: units.FToC(ewtF)}
					r := rateOrFail(t, ts.ID, d.coil, op)
					gs := newGridSolver(t, d.coil, op, physicsRateInputs, segs)
					gs.s.fixed = true
					gs.s.fixAirC = (op.EnteringAirC + r.LeavingAirC) / 2
					gs.s.fixWaterC = (op.EnteringWaterC + r.LeavingWaterC) / 2
					s := gs.run(op)
					if dev := s.HeatW/r.CapacityW - 1; math.Abs(dev) > 0.0015 {
						t.Errorf("%s, %d segments: march %.1f W, closed form %.1f W (%+.3f %%)", opName(ts.ID, op), segs, s.HeatW, r.CapacityW, 100*dev)
					}
				}
			}
		}
	}
}

// TestSegmentCountConverged: the simulator's 3 segments per pass give the
// local-property march within 0.1 % of a 24-segment march on the grid
// (discretisation error of the method itself; 0.1 % is this package's
// choice, a thirtieth of the cross-check criterion).
func TestSegmentCountConverged(t *testing.T) {
	worst := 0.0
	coilGrid(t, func(name string, c coilmodel.Coil, op coilmodel.Operating) {
		coarse := newGridSolver(t, c, op, physicsRateInputs, coilSegments).run(op)
		fine := newGridSolver(t, c, op, physicsRateInputs, 24).run(op)
		dev := coarse.HeatW/fine.HeatW - 1
		worst = math.Max(worst, math.Abs(dev))
		if math.Abs(dev) > 1e-3 {
			t.Errorf("%s: %d segments %.1f W, 24 segments %.1f W (%+.3f %%)", opName(name, op), coilSegments, coarse.HeatW, fine.HeatW, 100*dev)
		}
	})
	t.Logf("%d vs 24 segments per pass: largest %.3f %%", coilSegments, 100*worst)
}

// TestRateInputCodingsAgree: the rate-inputs physics is coded here
// independently of coilmodel; both codings of the same published equations
// (Wang, Chi & Chang 2000 j with the same power-law extension, Schmidt 1949
// φ and η_f, Hausen / Gnielinski / VDI blend, Sutherland Pr, the free-flow
// area and hydraulic diameter) must give the same numbers to rounding, so
// that the cross-check above compares methods, not inputs.
func TestRateInputCodingsAgree(t *testing.T) {
	rel := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got/want-1) > 1e-9 {
			t.Errorf("%s: sim %.12g, coilmodel %.12g", what, got, want)
		}
	}
	a := &AHUSpec{satAtLowC: units.FToC(60), ductGainK: 0.4, heatSetC: units.FToC(70), datMaxC: units.FToC(90)}
	l := &LoopSpec{supplyAtDesignC: units.FToC(180), designDeltaK: units.DeltaFToK(20), dpSetpointPa: units.PSIToPa(5), designOutdoorC: units.FToC(0)}
	for _, ts := range allCoils() {
		ts.LoadFrac, ts.Exposure = 0.75, "south"
		d, err := designTerminal(&ts, a, l, coilSegments, airSideCalibration)
		if err != nil {
			t.Fatal(err)
		}
		c := d.coil
		g, err := newCoilGeom(c, coilSegments)
		if err != nil {
			t.Fatal(err)
		}
		sf := coilmodel.SurfacesOf(c)
		rel(ts.ID+" A_c", g.minFlowAreaM2, sf.MinFlowAreaM2)
		rel(ts.ID+" D_h", g.dh, sf.HydDiaM)
		rel(ts.ID+" A_o", g.aoSeg*float64(g.rows*g.tubes*g.segs), sf.OuterAreaM2)
		rel(ts.ID+" A_f", g.afSeg*float64(g.rows*g.tubes*g.segs), sf.FinAreaM2)
		rel(ts.ID+" A_i", g.aiSeg*float64(g.rows*g.tubes*g.segs), sf.InnerAreaM2)
		for _, re := range []float64{120, 299, 300, 900, 2500, 8000, 20000, 20001, 40000} {
			j, _ := coilmodel.WangChiChang(c, re)
			rel(fmt.Sprintf("%s j(Re_Dc %g)", ts.ID, re), g.wangJ(re), j)
		}
		phi := coilmodel.SchmidtPhi(c)
		rel(ts.ID+" Schmidt phi", g.schmidtPhi(), phi)
		for _, h := range []float64{20, 60, 150} {
			rel(fmt.Sprintf("%s eta_f(h %g)", ts.ID, h), g.schmidtFinEfficiency(h),
				coilmodel.FinEfficiency(h, c.Fin.ConductivityWmK, c.Fin.ThicknessM, c.CollarDiaM()/2, phi))
		}
		dOverL := c.InnerDiaM() / c.FaceWidthM
		rel(ts.ID+" D/L", g.check.dOverL, dOverL)
		for _, re := range []float64{300, 1500, 2299, 2300, 2301, 5000, 9999, 1e4, 10001, 60000} {
			for _, pr := range []float64{1.9, 3.0, 5.5} {
				nu, _ := coilmodel.NusseltTube(re, pr, dOverL)
				rel(fmt.Sprintf("%s Nu(Re %g, Pr %g)", ts.ID, re, pr), nusseltBlend(re, pr, dOverL), nu)
			}
		}
	}
	for _, tc := range []float64{-10, 10, 30, 60} {
		rel(fmt.Sprintf("air Pr(%g C)", tc), airPrandtl(tc), coilmodel.AirPrandtl(tc))
	}
}
