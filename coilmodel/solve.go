package coilmodel

import "math"

// brentRoot finds a zero of f in [a, b], where fa = f(a) and fb = f(b) have
// opposite signs (or one is zero), by Brent's method (Brent 1973, Algorithms
// for Minimization without Derivatives, ch. 4): inverse quadratic
// interpolation and secant steps, safeguarded by bisection, so it never leaves
// the bracket. It stops when the bracket is narrower than xtol·|x| + atol
// (+ 1e−300) or after maxIter evaluations; ok is false if the bracket was not
// valid. A root near zero needs atol > 0: the relative part alone shrinks to
// nothing there, and the iteration would step between adjacent floats.
func brentRoot(f func(float64) float64, a, b, fa, fb, xtol, atol float64, maxIter int) (x float64, ok bool) {
	if fa == 0 {
		return a, true
	}
	if fb == 0 {
		return b, true
	}
	if math.Signbit(fa) == math.Signbit(fb) || math.IsNaN(fa) || math.IsNaN(fb) {
		return 0, false
	}
	c, fc := a, fa
	d := b - a
	e := d
	for i := 0; i < maxIter; i++ {
		if math.Signbit(fb) == math.Signbit(fc) {
			c, fc = a, fa
			d = b - a
			e = d
		}
		if math.Abs(fc) < math.Abs(fb) {
			a, b, c = b, c, b
			fa, fb, fc = fb, fc, fb
		}
		tol := 2*2.2e-16*math.Abs(b) + 0.5*(xtol*math.Abs(b)+atol) + 1e-300
		m := 0.5 * (c - b)
		if math.Abs(m) <= tol || fb == 0 {
			return b, true
		}
		if math.Abs(e) >= tol && math.Abs(fa) > math.Abs(fb) {
			s := fb / fa
			var p, q float64
			if a == c {
				p = 2 * m * s
				q = 1 - s
			} else {
				qq := fa / fc
				r := fb / fc
				p = s * (2*m*qq*(qq-r) - (b-a)*(r-1))
				q = (qq - 1) * (r - 1) * (s - 1)
			}
			if p > 0 {
				q = -q
			} else {
				p = -p
			}
			if 2*p < math.Min(3*m*q-math.Abs(tol*q), math.Abs(e*q)) {
				e = d
				d = p / q
			} else {
				d = m
				e = m
			}
		} else {
			d = m
			e = m
		}
		a, fa = b, fb
		if math.Abs(d) > tol {
			b += d
		} else if m > 0 {
			b += tol
		} else {
			b -= tol
		}
		fb = f(b)
		if math.IsNaN(fb) {
			return 0, false
		}
	}
	return b, true
}
