package coilmodel

import "math"

// Elementary functions for the rating hot path. The heat-transfer pass is a
// chain of dependent exponentials (j factor, fin efficiency, row
// effectiveness), so the latency of each one sets the cost of a rating.
// math.Exp on amd64 evaluates a degree-8 Taylor series on x/16 and squares
// four times; exp below uses the table method of Tang (1989), ACM TOMS 15:144
// ("Table-driven implementation of the exponential function in IEEE
// floating-point arithmetic"): x = (64·k + j)·ln2/64 + r with |r| ≤ ln2/128,
// e^x = 2^k · 2^(j/64) · e^r, e^r by its degree-5 Taylor polynomial (the
// omitted r⁶/720 term is below 3.5e−17). The result is within a few units in
// the last place of math.Exp (the tests check 4e−16 relative); arguments
// outside ±700, NaN and infinities go to math.Exp.

const (
	expTabBits = 6
	expTabN    = 1 << expTabBits
	// expInvL is 64/ln 2; expL1 + expL2 is ln2/64 with expL1 carrying only
	// its leading 32 bits, so k·expL1 is exact for |k| < 2^21.
	expInvL = expTabN / math.Ln2
	// roundMagic rounds a float64 of magnitude below 2^51 to an integer by
	// adding and subtracting 1.5·2^52.
	roundMagic = 0x1.8p52
	expL1      = 0x1.62e42feep-07 // ln2/64 to 32 bits
	expL2      = math.Ln2/expTabN - expL1
)

var (
	// expTab[j] holds the bits of 2^(j/64); written only at initialisation.
	expTab = func() (t [expTabN]uint64) {
		for j := range t {
			t[j] = math.Float64bits(math.Exp2(float64(j) / expTabN))
		}
		return t
	}()
)

// exp is e^x (see the file comment).
func exp(x float64) float64 {
	if !(x > -700 && x < 700) {
		return math.Exp(x)
	}
	kf := float64(x*expInvL) + roundMagic
	kf -= roundMagic
	r := (x - kf*expL1) - kf*expL2
	k := int64(kf)
	r2 := r * r
	p := r + r2*(0.5+r*(1.0/6)) + r2*r2*((1.0/24)+r*(1.0/120))
	s := math.Float64frombits(expTab[k&(expTabN-1)] + uint64(k>>expTabBits)<<52)
	return s + s*p
}

// expm1 is e^x − 1: exp where cancellation costs nothing measurable
// (|x| > 0.01: relative error below 1e−13) and math.Expm1 near zero.
func expm1(x float64) float64 {
	if x > 0.01 || x < -0.01 {
		return exp(x) - 1
	}
	return math.Expm1(x)
}

// tanhOverX is tanh(x)/x for x ≥ 0 (the Schmidt fin efficiency of a fin
// parameter x): (1 − e^{−2x})/((1 + e^{−2x})·x), and its Taylor series
// 1 − x²/3 + 2x⁴/15 − 17x⁶/315 below x = 0.02 (truncation below 6e−16),
// where the difference would cancel. NaN gives NaN.
func tanhOverX(x float64) float64 {
	if x < 0.02 {
		x2 := x * x
		return 1 - x2*(1.0/3-x2*(2.0/15-x2*(17.0/315)))
	}
	e := exp(-2 * x)
	return (1 - e) / ((1 + e) * x)
}
