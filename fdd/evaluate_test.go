package fdd

import (
	"math"
	"testing"

	"risewatch/coilmodel"
)

// plainRiser hides the concrete type of a calibrated riser, so evaluate
// takes its four-evaluation path with the same model.
type plainRiser struct{ riser }

// TestEvaluateCalibratedAgainstFourRuns: evaluate's one-evaluation path for
// calibrated coils (the engine's scaledRiser pairs and bare
// *coilmodel.Calibrated) against its four-evaluation path on the same
// model. The rise and the temperature slopes are bit for bit the same; the
// flow and UA slopes differ by the fluid-property change over the step
// (coilmodel's TestSensitivitiesAgainstForwardDifferences bounds it point by
// point), and here that difference must move the Taylor expansion at the
// trust-region edge (airflow ± trustAirFrac, water flow ± trustWaterFrac, a
// UA change of 10 %) by under a third of TestTaylorTrustRegion's budget
// (2 % of the rise + 0.02 K): it is largest at transitional water flow,
// where the water-side coefficient follows the viscosity most steeply. Coils: the test preset, 1 and 4 rows, an
// oversized cabinet; flows from 3 % of design (laminar water) to full.
func TestEvaluateCalibratedAgainstFourRuns(t *testing.T) {
	var coils []coilmodel.Coil
	coils = append(coils, testCoil(t))
	for _, p := range []struct {
		rows      int
		oversized bool
	}{{1, false}, {4, false}, {2, true}} {
		c, err := coilmodel.Preset(10, p.rows, 10, p.oversized)
		if err != nil {
			t.Fatal(err)
		}
		coils = append(coils, c)
	}
	worst := 0.0
	for ci, c := range coils {
		k, err := coilmodel.NewCalibrated(c)
		if err != nil {
			t.Fatal(err)
		}
		phys := calibratedPhysics{k: k}
		for _, scale := range []float64{0.7, 1} {
			r, err := phys.withUA(scale)
			if err != nil {
				t.Fatal(err)
			}
			rUA, err := phys.withUA(scale * uaStep)
			if err != nil {
				t.Fatal(err)
			}
			bare := k.WithUAMultiplier(k.UAMultiplier() * scale)
			bareUA := k.WithUAMultiplier(k.UAMultiplier() * scale * uaStep)
			for _, frac := range []float64{0.03, 0.1, 0.3, 0.6, 1} {
				for _, v := range []float64{0.06, 0.15, 0.4} {
					for _, thw := range []float64{45, 75} {
						mw := frac * 0.00025
						four := evaluate(plainRiser{r}, plainRiser{rUA}, v, 15, mw, thw)
						if !four.ok {
							t.Fatalf("coil %d: four-run evaluation failed at v %g, mw %g", ci, v, mw)
						}
						for _, pair := range []struct {
							name   string
							r, rUA riser
						}{{"scaledRiser", r, rUA}, {"Calibrated", bare, bareUA}} {
							one := evaluate(pair.r, pair.rUA, v, 15, mw, thw)
							if !one.ok || one.f != four.f || one.dE != four.dE || one.dT != four.dT {
								t.Fatalf("coil %d %s v %g mw %g: rise %v dE %v dT %v ok %v, four runs %v %v %v",
									ci, pair.name, v, mw, one.f, one.dE, one.dT, one.ok, four.f, four.dE, four.dT)
							}
							move := math.Abs(one.dV-four.dV)*trustAirFrac*v +
								math.Abs(one.dM-four.dM)*trustWaterFrac*mw +
								math.Abs(one.dLU-four.dLU)*0.1
							if budget := (0.02*four.f + 0.02) / 3; !(move <= budget) {
								t.Errorf("coil %d %s v %g m³/s, %.0f %% flow, HW %g °C: slopes V %.5g/%.5g, ṁ %.5g/%.5g, ln UA %.5g/%.5g move the expansion %.4f K (budget %.4f K)",
									ci, pair.name, v, 100*frac, thw, one.dV, four.dV, one.dM, four.dM, one.dLU, four.dLU, move, budget)
							}
							worst = math.Max(worst, move/(0.02*four.f+0.02))
						}
					}
				}
			}
		}
	}
	t.Logf("largest change of the trust-region Taylor expansion: %.2g of TestTaylorTrustRegion's budget", worst)
}

// TestEvaluateEdgeCases: where the four-evaluation path refuses a point
// (zero airflow, NaN inputs) the calibrated path refuses it too, and where
// it accepts one without heat transfer (a closed valve, zero water flow)
// both give the same evaluation.
func TestEvaluateEdgeCases(t *testing.T) {
	k, err := coilmodel.NewCalibrated(testCoil(t))
	if err != nil {
		t.Fatal(err)
	}
	phys := calibratedPhysics{k: k}
	r, _ := phys.withUA(1)
	rUA, _ := phys.withUA(uaStep)
	nan := math.NaN()
	for _, c := range []struct{ v, eat, mw, thw float64 }{
		{0.15, 15, 0, 75}, {0, 15, 1e-4, 75}, {0, 15, 0, 75}, {0.15, 15, -1e-5, 75},
		{0.15, 15, 1e-4, 15}, {nan, 15, 1e-4, 75}, {0.15, nan, 1e-4, 75}, {0.15, 15, nan, 75}, {0.15, 15, 1e-4, nan},
	} {
		one := evaluate(r, rUA, c.v, c.eat, c.mw, c.thw)
		four := evaluate(plainRiser{r}, plainRiser{rUA}, c.v, c.eat, c.mw, c.thw)
		if one != four {
			t.Errorf("%+v: %+v, four runs %+v", c, one, four)
		}
	}
}
