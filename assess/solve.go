package assess

import "math"

// rootBracketed finds x in [a, b] with f(x) = 0, where f(a) = fa and
// f(b) = fb have opposite signs, by the Illinois variant of regula falsi
// (Dowell & Jarratt 1971, BIT 11:168) with a bisection step whenever the
// secant estimate falls in the outer tenth of the bracket, so it never leaves
// the bracket and converges superlinearly on smooth monotone functions. It
// stops when the bracket is narrower than xtol or |f| ≤ ftol, or after
// maxIter evaluations; ok is false if the bracket was not valid.
func rootBracketed(f func(float64) float64, a, b, fa, fb, xtol, ftol float64, maxIter int) (x float64, ok bool) {
	switch {
	case math.IsNaN(fa) || math.IsNaN(fb):
		return math.NaN(), false
	case math.Abs(fa) <= ftol:
		return a, true
	case math.Abs(fb) <= ftol:
		return b, true
	case math.Signbit(fa) == math.Signbit(fb):
		return math.NaN(), false
	}
	side := 0
	for i := 0; i < maxIter; i++ {
		x = (a*fb - b*fa) / (fb - fa)
		w := b - a
		if !(x > a+0.1*w && x < b-0.1*w) {
			x = 0.5 * (a + b)
		}
		fx := f(x)
		if math.IsNaN(fx) {
			return x, false
		}
		if math.Abs(fx) <= ftol || math.Abs(b-a) <= xtol {
			return x, true
		}
		if math.Signbit(fx) == math.Signbit(fb) {
			b, fb = x, fx
			if side == -1 {
				fa /= 2
			}
			side = -1
		} else {
			a, fa = x, fx
			if side == 1 {
				fb /= 2
			}
			side = 1
		}
	}
	return x, true
}

// bisect finds the smallest x in [lo, hi] with ok(x) true, for a predicate
// that is false below some threshold and true above it, to within xtol.
func bisect(ok func(float64) bool, lo, hi, xtol float64) float64 {
	for hi-lo > xtol {
		m := 0.5 * (lo + hi)
		if ok(m) {
			hi = m
		} else {
			lo = m
		}
	}
	return hi
}
