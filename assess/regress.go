package assess

import "math"

// lineFit is an ordinary least-squares line y = a + b·x.
type lineFit struct {
	n          int
	a, b       float64
	xMean, sxx float64
	s          float64 // residual standard deviation, n − 2 degrees of freedom
	rho1       float64 // lag-1 autocorrelation of the residuals in input order
}

// fitLine fits y = a + b·x by least squares (Montgomery & Runger, Applied
// Statistics and Probability for Engineers, ch. 11). It needs n ≥ 3 and
// some spread in x; ok is false otherwise.
func fitLine(x, y []float64) (lineFit, bool) {
	n := len(x)
	if n < 3 || len(y) != n {
		return lineFit{}, false
	}
	var sx, sy float64
	for i := range x {
		sx += x[i]
		sy += y[i]
	}
	mx, my := sx/float64(n), sy/float64(n)
	var sxx, sxy float64
	for i := range x {
		dx := x[i] - mx
		sxx += dx * dx
		sxy += dx * (y[i] - my)
	}
	if !(sxx > 1e-9*float64(n)) {
		return lineFit{}, false
	}
	f := lineFit{n: n, b: sxy / sxx, xMean: mx, sxx: sxx}
	f.a = my - f.b*mx
	var sse, c0, c1 float64
	prev := math.NaN()
	for i := range x {
		e := y[i] - f.a - f.b*x[i]
		sse += e * e
		c0 += e * e
		if !math.IsNaN(prev) {
			c1 += e * prev
		}
		prev = e
	}
	f.s = math.Sqrt(sse / float64(n-2))
	if c0 > 0 {
		f.rho1 = c1 / c0
	}
	return f, true
}

// at is the fitted value at x.
func (f lineFit) at(x float64) float64 { return f.a + f.b*x }

// predictionHalfWidth is the half-width of the two-sided 95 % prediction
// interval for one new observation at x0: t(0.975, n−2)·s·√(1 + 1/n +
// (x0 − x̄)²/Sxx) (Montgomery & Runger, ch. 11). The parameter terms 1/n
// and (x0 − x̄)²/Sxx are scaled by n/n_eff with n_eff = n·(1 − ρ₁)/(1 + ρ₁)
// for residuals with lag-1 autocorrelation ρ₁ ≥ 0 (the AR(1) variance
// inflation; Wilks, Statistical Methods in the Atmospheric Sciences, §5.2),
// since hourly loads are serially correlated.
func (f lineFit) predictionHalfWidth(x0 float64) float64 {
	infl := 1.0
	if r := math.Min(math.Max(f.rho1, 0), 0.95); r > 0 {
		infl = (1 + r) / (1 - r)
	}
	nEff := math.Max(float64(f.n)/infl, 3)
	par := infl * (1/float64(f.n) + (x0-f.xMean)*(x0-f.xMean)/f.sxx)
	return studentT975(nEff-2) * f.s * math.Sqrt(1+par)
}

// studentT975 is the 0.975 quantile of Student's t with df degrees of
// freedom, by the Cornish–Fisher expansion about the normal quantile
// (Abramowitz & Stegun, Handbook of Mathematical Functions, 26.7.5); within
// 0.3 % of the tabulated values for df ≥ 3 (e.g. 3.182 at df 3, 2.228 at
// df 10, 1.960 as df → ∞). Below 1 degree of freedom it returns the df 1
// value 12.71.
func studentT975(df float64) float64 {
	if df < 1 {
		df = 1
	}
	if df < 1.5 {
		return 12.706 // A&S Table 26.10, df 1
	}
	if df < 2.5 {
		return 4.303 // A&S Table 26.10, df 2
	}
	const z = 1.959963984540054
	z2 := z * z
	g1 := (z2 + 1) * z / 4
	g2 := ((5*z2+16)*z2 + 3) * z / 96
	g3 := (((3*z2+19)*z2+17)*z2 - 15) * z / 384
	g4 := ((((79*z2+776)*z2+1482)*z2-1920)*z2 - 945) * z / 92160
	return z + g1/df + g2/(df*df) + g3/(df*df*df) + g4/(df*df*df*df)
}
