package coilmodel

import "math"

// Effectiveness-NTU relations. Crossflow forms use the usual ε, NTU = UA/Cmin
// and Cr = Cmin/Cmax. The coil (row) forms are written from the AIR side:
// NTU_a = UA/C_air, R = C_air/C_water (R may exceed 1), and they return the
// air-side temperature effectiveness P_a = (T_a,out − T_a,in)/(T_w,in − T_a,in).

// CrossflowUnmixedExact is the effectiveness of a single-pass crossflow
// exchanger with both fluids unmixed, by the exact series of Mason (1954), as
// given in Shah & Sekulić (2003), Table 3.3:
// ε = 1/(Cr·NTU) · Σ_{n≥0} [1 − e^{−NTU} Σ_{m≤n} NTU^m/m!]·[1 − e^{−Cr·NTU} Σ_{m≤n} (Cr·NTU)^m/m!].
// It is a reference (not hot-path) function.
func CrossflowUnmixedExact(ntu, cr float64) float64 {
	if !(ntu > 0) {
		return 0
	}
	if cr <= 1e-12 {
		return -math.Expm1(-ntu)
	}
	if math.IsInf(ntu, 1) {
		ntu = 1e3
	}
	x, y := ntu, cr*ntu
	sum := 0.0
	for n := 0; n < 100000; n++ {
		t := poissonTail(n, x) * poissonTail(n, y)
		sum += t
		if float64(n) > x && t <= 1e-17*sum {
			break
		}
	}
	return sum / y
}

// poissonTail is P(X > n) for X ~ Poisson(x): 1 − e^{−x}·Σ_{m≤n} x^m/m!,
// summed from whichever side avoids cancellation.
func poissonTail(n int, x float64) float64 {
	if x <= 0 {
		return 0
	}
	if float64(n) < x {
		s, term := 0.0, 1.0
		for m := 0; m <= n; m++ {
			if m > 0 {
				term *= x / float64(m)
			}
			s += term
		}
		v := 1 - math.Exp(-x)*s
		if n == 0 {
			v = -math.Expm1(-x)
		}
		return v
	}
	lg, _ := math.Lgamma(float64(n + 2))
	term := math.Exp(float64(n+1)*math.Log(x) - lg - x)
	s := 0.0
	for m := n + 1; term > 1e-300; m++ {
		s += term
		if term < 1e-18*s {
			break
		}
		term *= x / float64(m+1)
	}
	return s
}

// CrossflowUnmixedApprox is the usual approximation for crossflow with both
// fluids unmixed (Incropera & DeWitt, Table 11.3):
// ε = 1 − exp{(1/Cr)·NTU^0.22·[exp(−Cr·NTU^0.78) − 1]}.
func CrossflowUnmixedApprox(ntu, cr float64) float64 {
	if !(ntu > 0) {
		return 0
	}
	if cr <= 1e-12 {
		return -math.Expm1(-ntu)
	}
	return -math.Expm1(math.Pow(ntu, 0.22) * math.Expm1(-cr*math.Pow(ntu, 0.78)) / cr)
}

// CrossflowCmaxMixed is single-pass crossflow with Cmax mixed and Cmin
// unmixed (Incropera & DeWitt, Table 11.3): ε = (1/Cr)·{1 − exp[−Cr·(1 − e^{−NTU})]}.
func CrossflowCmaxMixed(ntu, cr float64) float64 {
	if !(ntu > 0) {
		return 0
	}
	k := -math.Expm1(-ntu)
	if cr <= 1e-12 {
		return k
	}
	return -math.Expm1(-cr*k) / cr
}

// CrossflowCminMixed is single-pass crossflow with Cmin mixed and Cmax
// unmixed (Incropera & DeWitt, Table 11.3): ε = 1 − exp{−(1/Cr)·[1 − exp(−Cr·NTU)]}.
func CrossflowCminMixed(ntu, cr float64) float64 {
	if !(ntu > 0) {
		return 0
	}
	if cr <= 1e-12 {
		return -math.Expm1(-ntu)
	}
	return -math.Expm1(math.Expm1(-cr*ntu) / cr)
}

// Counterflow is the counterflow effectiveness (Incropera & DeWitt, Table 11.3):
// ε = [1 − e^{−NTU(1−Cr)}]/[1 − Cr·e^{−NTU(1−Cr)}], and NTU/(1 + NTU) at Cr = 1.
func Counterflow(ntu, cr float64) float64 {
	if !(ntu > 0) {
		return 0
	}
	if math.Abs(1-cr) < 1e-9 {
		if math.IsInf(ntu, 1) {
			return 1
		}
		return ntu / (1 + ntu)
	}
	e := math.Exp(-ntu * (1 - cr))
	return (1 - e) / (1 - cr*e)
}

// OneRowEffectiveness is the air-side effectiveness of a 1-row coil: each
// air streamline meets one tube, the water is mixed across the stream and
// unmixed only along the circuit, whatever the circuiting:
// P_a = (1/R)·[1 − exp(−R·(1 − e^{−NTU_a}))] (crossflow, air unmixed, water
// mixed; Incropera & DeWitt Table 11.3 written from the air side).
func OneRowEffectiveness(ntuAir, r float64) float64 {
	if !(ntuAir > 0) {
		return 0
	}
	k := -expm1(-ntuAir)
	if r <= 1e-12 {
		return k
	}
	if math.IsInf(r, 1) {
		return 0
	}
	return -expm1(-r*k) / r
}

// SerpentineEffectiveness is the air-side effectiveness of an N-row coil
// (N = 1-4) whose circuits are serpentines through all rows in overall
// counterflow (water enters the leaving-air row, reverses direction at each
// return bend, mixed between rows). With K = 1 − exp(−NTU_a/N) and
// P_a = (1/R)·(1 − 1/ξ) (Nicole 1972, CSIR Special Report Chem. 223, as
// quoted in Thulukkanam, Heat Exchanger Design Handbook, 2nd ed., 2013):
//
//	N = 2: ξ = K/2 + (1 − K/2)·e^{2KR}
//	N = 3: ξ = K·[1 − K/4 − R·K·(1 − K/2)]·e^{KR} + (1 − K/2)²·e^{3KR}
//	N = 4: ξ = (K/2)(1 − K/2 + K²/4) + K(1 − K/2)[1 − 2RK(1 − K/2)]·e^{2KR} + (1 − K/2)³·e^{4KR}
//
// The 4-row line is the corrected form: the bracket multiplies e^{2KR}
// (a form printed with e^{2KR} inside the bracket and a factor R/8 fails the
// R → 0 limit 1 − e^{−NTU}). ξ − 1 is evaluated with expm1 so that small R is
// accurate; R = 0 gives exactly 1 − e^{−NTU_a} and R → ∞ gives 1/R.
// Rows outside 1-4 return NaN.
func SerpentineEffectiveness(rows int, ntuAir, r float64) float64 {
	return serpentine(rows, ntuAir, ntuAir/float64(rows), r)
}

// serpentine is SerpentineEffectiveness with the per-row NTU_a/N given (the
// rating pass multiplies by a stored 1/N instead of dividing).
func serpentine(rows int, ntuAir, ntuRow, r float64) float64 {
	if rows == 1 {
		return OneRowEffectiveness(ntuAir, r)
	}
	if rows < 1 || rows > MaxRows {
		return math.NaN()
	}
	if !(ntuAir > 0) {
		return 0
	}
	if r <= 0 {
		return -expm1(-ntuAir)
	}
	if math.IsInf(r, 1) {
		return 0
	}
	n := float64(rows)
	k := -expm1(-ntuRow)
	kr := k * r
	if n*kr > 600 {
		return 1 / r // ξ is astronomically large: the water leaves at the air inlet temperature
	}
	h := 1 - k/2
	var xm1 float64 // ξ − 1
	switch rows {
	case 2:
		xm1 = h * expm1(2*kr)
	case 3:
		// e^{3x} − 1 = e1·(e1² + 3·e1 + 3) with e1 = e^x − 1: one exponential.
		a := k * (1 - k/4 - kr*h)
		b := h * h
		e1 := expm1(kr)
		xm1 = a*e1 + b*(e1*(e1*(e1+3)+3)) - kr*k*h
	case 4:
		// e^{4x} − 1 = e2·(e2 + 2) with e2 = e^{2x} − 1: one exponential.
		c2 := k * h * (1 - 2*kr*h)
		c4 := h * h * h
		e2 := expm1(2 * kr)
		xm1 = c2*e2 + c4*(e2*(e2+2)) - 2*kr*k*h*h
	}
	return xm1 / ((1 + xm1) * r)
}

// RowsOnePassEffectiveness is the air-side effectiveness of N rows in one
// pass: each row is its own circuit, all fed in parallel from the header and
// flowing the same way (Schedwill 1968, VDI Fortschr.-Ber. Reihe 6 Nr. 19, as
// quoted in Thulukkanam 2013), with K = 1 − e^{−NTU_a/N}:
// P_a = (1/R)·{1 − [1 + Σ_{i=1}^{N−1} Σ_{j=0}^{i} C(i,j)·K^j·e^{−(i−j)NTU_a/N}·Σ_{k=0}^{j} (NKR)^k/k!] / (N·e^{NKR})}.
// N = 1 reduces to OneRowEffectiveness. It is a reference function for
// header-fed coils.
func RowsOnePassEffectiveness(rows int, ntuAir, r float64) float64 {
	if rows < 1 || rows > 12 {
		return math.NaN()
	}
	if !(ntuAir > 0) {
		return 0
	}
	if r <= 1e-9 {
		return -math.Expm1(-ntuAir)
	}
	n := float64(rows)
	k := -math.Expm1(-ntuAir / n)
	nkr := n * k * r
	if nkr > 600 {
		return 1 / r
	}
	s := 1.0
	for i := 1; i < rows; i++ {
		binom := 1.0
		for j := 0; j <= i; j++ {
			if j > 0 {
				binom = binom * float64(i-j+1) / float64(j)
			}
			inner, term := 0.0, 1.0
			for kk := 0; kk <= j; kk++ {
				if kk > 0 {
					term *= nkr / float64(kk)
				}
				inner += term
			}
			s += binom * math.Pow(k, float64(j)) * math.Exp(-float64(i-j)*ntuAir/n) * inner
		}
	}
	return (1 - s/(n*math.Exp(nkr))) / r
}
