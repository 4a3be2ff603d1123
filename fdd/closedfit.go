package fdd

import "math"

// closedFit separates a discharge-sensor offset from heat delivered through
// a closed valve. With the fan on and the valve closed,
//
//	DAT − (SAT + g) = a + s·h(V, EAT, T_hw)
//
// where a is a sensor offset (it does not depend on the operating point) and
// h is the rise the calibrated coil model gives at the observed airflow,
// entering air and hot-water temperature for a reference leak flow (the
// smoothed leak flow that explains the raw closed-valve rise). For a small
// leak h ≈ ṁ_w·c_w·(T_hw − EAT)/(ρ·c_p·V): a real heat input scales with
// 1/V and with the hot-water temperature, an offset does neither. The
// coefficients come from weighted least squares on exponentially forgotten
// sums of one point per leak inversion (ordinary least squares with an
// intercept; Draper & Smith, Applied Regression Analysis, ch. 1). The
// intercept's variance σ²·(1/n + h̄²/S_hh) is inflated for the serial
// correlation of points taken half an hour apart, and the model's shape
// error enters it: a relative error of the coil model's h of ModelFrac
// shows up in the intercept as about 2·ModelFrac·s·h̄ (the intercept is an
// extrapolation to h = 0 across the range of h) [I]. So a large closed-valve
// heat input (a valve stuck open or reversed) does not pass for an offset.
type closedFit struct {
	n, sh, sy, shh, shy, syy float64
}

// Closed-fit constants [I].
const (
	closedFitTau      = 96  // points (≈ 48 h of closed operation at one per 30 min)
	closedFitMinN     = 24  // points before the fit is reported
	closedFitInflate  = 2.0 // variance inflation for serially correlated points
	closedFitNoiseK   = 0.1 // floor of the residual standard deviation, K
	closedFitSigmaMax = 0.4 // intercept standard error below which it counts as identified, K
)

// closedEstimate is the cached result of closedFit.estimate.
type closedEstimate struct {
	a, sig, heat float64
	ok           bool
}

func (c *closedFit) add(h, y float64) {
	d := 1 - 1.0/closedFitTau
	c.n = d*c.n + 1
	c.sh = d*c.sh + h
	c.sy = d*c.sy + y
	c.shh = d*c.shh + h*h
	c.shy = d*c.shy + h*y
	c.syy = d*c.syy + y*y
}

// estimate returns the intercept a, its standard error, and the mean
// heat-like part s·h̄ of the closed-valve rise. ok is false until enough
// points are held.
func (c *closedFit) estimate(modelFrac float64) (a, aSig, heat float64, ok bool) {
	if c.n < closedFitMinN {
		return nan, nan, nan, false
	}
	mh, my := c.sh/c.n, c.sy/c.n
	vhh := c.shh/c.n - mh*mh
	vyy := c.syy/c.n - my*my
	vhy := c.shy/c.n - mh*my
	s := 0.0
	// A reference shape that hardly varies cannot be told from a constant:
	// the whole rise is then attributed to the intercept only when h is
	// itself near zero; otherwise the fit is not identified.
	if vhh > 1e-6*math.Max(mh*mh, 1e-4) {
		s = vhy / vhh
	} else if math.Abs(mh) > 0.05 {
		return nan, nan, nan, false
	}
	if s < 0 {
		s = 0 // heat input cannot be negative
	}
	res := vyy - 2*s*vhy + s*s*vhh
	sig2 := math.Max(res*c.n/math.Max(c.n-2, 1), closedFitNoiseK*closedFitNoiseK)
	varA := sig2 / c.n
	if vhh > 0 {
		varA += sig2 * mh * mh / (vhh * c.n)
	}
	a = my - s*mh
	heat = s * mh
	return a, math.Sqrt(closedFitInflate*varA + sq(2*modelFrac*heat)), heat, true
}
