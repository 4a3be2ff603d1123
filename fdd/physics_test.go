package fdd

import (
	"math"
	"testing"

	"risewatch/coilmodel"
)

// TestTaylorTrustRegion: inside the trust region the first-order expansion
// of the expected rise stays within 2 % of the full model (plus 0.02 K) over
// the command range, at every corner of the region. The bound is this
// package's own budget: added in quadrature to the 5 % default model
// uncertainty (Accuracy.ModelFrac) it changes σ by under 8 %; the model is
// coilmodel's rated coil.
func TestTaylorTrustRegion(t *testing.T) {
	k, err := coilmodel.NewCalibrated(testCoil(t))
	if err != nil {
		t.Fatal(err)
	}
	rUA := k.WithUAMultiplier(k.UAMultiplier() * uaStep)
	design := 0.00025 // m³/s (about 4 gpm), the test coil's full-open flow order
	worst := 0.0
	for _, frac := range []float64{0.03, 0.1, 0.3, 0.6, 1} {
		for _, v := range []float64{0.06, 0.15, 0.4} {
			mw := frac * design
			ev := evaluate(k, rUA, v, 15, mw, 75)
			if !ev.ok {
				t.Fatalf("evaluation failed at v %g, mw %g", v, mw)
			}
			for _, dv := range []float64{-1, 1} {
				for _, dm := range []float64{-1, 1} {
					for _, de := range []float64{-1, 1} {
						v2 := v * (1 + dv*trustAirFrac)
						m2 := mw * (1 + dm*trustWaterFrac)
						e2 := 15 + de*trustEATK
						h2 := 75 - de*trustHWK
						exact := k.ExpectedRise(coilOp(v2, e2, m2, h2))
						approx := ev.taylor(v2, e2, m2, h2)
						err := math.Abs(approx - exact)
						if err > 0.02*exact+0.02 {
							t.Errorf("v %.2f m³/s, flow %.0f %% of design: Taylor %.3f K vs model %.3f K at the trust-region corner", v, 100*frac, approx, exact)
						}
						worst = math.Max(worst, err/math.Max(exact, 1e-9))
					}
				}
			}
		}
	}
	t.Logf("worst relative Taylor error at the trust-region corners: %.2f %%", 100*worst)
}
