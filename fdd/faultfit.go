package fdd

import "math"

// faultCompare tells a fouled coil from a starved circuit by fitting each
// model to the running residuals and comparing how much of them it explains.
//
//   - Fouling lowers UA at every command: r ≈ g_U·δ, with g_U = ∂f/∂ln UA.
//   - Starvation by low branch pressure (loop differential pressure too low,
//     pump or balancing) scales the flow at every command: ṁ_s = F·ṁ,
//     r ≈ g_F·δ ln F with g_F = ∂f/∂ṁ·ṁ; the loss is largest where the coil
//     is water-limited (low command).
//   - Starvation by an added series resistance in the branch (strainer,
//     partly closed balancing valve, air-bound or blocked circuit). At a
//     fixed branch pressure the flow becomes ṁ_s = ṁ/√(1 + k·(ṁ/ṁ_d)²)
//     (resistances in series add, R = Δp/ṁ²), so ∂ṁ_s/∂k = −ṁ·(ṁ/ṁ_d)²/2 at
//     k = 0: the loss is concentrated where the valve is open and the
//     restriction dominates (high command); at low command the valve
//     dominates and the flow hardly changes.
//
// Each single-parameter weighted least-squares fit explains
// (Σw·g·r)²/(Σw·g²) of Σw·r² (Draper & Smith, ch. 2, extra sum of squares);
// the share is the better starved fit's part of it and the fouled fit's,
// each counted only for its physical sign (UA down, flow down, k up). The sums forget with the factor time
// constant, so the comparison follows a fault that develops.
type faultCompare struct {
	w, rr, ur, uu, sr, ss, fr, ff float64
}

// add records one steady heating sample: residual r, sensitivities gU
// (K per ln UA), gF (K per ln F) and gS (K per unit k), weight w = 1/σ².
func (c *faultCompare) add(r, gU, gF, gS, w, decay float64) {
	d := 1 - decay
	c.w = d*c.w + w
	c.rr = d*c.rr + w*r*r
	c.ur = d*c.ur + w*gU*r
	c.uu = d*c.uu + w*gU*gU
	c.sr = d*c.sr + w*gS*r
	c.ss = d*c.ss + w*gS*gS
	c.fr = d*c.fr + w*gF*r
	c.ff = d*c.ff + w*gF*gF
}

// explained returns the parts of Σw·r² the fouled and starved fits explain.
func (c *faultCompare) explained() (fouled, starved float64) {
	if c.uu > 0 && c.ur < 0 { // δ ln UA = ur/uu < 0
		fouled = c.ur * c.ur / c.uu
	}
	if c.ss > 0 && c.sr > 0 { // k = sr/ss > 0 (g_S < 0 for a restriction)
		starved = c.sr * c.sr / c.ss
	}
	if c.ff > 0 && c.fr < 0 { // δ ln F < 0
		starved = math.Max(starved, c.fr*c.fr/c.ff)
	}
	return
}

// share compares the fits by what each leaves unexplained (the smaller
// residual sum of squares wins): SSR_fouled/(SSR_fouled + SSR_starved),
// near 1 when a flow limit explains the residuals far better than a UA
// loss, near 0 for the reverse, 0.5 when they fit alike. NaN until a
// shortfall is seen.
func (c *faultCompare) share() float64 {
	f, s := c.explained()
	if !(f+s > 0) || c.rr <= 0 {
		return math.NaN()
	}
	floor := 1e-3 * c.rr
	sf, ss := math.Max(c.rr-f, floor), math.Max(c.rr-s, floor)
	return sf / (sf + ss)
}

// restrictionSens is ∂f/∂k for the series restriction at k = 0:
// ∂f/∂ṁ · (−ṁ·(ṁ/ṁ_d)²/2).
func restrictionSens(dM, mw, md float64) float64 {
	if !(md > 0) {
		return 0
	}
	x := mw / md
	return -dM * mw * x * x / 2
}
