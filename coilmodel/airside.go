package coilmodel

import "math"

// Air side of a plain plate-fin, round-tube coil: surface areas, the
// Wang, Chi & Chang (2000) j and f correlations and the Schmidt (1949) fin
// efficiency.

// Validity of Wang, Chi & Chang (2000) as listed by Shah & Sekulić (2003)
// §7.5.4.2: outside it the correlation is extrapolated and Rating.Extrapolated
// says so.
const (
	wangReMin = 300.0
	wangReMax = 20000.0
	// wangLowReSlope and wangHighReSlope are the log-log slopes this package uses
	// for j and f beyond the fitted Re_Dc range (laminar-like developing flow
	// below, a turbulent-like slope above), so h stays finite and monotone.
	wangLowReSlope  = -0.5
	wangHighReSlope = -0.2
	lnWangReMin     = 5.703782474656201 // ln 300
	lnWangReMax     = 9.903487552536127 // ln 20 000
)

// Extrapolation flags: which parts of the model are outside the range their
// correlation was fitted on.
type Extrapolation uint16

// Extrapolation flags.
const (
	ExtrapAirRe        Extrapolation = 1 << iota // Re_Dc outside 300-20 000 (Wang et al. 2000)
	ExtrapGeometry                               // Dc, Pt, Pl, Fp or Dh outside the Wang data set
	ExtrapInline                                 // Wang et al. (2000) is fitted on staggered coils only
	ExtrapWaterPrandtl                           // water Pr outside 0.5-2000 (Gnielinski)
)

// String lists the flags.
func (e Extrapolation) String() string {
	if e == 0 {
		return "none"
	}
	s := ""
	add := func(f Extrapolation, name string) {
		if e&f != 0 {
			if s != "" {
				s += ","
			}
			s += name
		}
	}
	add(ExtrapAirRe, "air-Re")
	add(ExtrapGeometry, "geometry")
	add(ExtrapInline, "inline-layout")
	add(ExtrapWaterPrandtl, "water-Pr")
	return s
}

// Surfaces are the heat-transfer areas and flow passages of a coil
// (Wang et al. 2000 definitions; Jacobi, Engineering Data Book III, ch. 6).
type Surfaces struct {
	FinAreaM2     float64 // A_f = 2·N_fins·(H·N·Pl − N_tubes·π·Dc²/4)
	TubeAreaM2    float64 // exposed collar area N_tubes·π·Dc·(L − N_fins·δf)
	OuterAreaM2   float64 // A_o = A_f + A_tube
	InnerAreaM2   float64 // A_i = N_tubes·π·Di·L
	MinFlowAreaM2 float64 // A_c, minimum free-flow area
	Sigma         float64 // A_c / A_face
	HydDiaM       float64 // Dh = 4·A_c·N·Pl/A_o
	Tubes         float64
	Fins          float64
}

// SurfacesOf computes the areas of coil c (which must be valid).
func SurfacesOf(c Coil) Surfaces {
	n := float64(c.Rows)
	tubes := n * float64(c.TubesPerRowEff())
	fins := c.FaceWidthM * c.Fin.PerM
	dc := c.CollarDiaM()
	depth := n * c.LongitudinalPitchM
	af := 2 * fins * (c.FaceHeightM*depth - tubes*math.Pi*dc*dc/4)
	at := tubes * math.Pi * dc * (c.FaceWidthM - fins*c.Fin.ThicknessM)
	ao := af + at
	ai := tubes * math.Pi * c.InnerDiaM() * c.FaceWidthM
	fp := 1 / c.Fin.PerM
	gap := c.TransversePitchM - dc
	if c.Layout == Staggered {
		diag := 2 * (diagonalPitch(c) - dc)
		gap = math.Min(gap, diag)
	}
	sigma := gap * (fp - c.Fin.ThicknessM) / (c.TransversePitchM * fp)
	ac := c.FaceAreaM2() * sigma
	return Surfaces{
		FinAreaM2: af, TubeAreaM2: at, OuterAreaM2: ao, InnerAreaM2: ai,
		MinFlowAreaM2: ac, Sigma: sigma, HydDiaM: 4 * ac * depth / ao,
		Tubes: tubes, Fins: fins,
	}
}

// wang holds the geometry-only parts of the Wang, Chi & Chang (2000)
// correlations, precomputed so j and f cost one log and one exp each.
type wang struct {
	n                     float64
	lnN                   float64
	lnPtPl, lnFpDc        float64
	lnFpDh, lnFpPt        float64
	p3geo                 float64 // 0.158·ln[N·(Fp/Dc)^0.41]
	plDh142               float64 // (Pl/Dh)^1.42
	f1                    float64 // F1 = −0.764 + 0.739·Pt/Pl + 0.177·Fp/Dc − 0.00758/N
	lnReMin, lnReMax      float64
	geometryOutsideFitted bool
	// The exponents of both correlations are linear in ln Re and 1/ln Re with
	// geometry-only coefficients, so ln j = jA + jB·ln Re + jC/ln Re and
	// ln f = fA + fB·ln Re + fC/ln Re inside the fitted range (collected
	// from the equations at jf). ljLo … lfHi are ln j and ln f at the bounds.
	jA, jB, jC             float64
	fA, fB, fC             float64
	ljLo, ljHi, lfLo, lfHi float64
}

func newWang(c Coil, s Surfaces) wang {
	n := math.Min(float64(c.Rows), 6)
	dc := c.CollarDiaM()
	fp := 1 / c.Fin.PerM
	pt, pl := c.TransversePitchM, c.LongitudinalPitchM
	w := wang{
		n: n, lnN: log(n),
		lnPtPl: log(pt / pl), lnFpDc: log(fp / dc),
		lnFpDh: log(fp / s.HydDiaM), lnFpPt: log(fp / pt),
		plDh142: exp(1.42 * log(pl/s.HydDiaM)),
		f1:      -0.764 + 0.739*pt/pl + 0.177*fp/dc - 0.00758/n,
		lnReMin: lnWangReMin, lnReMax: lnWangReMax,
	}
	w.p3geo = 0.158 * (w.lnN + 0.41*w.lnFpDc) // 0.158·ln[N·(Fp/Dc)^0.41]
	if n < 1.5 {
		w.jA = ln0108 + 1.9*w.lnPtPl - 1.084*w.lnFpDc - 0.786*w.lnFpDh - 0.236*w.lnFpPt
		w.jB = -0.29 - 0.23*w.lnPtPl + 0.126*w.lnFpPt
	} else {
		w.jA = ln0086 - 0.042*n - 1.224*w.lnN - 0.083*w.lnFpDc + (-5.735-1.21*w.lnN)*w.lnFpDh - 0.93*w.lnFpPt
		w.jB = -0.361 + w.p3geo + 1.21*w.lnFpDh
		w.jC = -0.076*w.plDh142*w.lnN + 0.058*n*w.lnFpDc
	}
	w.fA = ln00267 - 15.689*w.lnPtPl + 1.696*w.lnFpDc
	w.fB = w.f1
	w.fC = 64.021*w.lnPtPl - 15.695*w.lnFpDc
	w.ljLo, w.lfLo = w.lnJIn(w.lnReMin), w.lnFIn(w.lnReMin)
	w.ljHi, w.lfHi = w.lnJIn(w.lnReMax), w.lnFIn(w.lnReMax)
	const tol = 1.02 // 2 % slack on the Shah & Sekulić ranges
	w.geometryOutsideFitted = dc < 6.9e-3/tol || dc > 13.6e-3*tol ||
		s.HydDiaM < 1.30e-3/tol || s.HydDiaM > 9.37e-3*tol ||
		pt < 20.4e-3/tol || pt > 31.8e-3*tol || pl < 12.7e-3/tol || pl > 32e-3*tol ||
		fp < 1.0e-3/tol || fp > 8.7e-3*tol
	return w
}

// jf evaluates Wang, Chi & Chang (2000), IJHMT 43:2693, Eqs. for j (N = 1 and
// N ≥ 2) and f, at ln Re_Dc inside the fitted range:
//
//	N = 1: j = 0.108·Re^−0.29·(Pt/Pl)^P1·(Fp/Dc)^−1.084·(Fp/Dh)^−0.786·(Fp/Pt)^P2,
//	       P1 = 1.9 − 0.23·ln Re, P2 = −0.236 + 0.126·ln Re
//	N ≥ 2: j = 0.086·Re^P3·N^P4·(Fp/Dc)^P5·(Fp/Dh)^P6·(Fp/Pt)^−0.93,
//	       P3 = −0.361 − 0.042·N/ln Re + 0.158·ln[N·(Fp/Dc)^0.41],
//	       P4 = −1.224 − 0.076·(Pl/Dh)^1.42/ln Re, P5 = −0.083 + 0.058·N/ln Re,
//	       P6 = −5.735 + 1.21·ln(Re/N)
//	f = 0.0267·Re^F1·(Pt/Pl)^F2·(Fp/Dc)^F3, F1 = −0.764 + 0.739·Pt/Pl + 0.177·Fp/Dc − 0.00758/N,
//	       F2 = −15.689 + 64.021/ln Re, F3 = 1.696 − 15.695/ln Re.
func (w *wang) jf(lnRe float64) (j, f float64) {
	return w.jOnly(lnRe), w.fOnly(lnRe)
}

// Natural logs of the correlation constants.
const (
	ln0108  = -2.2256240518579173 // ln 0.108
	ln0086  = -2.4534079827286295 // ln 0.086
	ln00267 = -3.623091713575933  // ln 0.0267
)

func (w *wang) jOnly(lnRe float64) float64 {
	var lj float64
	if w.n < 1.5 {
		p1 := 1.9 - 0.23*lnRe
		p2 := -0.236 + 0.126*lnRe
		lj = ln0108 - 0.29*lnRe + p1*w.lnPtPl - 1.084*w.lnFpDc - 0.786*w.lnFpDh + p2*w.lnFpPt
	} else {
		inv := 1 / lnRe
		p3 := -0.361 - 0.042*w.n*inv + w.p3geo
		p4 := -1.224 - 0.076*w.plDh142*inv
		p5 := -0.083 + 0.058*w.n*inv
		p6 := -5.735 + 1.21*(lnRe-w.lnN)
		lj = ln0086 + p3*lnRe + p4*w.lnN + p5*w.lnFpDc + p6*w.lnFpDh - 0.93*w.lnFpPt
	}
	return math.Exp(lj)
}

func (w *wang) fOnly(lnRe float64) float64 {
	f2 := -15.689 + 64.021/lnRe
	f3 := 1.696 - 15.695/lnRe
	return math.Exp(ln00267 + w.f1*lnRe + f2*w.lnPtPl + f3*w.lnFpDc)
}

// lnJIn and lnFIn are ln j and ln f inside the fitted range in the collected
// form (the same values as jOnly and fOnly, which spell the published
// exponents out).
func (w *wang) lnJIn(lnRe float64) float64 { return w.jA + w.jB*lnRe + w.jC/lnRe }

func (w *wang) lnFIn(lnRe float64) float64 { return w.fA + w.fB*lnRe + w.fC/lnRe }

// lnJ is ln j at ln Re_Dc, extended beyond the fitted range by the power-law
// slopes above (a straight line in ln j against ln Re); outside reports the
// extension.
func (w *wang) lnJ(lnRe float64) (lj float64, outside bool) {
	switch {
	case lnRe < w.lnReMin:
		return w.ljLo + wangLowReSlope*(lnRe-w.lnReMin), true
	case lnRe > w.lnReMax:
		return w.ljHi + wangHighReSlope*(lnRe-w.lnReMax), true
	}
	return w.lnJIn(lnRe), false
}

// lnF is ln f at ln Re_Dc with the same extension.
func (w *wang) lnF(lnRe float64) float64 {
	switch {
	case lnRe < w.lnReMin:
		return w.lfLo + wangLowReSlope*(lnRe-w.lnReMin)
	case lnRe > w.lnReMax:
		return w.lfHi + wangHighReSlope*(lnRe-w.lnReMax)
	}
	return w.lnFIn(lnRe)
}

// colburnJ is the Wang j factor at Re_Dc, extended beyond the fitted range by
// the power-law slopes above; outside reports the extension.
func (w *wang) colburnJ(re float64) (j float64, outside bool) {
	lj, outside := w.lnJ(log(re))
	return exp(lj), outside
}

// fanning is the Wang friction factor at Re_Dc with the same extension.
func (w *wang) fanning(re float64) float64 { return exp(w.lnF(log(re))) }

// diagonalPitch is the staggered diagonal tube pitch √((Pt/2)² + Pl²),
// without math.Hypot's overflow guard (a coil pitch would need to exceed
// 1e150 m to overflow; Validate bounds pitches below 0.2 m).
func diagonalPitch(c Coil) float64 {
	a, b := c.TransversePitchM/2, c.LongitudinalPitchM
	return math.Sqrt(a*a + b*b)
}

// SchmidtPhi is the Schmidt (1949) equivalent-circular-fin parameter
// φ = (Req/r − 1)·[1 + 0.35·ln(Req/r)] for a plate fin on tubes of collar
// radius r = Dc/2 (Schmidt, Refrigerating Engineering 57:351): staggered
// Req/r = 1.27·(XM/r)·√(XL/XM − 0.3) with XM = Pt/2, XL = ½·√((Pt/2)² + Pl²);
// inline Req/r = 1.28·(XM/r)·√(XL/XM − 0.2) with XL = Pl/2.
func SchmidtPhi(c Coil) float64 {
	r := c.CollarDiaM() / 2
	xm := c.TransversePitchM / 2
	var ratio float64
	if c.Layout == Inline {
		xl := c.LongitudinalPitchM / 2
		ratio = 1.28 * xm / r * math.Sqrt(math.Max(xl/xm-0.2, 1e-6))
	} else {
		xl := 0.5 * diagonalPitch(c)
		ratio = 1.27 * xm / r * math.Sqrt(math.Max(xl/xm-0.3, 1e-6))
	}
	ratio = math.Max(ratio, 1)
	return (ratio - 1) * (1 + 0.35*log(ratio))
}

// FinEfficiency is η_f = tanh(m·r·φ)/(m·r·φ), m = √(2h/(k_f·δf)) (Schmidt 1949).
func FinEfficiency(hAir, finK, finThicknessM, collarRadiusM, phi float64) float64 {
	x := math.Sqrt(2*hAir/(finK*finThicknessM)) * collarRadiusM * phi
	if x < 1e-8 {
		return 1
	}
	return math.Tanh(x) / x
}

// WangChiChang returns the Colburn j and Fanning-type core friction factor f
// of Wang, Chi & Chang (2000) for coil c (which must be valid) at the
// collar Reynolds number reDc, with this package's power-law extension
// outside Re_Dc 300-20 000 (see wangLowReSlope).
func WangChiChang(c Coil, reDc float64) (j, f float64) {
	w := newWang(c, SurfacesOf(c))
	j, _ = w.colburnJ(reDc)
	return j, w.fanning(reDc)
}
