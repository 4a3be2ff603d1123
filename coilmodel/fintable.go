package coilmodel

import "math"

// Fin-efficiency table. The Schmidt fin efficiency η_f = tanh(x)/x depends on
// h only through x = finFactor·√h, and the pass knows ln x before it knows x
// (ln x = ½·ln h + ln finFactor). Tabulating η_f against y = ln x lets the
// pass look it up while it exponentiates ln h, instead of exponentiating
// twice in a row. η_f(y) is smooth with bounded derivatives, so a cubic
// Hermite interpolant with exact node slopes (dη_f/dy = sech²x − η_f) on a
// 1/64 step errs by at most Δ⁴/384·max|η_f⁗| (the tests check 1e−9 relative).
// Outside y ∈ [−4, 3.5] (x from 0.018 to 33) tanhOverX is used.

const (
	finTabY0    = -4.0
	finTabY1    = 3.5
	finTabPerY  = 64
	finTabSteps = int((finTabY1 - finTabY0) * finTabPerY)
)

// finTab[i] holds the cubic c0 + s·(c1 + s·(c2 + s·c3)) on interval i, s ∈ [0, 1).
// It is written only at initialisation.
var finTab = func() (t [finTabSteps][4]float64) {
	node := func(i int) (f, d float64) {
		x := math.Exp(finTabY0 + float64(i)/finTabPerY)
		th := math.Tanh(x)
		f = th / x
		return f, (1 - th*th) - f
	}
	const step = 1.0 / finTabPerY
	for i := range t {
		f0, d0 := node(i)
		f1, d1 := node(i + 1)
		t[i] = [4]float64{f0, step * d0, 3*(f1-f0) - step*(2*d0+d1), 2*(f0-f1) + step*(d0+d1)}
	}
	return t
}()

// finEfficiency is tanh(x)/x at ln x = y.
func finEfficiency(y float64) float64 {
	u := (y - finTabY0) * finTabPerY
	if !(u >= 0 && u < float64(finTabSteps)) {
		n, d := tanhOverX(math.Exp(y))
		return n / d
	}
	i := int(u)
	s := u - float64(i)
	c := &finTab[i]
	return c[0] + s*(c[1]+s*(c[2]+s*c[3]))
}
