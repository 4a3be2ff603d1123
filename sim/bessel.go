package sim

import "math"

// Modified Bessel functions of the first and second kind, orders 0 and 1,
// by the polynomial approximations of Abramowitz & Stegun, Handbook of
// Mathematical Functions (1964), 9.8.1–9.8.8 (|error| < 2e-7 relative for
// I, < 1e-7 absolute-scaled for K). Used for the annular-fin efficiency.

func besselI0(x float64) float64 {
	ax := math.Abs(x)
	if ax < 3.75 {
		t := x / 3.75
		t *= t
		return 1 + t*(3.5156229+t*(3.0899424+t*(1.2067492+t*(0.2659732+t*(0.0360768+t*0.0045813)))))
	}
	t := 3.75 / ax
	return math.Exp(ax) / math.Sqrt(ax) * (0.39894228 + t*(0.01328592+t*(0.00225319+t*(-0.00157565+
		t*(0.00916281+t*(-0.02057706+t*(0.02635537+t*(-0.01647633+t*0.00392377))))))))
}

func besselI1(x float64) float64 {
	ax := math.Abs(x)
	var r float64
	if ax < 3.75 {
		t := x / 3.75
		t *= t
		r = ax * (0.5 + t*(0.87890594+t*(0.51498869+t*(0.15084934+t*(0.02658733+t*(0.00301532+t*0.00032411))))))
	} else {
		t := 3.75 / ax
		r = math.Exp(ax) / math.Sqrt(ax) * (0.39894228 + t*(-0.03988024+t*(-0.00362018+t*(0.00163801+
			t*(-0.01031555+t*(0.02282967+t*(-0.02895312+t*(0.01787654-t*0.00420059))))))))
	}
	if x < 0 {
		return -r
	}
	return r
}

// besselK0 requires x > 0.
func besselK0(x float64) float64 {
	if x <= 2 {
		t := x * x / 4
		return -math.Log(x/2)*besselI0(x) + (-0.57721566 + t*(0.42278420+t*(0.23069756+
			t*(0.03488590+t*(0.00262698+t*(0.00010750+t*0.0000074))))))
	}
	t := 2 / x
	return math.Exp(-x) / math.Sqrt(x) * (1.25331414 + t*(-0.07832358+t*(0.02189568+
		t*(-0.01062446+t*(0.00587872+t*(-0.00251540+t*0.00053208))))))
}

// besselK1 requires x > 0.
func besselK1(x float64) float64 {
	if x <= 2 {
		t := x * x / 4
		return math.Log(x/2)*besselI1(x) + (1/x)*(1+t*(0.15443144+t*(-0.67278579+
			t*(-0.18156897+t*(-0.01919402+t*(-0.00110404-t*0.00004686))))))
	}
	t := 2 / x
	return math.Exp(-x) / math.Sqrt(x) * (1.25331414 + t*(0.23498619+t*(-0.03655620+
		t*(0.01504268+t*(-0.00780353+t*(0.00325614-t*0.00068245))))))
}

// annularFinEfficiency is the efficiency of a straight annular fin of
// uniform thickness with an adiabatic (corrected-length) tip, Gardner (1945),
// Trans. ASME 67:621; Incropera & DeWitt, Fundamentals of Heat and Mass
// Transfer, Table 3.5: η = (2r1/m)/(r2c²−r1²)·[K1(mr1)I1(mr2c) − I1(mr1)K1(mr2c)]
// / [I0(mr1)K1(mr2c) + K0(mr1)I1(mr2c)], m = sqrt(2h/(k·t)), r2c = r2 + t/2.
func annularFinEfficiency(hWm2K, kWmK, thickM, r1, r2 float64) float64 {
	if hWm2K <= 0 {
		return 1
	}
	m := math.Sqrt(2 * hWm2K / (kWmK * thickM))
	r2c := r2 + thickM/2
	a, b := m*r1, m*r2c
	num := besselK1(a)*besselI1(b) - besselI1(a)*besselK1(b)
	den := besselI0(a)*besselK1(b) + besselK0(a)*besselI1(b)
	eta := 2 * r1 / m / (r2c*r2c - r1*r1) * num / den
	if eta > 1 || math.IsNaN(eta) {
		return 1
	}
	return eta
}
