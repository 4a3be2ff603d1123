package coilmodel

import (
	"math"
	"testing"
)

// Tests of the hot-path rewrites (fastmath.go, proptable.go, the collected
// Wang form, the pass-form Nusselt number): each against the exact function it
// replaces, and the whole rating against a reference copy of the two-pass
// evaluation with exact properties and library math.

func TestExpMatchesLibrary(t *testing.T) {
	worst := 0.0
	check := func(x float64) {
		got, want := exp(x), math.Exp(x)
		if want == 0 || math.IsInf(want, 0) || math.IsNaN(want) {
			if got != want && !(math.IsNaN(got) && math.IsNaN(want)) {
				t.Errorf("exp(%g) = %g, math.Exp %g", x, got, want)
			}
			return
		}
		e := math.Abs(got/want - 1)
		worst = math.Max(worst, e)
		if e > 4e-16 {
			t.Errorf("exp(%.17g) = %.17g, math.Exp %.17g (rel %.2g)", x, got, want, e)
		}
	}
	for x := -745.0; x <= 710; x += 0.0731 {
		check(x)
	}
	for x := -1.0; x <= 1; x += 1.37e-4 {
		check(x)
	}
	for _, x := range []float64{0, math.Copysign(0, -1), 1e-300, -1e-300, 699.999, -699.999, 700, -700, 709.8, -745.2,
		math.Inf(1), math.Inf(-1), math.NaN()} {
		check(x)
	}
	if exp(0) != 1 || exp(1) != math.E {
		t.Errorf("exp(0) = %v, exp(1) = %v", exp(0), exp(1))
	}
	t.Logf("largest relative difference from math.Exp: %.2g", worst)
}

func TestTanhOverX(t *testing.T) {
	q := func(x float64) float64 { n, d := tanhOverX(x); return n / d }
	if q(0) != 1 || q(math.Inf(1)) != 0 || !math.IsNaN(q(math.NaN())) {
		t.Errorf("edge values: %v %v %v", q(0), q(math.Inf(1)), q(math.NaN()))
	}
	for x := 1e-9; x < 60; x *= 1.003 {
		want := math.Tanh(x) / x
		if e := math.Abs(q(x)/want - 1); e > 3e-15 {
			t.Errorf("tanh(x)/x at %g: %.17g vs %.17g (rel %.2g)", x, q(x), want, e)
		}
	}
}

func TestPropertyTablesAgainstExact(t *testing.T) {
	// The tables interpolate the exact functions of air.go and water.go; the
	// bound is the interpolation error Δ²/8·|f''/f| with Δ = 0.25 K, checked
	// between the nodes (not at them, where it is zero). It is largest for the
	// water Prandtl number near 0 °C (about 1.8e−5) and below 4e−6 above 60 °C.
	const tol = 2e-5
	var worstA, worstW float64
	for tc := airTabMinC - 3; tc <= airTabMaxC+3; tc += 0.0173 {
		got, want := tables.airAt(tc), airExact(tc)
		// ln μ and (2/3)·ln(Pr/cp) are logarithms: absolute error = relative error.
		e := math.Max(math.Abs(got.lnMu-want.lnMu), math.Abs(got.a23-want.a23))
		worstA = math.Max(worstA, e)
		if e > tol {
			t.Fatalf("air table at %.4f °C: %+v vs exact %+v", tc, got, want)
		}
	}
	for tc := watTabMinC - 3; tc <= watTabMaxC+3; tc += 0.0173 {
		g, w := tables.waterAt(tc), waterExact(tc)
		e := math.Max(math.Max(relErr(g.cp, w.cp), relErr(g.k, w.k)), math.Max(relErr(g.rhoMu, w.rhoMu), relErr(g.pr, w.pr)))
		e = math.Max(e, math.Max(relErr(g.pr23, w.pr23), math.Max(math.Abs(g.lnRhoMu-w.lnRhoMu), math.Abs(g.lnPr-w.lnPr))))
		worstW = math.Max(worstW, e)
		if tc > 60 && e > 4e-6 || e > tol {
			t.Fatalf("water table at %.4f °C: %+v vs exact %+v", tc, g, w)
		}
	}
	t.Logf("largest relative interpolation error: air %.2g, water %.2g", worstA, worstW)
	if nan := tables.waterAt(math.NaN()); !math.IsNaN(nan.cp) {
		t.Errorf("NaN temperature gave %+v", nan)
	}
}

func TestWangCollectedForm(t *testing.T) {
	// ln j = A + B·ln Re + C/ln Re is the published exponent set of Wang, Chi &
	// Chang (2000) regrouped; jOnly and fOnly spell the published form out.
	for _, inlet := range []float64{6, 10, 14} {
		for rows := 1; rows <= MaxRows; rows++ {
			for _, fpi := range []float64{8, 10, 12, 14} {
				c, err := Preset(inlet, rows, fpi, false)
				if err != nil {
					t.Fatal(err)
				}
				w := newWang(c, SurfacesOf(c))
				for re := 300.0; re <= 20000; re *= 1.37 {
					lr := math.Log(re)
					if relErr(math.Exp(w.lnJIn(lr)), w.jOnly(lr)) > 1e-12 || relErr(math.Exp(w.lnFIn(lr)), w.fOnly(lr)) > 1e-12 {
						t.Fatalf("%g in %d rows %g FPI Re %g: j %g vs %g, f %g vs %g", inlet, rows, fpi, re,
							math.Exp(w.lnJIn(lr)), w.jOnly(lr), math.Exp(w.lnFIn(lr)), w.fOnly(lr))
					}
				}
				// Extension: the power law from the bound values, as before the rewrite.
				for _, re := range []float64{50, 150, 299, 20001, 40000} {
					j, outside := w.colburnJ(re)
					jb, fb, slope := math.Exp(w.ljLo), math.Exp(w.lfLo), wangLowReSlope
					ref := wangReMin
					if re > wangReMax {
						jb, fb, slope, ref = math.Exp(w.ljHi), math.Exp(w.lfHi), wangHighReSlope, wangReMax
					}
					if !outside || relErr(j, jb*math.Pow(re/ref, slope)) > 1e-12 || relErr(w.fanning(re), fb*math.Pow(re/ref, slope)) > 1e-12 {
						t.Fatalf("extension at Re %g: j %g, f %g", re, j, w.fanning(re))
					}
				}
				if j, f := w.jf(math.Log(2000)); relErr(j, w.jOnly(math.Log(2000))) > 0 || relErr(f, w.fOnly(math.Log(2000))) > 0 {
					t.Fatal("jf differs from jOnly/fOnly")
				}
			}
		}
	}
}

func TestPassNusseltMatchesNusseltTube(t *testing.T) {
	for rows := 1; rows <= MaxRows; rows++ {
		m, err := newModel(chainCoil(rows))
		if err != nil {
			t.Fatal(err)
		}
		for _, tc := range []float64{5, 40, 82, 110} {
			w := waterExact(tc)
			for re := 5.0; re < 2e6; re *= 1.09 {
				got, rg := m.nusseltTube(re, math.Log(re), &w)
				want, rw := NusseltTube(re, w.pr, m.dOverL)
				if rg != rw || relErr(got, want) > 1e-12 {
					t.Fatalf("%d rows %g °C Re %g: %g %v vs NusseltTube %g %v", rows, tc, re, got, rg, want, rw)
				}
			}
		}
	}
}

// refEval is the two-pass evaluation as first written: properties from the
// exact functions (Sutherland, Kell, Laliberté, Ramires, the cp fit), the
// published Wang form (jOnly), NusseltTube and math.Tanh. It returns LAT − EAT.
func refEval(m *model, f flows, uaMult float64) float64 {
	if !(f.mAir > 0) || !(f.qWater > 0) {
		if f.mAir > 0 {
			return 0
		}
		return f.ewt - f.eat
	}
	g := f.mAir / m.s.MinFlowAreaM2
	vel := f.qWater / (m.circuits * m.path.areaM2)
	pass := func(taC, twC float64) (rise, lwt float64) {
		mu := AirViscosity(taC)
		pr := mu * f.cpAir / AirConductivity(taC)
		re := g * m.dc / mu
		var j float64
		switch {
		case re < wangReMin:
			j = m.w.jOnly(math.Log(wangReMin)) * math.Pow(re/wangReMin, wangLowReSlope)
		case re > wangReMax:
			j = m.w.jOnly(math.Log(wangReMax)) * math.Pow(re/wangReMax, wangHighReSlope)
		default:
			j = m.w.jOnly(math.Log(re))
		}
		h := j * g * f.cpAir / math.Cbrt(pr*pr)
		x := math.Sqrt(2*h/(m.c.finK()*m.c.Fin.ThicknessM)) * (m.dc / 2) * SchmidtPhi(m.c)
		etaF := 1.0
		if x > 1e-8 {
			etaF = math.Tanh(x) / x
		}
		etaO := 1 - m.s.FinAreaM2/m.s.OuterAreaM2*(1-etaF)
		w := waterAt(twC)
		reW := w.rho * vel * m.path.di / w.mu
		nu, _ := NusseltTube(reW, w.mu*w.cp/w.k, m.dOverL)
		hw := nu * w.k / m.path.di
		rTot := (1/(h*m.s.OuterAreaM2)+m.rFoulA)/etaO + m.rWall + m.rFoulW + 1/(hw*m.s.InnerAreaM2)
		cAir, cWater := f.mAir*f.cpAir, f.mWater*w.cp
		p := SerpentineEffectiveness(m.rows, uaMult/rTot/cAir, cAir/cWater)
		rise = p * (f.ewt - f.eat)
		return rise, f.ewt - rise*cAir/cWater
	}
	rise, lwt := pass(f.eat, f.ewt)
	rise, _ = pass(f.eat+rise/2, (f.ewt+lwt)/2)
	return rise
}

func TestFastPathMatchesReference(t *testing.T) {
	// Accuracy contract of the hot path: Rate (and ExpectedRise, which must
	// equal it) within 0.1 % of the reference evaluation over airflow
	// 0.03-1 m³/s, water 0.005-0.5 L/s, EAT 5-25 °C, EWT 35-90 °C, 1-4 rows,
	// several box sizes, dry and humid air, with and without fouling.
	airs := []float64{0.03, 0.06, 0.12, 0.25, 0.5, 1}
	waters := []float64{0.005e-3, 0.012e-3, 0.03e-3, 0.07e-3, 0.15e-3, 0.3e-3, 0.5e-3}
	eats := []float64{5, 15, 25}
	ewts := []float64{35, 50, 70, 90}
	worst, n := 0.0, 0
	for _, inlet := range []float64{6, 10, 14} {
		for rows := 1; rows <= MaxRows; rows++ {
			c, err := Preset(inlet, rows, 10, false)
			if err != nil {
				t.Fatal(err)
			}
			if rows == 3 {
				c.FoulingWaterM2KW, c.FoulingAirM2KW = 1.76e-4, 3.5e-4
			}
			c.UAMultiplier = 0.85
			k, err := NewCalibrated(c)
			if err != nil {
				t.Fatal(err)
			}
			for _, q := range airs {
				for _, qw := range waters {
					for _, eat := range eats {
						for _, ewt := range ewts {
							op := Operating{AirflowM3s: q, EnteringAirC: eat, WaterFlowM3s: qw, EnteringWaterC: ewt}
							if ewt == 70 {
								op.HumidityRatio = 0.01
							}
							r := mustRate(t, c, op)
							rise := r.LeavingAirC - eat
							if er := k.ExpectedRise(op); math.Abs(er-rise) > 1e-12*math.Max(1, rise) {
								t.Fatalf("%+v: ExpectedRise %.12g vs Rate %.12g", op, er, rise)
							}
							ref := refEval(&k.m, toFlows(op, 1), k.m.uaMult)
							e := math.Abs(rise/ref - 1)
							worst = math.Max(worst, e)
							n++
							if e > 1e-3 {
								t.Errorf("%g in %d rows %+v: rise %.6f K, reference %.6f K (%.3g %%)", inlet, rows, op, rise, ref, 100*e)
							}
						}
					}
				}
			}
		}
	}
	t.Logf("%d points: largest relative difference from the reference %.2g", n, worst)
}

func TestLogMatchesLibrary(t *testing.T) {
	worst := 0.0
	check := func(x float64) {
		got, want := log(x), math.Log(x)
		if math.IsNaN(want) || math.IsInf(want, 0) {
			if got != want && !(math.IsNaN(got) && math.IsNaN(want)) {
				t.Errorf("log(%g) = %g, math.Log %g", x, got, want)
			}
			return
		}
		e := math.Abs(got-want) / math.Max(1, math.Abs(want))
		worst = math.Max(worst, e)
		if e > 3e-16 {
			t.Errorf("log(%.17g) = %.17g, math.Log %.17g", x, got, want)
		}
	}
	for x := 1e-300; x < 1e300; x *= 1.0137 {
		check(x)
	}
	for x := 0.5; x < 2; x += 1.1e-5 {
		check(x)
	}
	for _, x := range []float64{1, 2, 0.5, math.E, 5e-324, 0, -1, math.Inf(1), math.NaN(), math.MaxFloat64} {
		check(x)
	}
	t.Logf("largest difference from math.Log, relative to max(1, |ln x|): %.2g", worst)
}

func TestChurchillMatchesPublishedForm(t *testing.T) {
	// Churchill (1977), Chem. Eng. 84(24):91, spelled out with math.Pow.
	lit := func(re, rr float64) float64 {
		a := math.Pow(-2.457*math.Log(math.Pow(7/re, 0.9)+0.27*rr), 16)
		b := math.Pow(37530/re, 16)
		return 8 * math.Pow(math.Pow(8/re, 12)+math.Pow(a+b, -1.5), 1.0/12)
	}
	for _, rr := range []float64{0, 1e-5, 1.3e-4, 1e-3, 0.01} {
		for re := 1.0; re < 1e8; re *= 1.05 {
			if got, want := ChurchillFriction(re, rr), lit(re, rr); relErr(got, want) > 1e-13 {
				t.Fatalf("Re %g ε/D %g: %.15g vs %.15g", re, rr, got, want)
			}
		}
	}
}

func TestFinEfficiencyTable(t *testing.T) {
	worst := 0.0
	for y := finTabY0 - 2; y < finTabY1+2; y += 0.00137 {
		x := math.Exp(y)
		want := math.Tanh(x) / x
		e := relErr(finEfficiency(y), want)
		worst = math.Max(worst, e)
		if e > 1e-9 {
			t.Fatalf("η_f at ln x = %g: %.15g vs tanh(x)/x %.15g", y, finEfficiency(y), want)
		}
	}
	t.Logf("largest relative error %.2g", worst)
}

func TestInversionAtUnitMultiplierConverges(t *testing.T) {
	// A root at x = 1 is ln x = 0; the solver's tolerance must not shrink to
	// nothing there (it used to step between adjacent floats until the
	// residual happened to round to zero).
	for rows := 1; rows <= MaxRows; rows++ {
		c, err := Preset(12, rows, 10, false)
		if err != nil {
			t.Fatal(err)
		}
		k, err := NewCalibrated(c)
		if err != nil {
			t.Fatal(err)
		}
		for _, gpm := range []float64{0.2, 1.5, 6} {
			op := benchOp
			op.WaterFlowM3s = gpm * 6.30901964e-5 // 1 US gpm = 6.30901964e-5 m³/s (NIST SP 811)
			r, _ := k.Rate(op)
			rise := r.LeavingAirC - op.EnteringAirC
			f := toFlows(op, 1)
			n := 0
			x, err := solveLogMonotone(func(x float64) float64 {
				n++
				var st state
				k.m.eval(f, x, &st)
				return st.rise/rise - 1
			}, minUAMult, maxUAMult)
			if err != nil || math.Abs(x-1) > 1e-12 || n > 40 {
				t.Errorf("%d rows %g gpm: multiplier %.15g after %d evaluations (%v)", rows, gpm, x, n, err)
			}
		}
	}
}
