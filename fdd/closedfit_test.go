package fdd

import (
	"math"
	"math/rand/v2"
	"testing"

	"risewatch/coilmodel"
)

// TestClosedFitSeparatesOffsetFromHeat: closed-valve rises that are a
// constant (a sensor offset) load the intercept; rises proportional to the
// leak shape h load the heat part. The shape h varies by ±12 % here, about
// what a hot-water outdoor reset gives (this package's invented case); noise
// 0.15 K is the order of a DAT sensor's short-term scatter [I].
func TestClosedFitSeparatesOffsetFromHeat(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	var off, leak closedFit
	for i := 0; i < 400; i++ {
		h := 3 * (1 + 0.12*math.Sin(float64(i)/9))
		off.add(h, 2.5+0.15*rng.NormFloat64())
		leak.add(h, 0.9*h+0.15*rng.NormFloat64())
	}
	a, sig, heat, ok := off.estimate(0.05)
	if !ok || math.Abs(a-2.5) > 0.3 || sig > closedFitSigmaMax || heat > 0.5 {
		t.Errorf("constant 2.5 K rise: intercept %.2f ± %.2f, heat %.2f (ok %v); want intercept ≈ 2.5 identified, heat ≈ 0", a, sig, heat, ok)
	}
	a, sig, heat, ok = leak.estimate(0.05)
	if !ok || math.Abs(a) > 0.5 || math.Abs(heat-2.7) > 0.3 {
		t.Errorf("rise 0.9·h: intercept %.2f ± %.2f, heat %.2f (ok %v); want intercept ≈ 0, heat ≈ 2.7", a, sig, heat, ok)
	}
	if sig <= closedFitSigmaMax && a > 1.2 {
		t.Errorf("a leak passed for an identified offset of %.2f K", a)
	}
}

// TestWindow4MatchesWindow: the shared four-channel window gives the same
// mean, variance and slope as four single windows.
func TestWindow4MatchesWindow(t *testing.T) {
	var w4 window4
	var ws [nCh]window
	w4.init(12)
	for k := range ws {
		ws[k].init(12)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for i := 0; i < 700; i++ {
		if i == 300 {
			w4.reset()
			for k := range ws {
				ws[k].reset()
			}
		}
		var x [nCh]float64
		for k := range x {
			x[k] = float64(k+1)*float64(i%37) + rng.NormFloat64()
			ws[k].push(x[k])
		}
		w4.push(x)
		for k := range ws {
			if w4.full() != ws[k].full() || math.Abs(w4.mean(k)-ws[k].mean()) > 1e-9 ||
				math.Abs(w4.variance(k)-ws[k].variance()) > 1e-7 || math.Abs(w4.slope(k)-ws[k].slope()) > 1e-9 {
				t.Fatalf("step %d channel %d: window4 %v/%g/%g/%g, window %v/%g/%g/%g", i, k,
					w4.full(), w4.mean(k), w4.variance(k), w4.slope(k), ws[k].full(), ws[k].mean(), ws[k].variance(), ws[k].slope())
			}
		}
	}
}

// TestInvertFlow: the Illinois inversion returns a flow whose model rise is
// within the tolerance of the target, NaN beyond the full-open rise, and 0
// for no rise.
func TestInvertFlow(t *testing.T) {
	k, err := coilmodel.NewCalibrated(testCoil(t))
	if err != nil {
		t.Fatal(err)
	}
	const design = 0.00025
	full := k.ExpectedRise(coilOp(0.15, 15, design, 75))
	for _, frac := range []float64{0.002, 0.01, 0.05, 0.3, 0.9} {
		target := k.ExpectedRise(coilOp(0.15, 15, frac*design, 75))
		m := invertFlow(k, 0.15, 15, 75, target, design)
		got := k.ExpectedRise(coilOp(0.15, 15, m, 75))
		if !(math.Abs(got-target) <= invertTolK) {
			t.Errorf("flow %.1f %% of design: inverted %.3g m³/s gives %.3f K, want %.3f K", 100*frac, m, got, target)
		}
	}
	if m := invertFlow(k, 0.15, 15, 75, full+1, design); !math.IsNaN(m) {
		t.Errorf("rise above full-open: %g, want NaN", m)
	}
	if m := invertFlow(k, 0.15, 15, 75, 0, design); m != 0 {
		t.Errorf("zero rise: %g, want 0", m)
	}
}

// TestFaultCompareShapes: residuals made by a UA loss favour the fouled fit,
// residuals made by a series restriction in the branch favour the starved
// fit (coilmodel's rated test coil, commands 10–100 %; invented case).
func TestFaultCompareShapes(t *testing.T) {
	k, err := coilmodel.NewCalibrated(testCoil(t))
	if err != nil {
		t.Fatal(err)
	}
	rUA := k.WithUAMultiplier(k.UAMultiplier() * uaStep)
	fouled := k.WithUAMultiplier(k.UAMultiplier() * 0.7)
	const md, kRes = 0.00025, 6.0
	var cu, cs faultCompare
	for i := 0; i < 200; i++ {
		u := 0.1 + 0.9*float64(i%10)/9
		mw := md * u * u // equal-percentage-like installed curve
		ev := evaluate(k, rUA, 0.15, 15, mw, 75)
		x := mw / md
		gS := restrictionSens(ev.dM, mw, md)
		rU := fouled.ExpectedRise(coilOp(0.15, 15, mw, 75)) - ev.f
		rS := k.ExpectedRise(coilOp(0.15, 15, mw/math.Sqrt(1+kRes*x*x), 75)) - ev.f
		cu.add(rU, ev.dLU, ev.dM*mw, gS, 1, 0.001)
		cs.add(rS, ev.dLU, ev.dM*mw, gS, 1, 0.001)
	}
	if s := cu.share(); !(s < 0.5) {
		t.Errorf("UA loss: starved share %.2f, want < 0.5", s)
	}
	if s := cs.share(); !(s > 0.5) {
		t.Errorf("series restriction: starved share %.2f, want > 0.5", s)
	}
}
