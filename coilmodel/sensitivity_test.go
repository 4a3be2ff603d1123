package coilmodel

import (
	"fmt"
	"math"
	"testing"
)

// Tests of RiseSensitivities. The coils are the common-practice presets
// (1-4 rows, normal and oversized cabinets, a small box), the 24 in rating
// chain coil with 4 rows and a fouled coil with a calibration multiplier;
// the operating points run from near-laminar water flow (0.05 gpm) to
// 8 gpm and from 60 to 2,400 cfm, with dry and humid air. Check values are
// the model's own full evaluations (ExpectedRiseWith and pass), never
// stored numbers.

type sensCoil struct {
	name string
	k    *Calibrated
}

func sensCoils(t testing.TB) []sensCoil {
	t.Helper()
	var out []sensCoil
	add := func(name string, c Coil) {
		k, err := NewCalibrated(c)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		out = append(out, sensCoil{name, k})
	}
	for rows := 1; rows <= MaxRows; rows++ {
		c, err := Preset(12, rows, 10, false)
		if err != nil {
			t.Fatal(err)
		}
		add(fmt.Sprintf("12in-%drow", rows), c)
	}
	for _, p := range []struct {
		inlet     float64
		rows      int
		fpi       float64
		oversized bool
	}{{12, 2, 12, true}, {6, 1, 8, false}, {16, 3, 10, true}} {
		c, err := Preset(p.inlet, p.rows, p.fpi, p.oversized)
		if err != nil {
			t.Fatal(err)
		}
		add(fmt.Sprintf("%gin-%drow-%gfpi-oversized=%v", p.inlet, p.rows, p.fpi, p.oversized), c)
	}
	add("chain-4row", chainCoil(4))
	fouled := chainCoil(2)
	fouled.FoulingWaterM2KW, fouled.FoulingAirM2KW, fouled.UAMultiplier = 1.8e-4, 3.5e-4, 0.8
	add("chain-2row-fouled", fouled)
	return out
}

// sensOps are the operating points with heat transfer.
func sensOps() []Operating {
	var ops []Operating
	for _, cfm := range []float64{60, 250, 700, 2400} {
		for _, gpm := range []float64{0.05, 0.2, 0.6, 2, 8} {
			for _, ewtF := range []float64{110, 180} {
				op := ipOp(cfm, 55, gpm, ewtF)
				if gpm == 0.6 {
					op.HumidityRatio = 0.009
				}
				ops = append(ops, op)
			}
		}
	}
	return ops
}

// fddSteps are the steps the detector uses: 2 % of each flow (plus 1e−8 m³/s
// of water) and UA × 1.05.
func fddSteps(op Operating) SensitivitySteps {
	return SensitivitySteps{AirflowM3s: 0.02 * op.AirflowM3s, WaterFlowM3s: 0.02*op.WaterFlowM3s + 1e-8, UAFactor: 1.05}
}

// forward is the four-run forward difference of ExpectedRiseWith at steps s.
func forward(k *Calibrated, op Operating, ua float64, s SensitivitySteps) Sensitivities {
	f := k.ExpectedRiseWith(op, ua, 1)
	a, w := op, op
	a.AirflowM3s += s.AirflowM3s
	w.WaterFlowM3s += s.WaterFlowM3s
	return Sensitivities{
		RiseK:      f,
		DAirflow:   (k.ExpectedRiseWith(a, ua, 1) - f) / s.AirflowM3s,
		DWaterFlow: (k.ExpectedRiseWith(w, ua, 1) - f) / s.WaterFlowM3s,
		DLnUA:      (k.ExpectedRiseWith(op, ua*s.UAFactor, 1) - f) / math.Log(s.UAFactor),
	}
}

// same reports a == b bit for bit, or both NaN.
func same(a, b float64) bool {
	return math.Float64bits(a) == math.Float64bits(b) || (math.IsNaN(a) && math.IsNaN(b))
}

// baseState is eval's state at op (both flows positive) and the quantities
// the partial re-computations keep.
func baseState(k *Calibrated, op Operating, ua float64) (flows, state, sensBase) {
	f := toFlows(op, 1)
	var st state
	var b sensBase
	k.m.evalBase(f, ua, &st, &b)
	return f, st, b
}

// frozenRise is one pass at f with the properties at the base's second-pass
// temperatures taC, twC: the rise the partial re-computations must give.
func frozenRise(m *model, f flows, ua, taC, twC float64) (float64, state) {
	pre := m.passInputs(f)
	var st state
	m.pass(f, &pre, ua, taC, twC, &st)
	return st.rise, st
}

// propertyBound bounds how much the property change over a step moves the
// perturbed rise: the full evaluation at the perturbed point f2 (UA
// multiplier ua2) evaluates properties at its own second-pass temperatures,
// the frozen one at the base's (b). Linearised: |∂rise/∂T_a·ΔT_a| +
// |∂rise/∂T_w·ΔT_w|, the derivatives with respect to the property
// temperatures by central differences of pass over ±0.5 K (four table
// steps).
func propertyBound(m *model, b *sensBase, f2 flows, ua2 float64) float64 {
	var full state
	var b2 sensBase
	m.evalBase(f2, ua2, &full, &b2)
	const d = 0.5
	ra1, _ := frozenRise(m, f2, ua2, b.taC+d, b.twC)
	ra0, _ := frozenRise(m, f2, ua2, b.taC-d, b.twC)
	rw1, _ := frozenRise(m, f2, ua2, b.taC, b.twC+d)
	rw0, _ := frozenRise(m, f2, ua2, b.taC, b.twC-d)
	return math.Abs((ra1-ra0)/(2*d)*(b2.taC-b.taC)) + math.Abs((rw1-rw0)/(2*d)*(b2.twC-b.twC))
}

// TestRiseSensitivitiesRiseIsExpectedRise: the rise is ExpectedRiseWith's,
// bit for bit, at several UA multipliers.
func TestRiseSensitivitiesRiseIsExpectedRise(t *testing.T) {
	for _, c := range sensCoils(t) {
		for _, op := range sensOps() {
			for _, ua := range []float64{0, 0.6, c.k.UAMultiplier(), 1.7} {
				got := c.k.RiseSensitivities(op, ua, fddSteps(op)).RiseK
				if want := c.k.ExpectedRiseWith(op, ua, 1); !same(got, want) {
					t.Errorf("%s %+v UA × %g: rise %.17g, ExpectedRiseWith %.17g", c.name, op, ua, got, want)
				}
			}
		}
	}
}

// TestSensitivityPartsReproduceBase: the partial re-computations at zero
// step (the base air mass flow, water flow and UA) give the base rise bit
// for bit, so their air side, water side, conductance and effectiveness are
// the pass's own.
func TestSensitivityPartsReproduceBase(t *testing.T) {
	for _, c := range sensCoils(t) {
		m := &c.k.m
		for _, op := range sensOps() {
			f, st, b := baseState(c.k, op, m.uaMult)
			if got := m.airRise(&b, f.mAir); !same(got, st.rise) {
				t.Errorf("%s %+v: air side at the base flow %.17g, rise %.17g", c.name, op, got, st.rise)
			}
			if got := m.waterRise(&b, f.qWater, f.mWater); !same(got, st.rise) {
				t.Errorf("%s %+v: water side at the base flow %.17g, rise %.17g", c.name, op, got, st.rise)
			}
			if got := m.uaRise(&b, 1); !same(got, st.rise) {
				t.Errorf("%s %+v: UA × 1 %.17g, rise %.17g", c.name, op, got, st.rise)
			}
		}
	}
}

// TestSensitivitiesMatchFrozenPass: each partial re-computation is a full
// pass at the perturbed input with the base's second-pass property
// temperatures, to rounding (relative 1e−9 of the derivative, or 1e−12 of
// the rise over the step).
func TestSensitivitiesMatchFrozenPass(t *testing.T) {
	worst := 0.0
	for _, c := range sensCoils(t) {
		m := &c.k.m
		for _, op := range sensOps() {
			for _, ua := range []float64{0.6, m.uaMult} {
				s := fddSteps(op)
				got := c.k.RiseSensitivities(op, ua, s)
				_, st, b := baseState(c.k, op, ua)
				a, w := op, op
				a.AirflowM3s += s.AirflowM3s
				w.WaterFlowM3s += s.WaterFlowM3s
				ra, _ := frozenRise(m, toFlows(a, 1), ua, b.taC, b.twC)
				rw, _ := frozenRise(m, toFlows(w, 1), ua, b.taC, b.twC)
				ru, _ := frozenRise(m, toFlows(op, 1), ua*s.UAFactor, b.taC, b.twC)
				for _, d := range []struct {
					name      string
					got, want float64
					step      float64
				}{
					{"airflow", got.DAirflow, (ra - st.rise) / s.AirflowM3s, s.AirflowM3s},
					{"water flow", got.DWaterFlow, (rw - st.rise) / s.WaterFlowM3s, s.WaterFlowM3s},
					{"ln UA", got.DLnUA, (ru - st.rise) / math.Log(s.UAFactor), math.Log(s.UAFactor)},
				} {
					e := math.Abs(d.got - d.want)
					tol := 1e-9*math.Abs(d.want) + 1e-12*math.Abs(st.rise)/d.step
					if !(e <= tol) {
						t.Errorf("%s %+v UA × %g: ∂/∂%s %.12g, frozen-property pass %.12g", c.name, op, ua, d.name, d.got, d.want)
					}
					if d.want != 0 {
						worst = math.Max(worst, e/math.Abs(d.want))
					}
				}
			}
		}
	}
	t.Logf("largest relative difference from the frozen-property pass: %.2g", worst)
}

// checkAgainst compares RiseSensitivities at steps s with reference
// derivatives ref (bit for bit in the rise): each may differ by the property
// change over the step (propertyBound, doubled for the linearisation, over
// the step), plus extra(i) for derivative i (0 airflow, 1 water flow, 2 ln
// UA) and rounding (1e−11 of the rise over the step). It returns the
// largest difference relative to the derivative and to the tolerance.
func checkAgainst(t *testing.T, label string, k *Calibrated, op Operating, ua float64, s SensitivitySteps, ref Sensitivities, extra [3]float64) (worstRel, worstTol float64) {
	t.Helper()
	m := &k.m
	got := k.RiseSensitivities(op, ua, s)
	if !same(got.RiseK, ref.RiseK) {
		t.Errorf("%s %+v: rise %.17g, reference %.17g", label, op, got.RiseK, ref.RiseK)
	}
	f, st, b := baseState(k, op, ua)
	a, w := op, op
	a.AirflowM3s += s.AirflowM3s
	w.WaterFlowM3s += s.WaterFlowM3s
	bounds := [3]float64{
		propertyBound(m, &b, toFlows(a, 1), ua),
		propertyBound(m, &b, toFlows(w, 1), ua),
		propertyBound(m, &b, f, ua*s.UAFactor),
	}
	steps := [3]float64{s.AirflowM3s, s.WaterFlowM3s, math.Log(s.UAFactor)}
	gots := [3]float64{got.DAirflow, got.DWaterFlow, got.DLnUA}
	refs := [3]float64{ref.DAirflow, ref.DWaterFlow, ref.DLnUA}
	names := [3]string{"airflow", "water flow", "ln UA"}
	for i := range gots {
		e := math.Abs(gots[i] - refs[i])
		tol := (2*bounds[i]+1e-11*math.Abs(st.rise))/math.Abs(steps[i]) + extra[i]
		if !(e <= tol) {
			t.Errorf("%s %+v UA × %g: ∂/∂%s %.9g, reference %.9g (difference %.3g, tolerance %.3g)",
				label, op, ua, names[i], gots[i], refs[i], e, tol)
		}
		if refs[i] != 0 {
			worstRel = math.Max(worstRel, e/math.Abs(refs[i]))
		}
		if tol > 0 {
			worstTol = math.Max(worstTol, e/tol)
		}
	}
	return worstRel, worstTol
}

// TestSensitivitiesAgainstForwardDifferences: against the four full runs the
// detector made before (forward differences of ExpectedRiseWith at the same
// steps), the derivatives differ only by the property change over the step.
func TestSensitivitiesAgainstForwardDifferences(t *testing.T) {
	var worstRel, worstTol float64
	for _, c := range sensCoils(t) {
		for _, op := range sensOps() {
			for _, ua := range []float64{0.6, c.k.UAMultiplier(), 1.7} {
				s := fddSteps(op)
				r, q := checkAgainst(t, c.name, c.k, op, ua, s, forward(c.k, op, ua, s), [3]float64{})
				worstRel, worstTol = math.Max(worstRel, r), math.Max(worstTol, q)
			}
		}
	}
	t.Logf("largest difference from the four-run forward differences: %.2g relative, %.2g of the tolerance", worstRel, worstTol)
}

// TestSensitivitiesAgainstCentralDifferences: at small steps h (10⁻⁴ of
// each flow, UA × e^(10⁻⁴)) the derivatives are the model's derivatives
// (central differences of ExpectedRiseWith at h) within the property change
// over the step and twice the forward difference's truncation error
// |f”|·h/2, f” from the second difference over 10·h (a regime boundary
// near the point shows up there too).
func TestSensitivitiesAgainstCentralDifferences(t *testing.T) {
	var worstRel, worstTol float64
	for _, c := range sensCoils(t) {
		k := c.k
		ua := k.UAMultiplier()
		for _, op := range sensOps() {
			const rel = 1e-4
			s := SensitivitySteps{AirflowM3s: rel * op.AirflowM3s, WaterFlowM3s: rel * op.WaterFlowM3s, UAFactor: math.Exp(rel)}
			f := k.ExpectedRiseWith(op, ua, 1)
			// at is the rise at n steps along input i.
			at := func(i int, n float64) float64 {
				o, u := op, ua
				switch i {
				case 0:
					o.AirflowM3s += n * s.AirflowM3s
				case 1:
					o.WaterFlowM3s += n * s.WaterFlowM3s
				default:
					u *= math.Exp(n * rel)
				}
				return k.ExpectedRiseWith(o, u, 1)
			}
			steps := [3]float64{s.AirflowM3s, s.WaterFlowM3s, rel}
			var d, extra [3]float64
			for i := range d {
				h := steps[i]
				d[i] = (at(i, 1) - at(i, -1)) / (2 * h)
				f2 := (at(i, 10) - 2*f + at(i, -10)) / (100 * h * h)
				extra[i] = 2 * math.Abs(f2) * h / 2
			}
			ref := Sensitivities{RiseK: f, DAirflow: d[0], DWaterFlow: d[1], DLnUA: d[2]}
			r, q := checkAgainst(t, c.name, k, op, ua, s, ref, extra)
			worstRel, worstTol = math.Max(worstRel, r), math.Max(worstTol, q)
		}
	}
	t.Logf("largest difference from central differences: %.2g relative, %.2g of the tolerance", worstRel, worstTol)
}

// TestRiseSensitivitiesWithoutHeat: at zero or negative flows, zero UA and
// NaN inputs the result is the four-run forward differences bit for bit
// (the full evaluations of the fallback), and a NaN temperature with heat
// transfer gives NaN throughout.
func TestRiseSensitivitiesWithoutHeat(t *testing.T) {
	nan := math.NaN()
	base := ipOp(500, 55, 1.5, 180)
	cases := []struct {
		name string
		edit func(*Operating)
		ua   float64
	}{
		{"no water", func(o *Operating) { o.WaterFlowM3s = 0 }, 1},
		{"negative water", func(o *Operating) { o.WaterFlowM3s = -1e-5 }, 1},
		{"no air", func(o *Operating) { o.AirflowM3s = 0 }, 1},
		{"negative air", func(o *Operating) { o.AirflowM3s = -0.1 }, 1},
		{"no flows", func(o *Operating) { o.AirflowM3s, o.WaterFlowM3s = 0, 0 }, 1},
		{"zero UA", func(*Operating) {}, 0},
		{"negative UA", func(*Operating) {}, -2},
		{"NaN airflow", func(o *Operating) { o.AirflowM3s = nan }, 1},
		{"NaN water flow", func(o *Operating) { o.WaterFlowM3s = nan }, 1},
		{"NaN EAT", func(o *Operating) { o.EnteringAirC = nan }, 1},
		{"NaN EWT", func(o *Operating) { o.EnteringWaterC = nan }, 1},
		{"NaN UA", func(*Operating) {}, nan},
	}
	for _, c := range sensCoils(t) {
		for _, tc := range cases {
			op := base
			tc.edit(&op)
			s := fddSteps(op)
			got := c.k.RiseSensitivities(op, tc.ua, s)
			want := forward(c.k, op, math.Max(tc.ua, 0), s)
			if !same(got.RiseK, want.RiseK) || !same(got.DAirflow, want.DAirflow) ||
				!same(got.DWaterFlow, want.DWaterFlow) || !same(got.DLnUA, want.DLnUA) {
				t.Errorf("%s %s: %+v, four runs %+v", c.name, tc.name, got, want)
			}
		}
		// Steps that take a flow to or below zero from a point with heat
		// transfer: full evaluations there too.
		for _, s := range []SensitivitySteps{
			{AirflowM3s: -base.AirflowM3s, WaterFlowM3s: -2 * base.WaterFlowM3s, UAFactor: 0.5},
			{AirflowM3s: -3 * base.AirflowM3s, WaterFlowM3s: -base.WaterFlowM3s, UAFactor: 1.05},
		} {
			got, want := c.k.RiseSensitivities(base, 1, s), forward(c.k, base, 1, s)
			if !same(got.DAirflow, want.DAirflow) || !same(got.DWaterFlow, want.DWaterFlow) || !same(got.RiseK, want.RiseK) {
				t.Errorf("%s steps %+v: %+v, four runs %+v", c.name, s, got, want)
			}
		}
		for _, edit := range []func(*Operating){
			func(o *Operating) { o.EnteringAirC = nan }, func(o *Operating) { o.EnteringWaterC = nan },
		} {
			op := base
			edit(&op)
			got := c.k.RiseSensitivities(op, 1, fddSteps(op))
			if !math.IsNaN(got.RiseK) || !math.IsNaN(got.DAirflow) || !math.IsNaN(got.DWaterFlow) || !math.IsNaN(got.DLnUA) {
				t.Errorf("%s %+v: %+v, want NaN throughout", c.name, op, got)
			}
		}
	}
}

// TestRiseSensitivitiesNoAllocs: no allocations.
func TestRiseSensitivitiesNoAllocs(t *testing.T) {
	k, err := NewCalibrated(chainCoil(2))
	if err != nil {
		t.Fatal(err)
	}
	op := benchOp
	var sink float64
	if n := testing.AllocsPerRun(100, func() { sink += k.RiseSensitivities(op, 1, fddSteps(op)).DLnUA }); n != 0 {
		t.Errorf("%v allocations per call", n)
	}
	_ = sink
}

// TestExpectedRiseNaNInputs: as the ExpectedRise doc says, a NaN in the
// operating point (either flow, either temperature) gives a NaN rise.
// Before this held, a NaN airflow took the still-air branch and gave
// EWT − EAT.
func TestExpectedRiseNaNInputs(t *testing.T) {
	nan := math.NaN()
	for _, c := range sensCoils(t) {
		for name, edit := range map[string]func(*Operating){
			"airflow":    func(o *Operating) { o.AirflowM3s = nan },
			"water flow": func(o *Operating) { o.WaterFlowM3s = nan },
			"both flows": func(o *Operating) { o.AirflowM3s, o.WaterFlowM3s = nan, nan },
			"NaN air, no water": func(o *Operating) {
				o.AirflowM3s, o.WaterFlowM3s = nan, 0
			},
			"no air, NaN water": func(o *Operating) {
				o.AirflowM3s, o.WaterFlowM3s = 0, nan
			},
			"EAT": func(o *Operating) { o.EnteringAirC = nan },
			"EWT": func(o *Operating) { o.EnteringWaterC = nan },
		} {
			op := ipOp(500, 55, 1.5, 180)
			edit(&op)
			if r := c.k.ExpectedRise(op); !math.IsNaN(r) {
				t.Errorf("%s, NaN %s: rise %v, want NaN", c.name, name, r)
			}
		}
	}
}
