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
// parameter x) as a quotient n/d, so a caller can fold the division into its
// own: (1 − e^{−2x})/((1 + e^{−2x})·x), and its Taylor series
// 1 − x²/3 + 2x⁴/15 − 17x⁶/315 (d = 1) below x = 0.02 (truncation below
// 6e−16), where the difference would cancel. NaN gives NaN.
func tanhOverX(x float64) (n, d float64) {
	if x < 0.02 {
		x2 := x * x
		return 1 - x2*(1.0/3-x2*(2.0/15-x2*(17.0/315))), 1
	}
	e := exp(-2 * x)
	return 1 - e, (1 + e) * x
}

// log is ln x for the per-rating logarithms, by the table method of Tang
// (1990), ACM TOMS 16:378 ("Table-driven implementation of the logarithm
// function in IEEE floating-point arithmetic"): x = 2^e·m, m ∈ [1, 2),
// c = 1 + (j + ½)/128 the centre of m's 1/128 interval, ln x = e·ln2 + ln c +
// ln(1 + u), u = (m − c)/c, |u| ≤ 1/257, ln(1 + u) by its degree-6 Taylor
// polynomial (truncation below 3e−18). Its absolute error is a few units in
// the last place of ln x (the tests check 3e−16·max(1, |ln x|)): the callers
// add it to other logarithms and exponentiate, so absolute error is what
// counts. Non-positive, subnormal, infinite and NaN arguments go to math.Log.
func log(x float64) float64 {
	if !(x >= 0x1p-1022 && x <= math.MaxFloat64) {
		return math.Log(x)
	}
	b := math.Float64bits(x)
	e := int64(b>>52) - 1023
	j := (b >> (52 - logTabBits)) & (logTabN - 1)
	m := math.Float64frombits(b&(1<<52-1) | 1023<<52)
	t := &logTab[j]
	u := (m - t.c) * t.invC
	u2 := u * u
	p := u - u2*(0.5-u*(1.0/3)) + u2*u2*(-0.25+u*0.2-u2*(1.0/6))
	fe := float64(e)
	return fe*ln2Hi + (t.lnC + (p + fe*ln2Lo))
}

const (
	// ln2Hi + ln2Lo is ln 2 with ln2Hi's low bits zero, so e·ln2Hi is exact
	// (the split of the Go math package and FreeBSD's msun).
	ln2Hi      = 6.93147180369123816490e-01
	ln2Lo      = 1.90821492927058770002e-10
	logTabBits = 7
	logTabN    = 1 << logTabBits
)

// logTab holds, per interval j, its centre c, 1/c and ln c; written only at
// initialisation.
var logTab = func() (t [logTabN]struct{ c, invC, lnC float64 }) {
	for j := range t {
		c := 1 + (float64(j)+0.5)/logTabN
		t[j].c, t[j].invC, t[j].lnC = c, 1/c, math.Log(c)
	}
	return t
}()
