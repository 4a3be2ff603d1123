package sim

import (
	"math"

	"risewatch/coilmodel"
)

// coilPhysics selects the heat-transfer inputs of the segment model.
//
// The segment march (coilsolve.go) is one solution method; the detector's
// coilmodel.Rate is another (closed-form effectiveness-NTU of the row
// arrangement, properties at the mean stream temperatures). To cross-check
// the METHODS, physicsRateInputs feeds the march the same physical inputs
// Rate uses, coded here independently of coilmodel and evaluated locally in
// every segment. physicsOwn is the simulator's own, deliberately different
// physics (Gray & Webb air side, annular fin, Sieder–Tate laminar water
// side), which the demo and the detector tests run on.
type coilPhysics int

const (
	// physicsOwn: Gray & Webb (1986) j with the single-point factor
	// airSideCalibration, equal-area annular fin (Gardner 1945), water side
	// Sieder–Tate / Gnielinski with entrance factor; h_a per row at its mean
	// air temperature, h_w per circuit and row at its entering water.
	physicsOwn coilPhysics = iota
	// physicsRateInputs: Wang, Chi & Chang (2000) j with the Schmidt (1949)
	// fin efficiency, and the Hausen / Gnielinski / VDI-blend water side with
	// the entry length of one straight tube — the inputs coilmodel.Rate
	// documents — evaluated per segment at the segment's own mean air and
	// water temperatures and the circuit's own Reynolds number. No fitted
	// factor.
	physicsRateInputs
)

// Validity of Wang, Chi & Chang (2000) in Re_Dc and the power-law slopes the
// rate-inputs physics uses beyond it; coilmodel documents the same extension
// (its wangLowReSlope / wangHighReSlope), so the inputs stay equal there.
const (
	wangReLo, wangReHi       = 300.0, 20000.0
	wangSlopeLo, wangSlopeHi = -0.5, -0.2
)

// checkGeom holds the geometry-only terms of the rate-inputs physics.
type checkGeom struct {
	jLo, jHi  float64 // Wang j at Re_Dc = 300 and 20 000
	finFactor float64 // √(2/(k_f·δ_f))·r_c·φ, so m·r_c·φ = finFactor·√h
	dOverL    float64 // Di / straight tube length (Hausen entry length)
}

func newCheckGeom(g *coilGeom) checkGeom {
	rc := g.dc / 2
	return checkGeom{
		jLo:       g.wangChiChangJ(wangReLo),
		jHi:       g.wangChiChangJ(wangReHi),
		finFactor: math.Sqrt(2/(g.kFin*g.tf)) * rc * g.schmidtPhi(),
		dOverL:    g.di / g.widthM,
	}
}

// wangChiChangJ is the Colburn j of plain plate fins, Wang, Chi & Chang
// (2000), Int. J. Heat Mass Transfer 43:2693, Eqs. for N = 1 and N ≥ 2,
// Re on the fin-collar diameter, N capped at 6 (the fitted range):
//
//	N = 1: j = 0.108·Re^−0.29·(Pt/Pl)^P1·(Fp/Dc)^−1.084·(Fp/Dh)^−0.786·(Fp/Pt)^P2,
//	       P1 = 1.9 − 0.23·ln Re, P2 = −0.236 + 0.126·ln Re
//	N ≥ 2: j = 0.086·Re^P3·N^P4·(Fp/Dc)^P5·(Fp/Dh)^P6·(Fp/Pt)^−0.93,
//	       P3 = −0.361 − 0.042·N/ln Re + 0.158·ln[N·(Fp/Dc)^0.41],
//	       P4 = −1.224 − 0.076·(Pl/Dh)^1.42/ln Re, P5 = −0.083 + 0.058·N/ln Re,
//	       P6 = −5.735 + 1.21·ln(Re/N)
func (g *coilGeom) wangChiChangJ(reDc float64) float64 {
	ln := math.Log(reDc)
	n := math.Min(float64(g.rows), 6)
	if g.rows == 1 {
		p1 := 1.9 - 0.23*ln
		p2 := -0.236 + 0.126*ln
		return 0.108 * math.Pow(reDc, -0.29) * math.Pow(g.pt/g.pl, p1) * math.Pow(g.fp/g.dc, -1.084) *
			math.Pow(g.fp/g.dh, -0.786) * math.Pow(g.fp/g.pt, p2)
	}
	p3 := -0.361 - 0.042*n/ln + 0.158*math.Log(n*math.Pow(g.fp/g.dc, 0.41))
	p4 := -1.224 - 0.076*math.Pow(g.pl/g.dh, 1.42)/ln
	p5 := -0.083 + 0.058*n/ln
	p6 := -5.735 + 1.21*math.Log(reDc/n)
	return 0.086 * math.Pow(reDc, p3) * math.Pow(n, p4) * math.Pow(g.fp/g.dc, p5) * math.Pow(g.fp/g.dh, p6) * math.Pow(g.fp/g.pt, -0.93)
}

// wangJ is wangChiChangJ inside Re_Dc 300–20 000 and the power-law
// extension j(Re) = j(Re_bound)·(Re/Re_bound)^slope outside it.
func (g *coilGeom) wangJ(reDc float64) float64 {
	switch {
	case reDc < wangReLo:
		return g.check.jLo * math.Pow(reDc/wangReLo, wangSlopeLo)
	case reDc > wangReHi:
		return g.check.jHi * math.Pow(reDc/wangReHi, wangSlopeHi)
	}
	return g.wangChiChangJ(reDc)
}

// schmidtPhi is Schmidt's equivalent-circular-fin parameter for plate fins,
// Schmidt (1949), Refrigerating Engineering 57:351:
// φ = (R/r − 1)·[1 + 0.35·ln(R/r)], r = Dc/2, XM = Pt/2, and
// R/r = 1.27·(XM/r)·√(XL/XM − 0.3), XL = ½·√((Pt/2)² + Pl²) for staggered
// tubes, R/r = 1.28·(XM/r)·√(XL/XM − 0.2), XL = Pl/2 for inline tubes.
func (g *coilGeom) schmidtPhi() float64 {
	r := g.dc / 2
	xm := g.pt / 2
	var ratio float64
	if g.layout == coilmodel.Inline {
		ratio = 1.28 * xm / r * math.Sqrt(math.Max(g.pl/2/xm-0.2, 1e-6))
	} else {
		xl := 0.5 * math.Sqrt(xm*xm+g.pl*g.pl)
		ratio = 1.27 * xm / r * math.Sqrt(math.Max(xl/xm-0.3, 1e-6))
	}
	ratio = math.Max(ratio, 1)
	return (ratio - 1) * (1 + 0.35*math.Log(ratio))
}

// schmidtFinEfficiency is η_f = tanh(m·r·φ)/(m·r·φ), m = √(2h/(k_f·δ_f))
// (Schmidt 1949).
func (g *coilGeom) schmidtFinEfficiency(h float64) float64 {
	x := g.check.finFactor * math.Sqrt(h)
	if x < 1e-8 {
		return 1
	}
	return math.Tanh(x) / x
}

// nusseltBlend is the mean tube Nusselt number of the rate-inputs physics:
//   - Re < 2300: Hausen (1943), thermal entry with developed velocity at
//     constant wall temperature, Nu = 3.66 + 0.0668·Gz/(1 + 0.04·Gz^(2/3)),
//     Gz = (Di/L)·Re·Pr (Incropera & DeWitt, Fundamentals of Heat and Mass
//     Transfer, Eq. 8.57);
//   - Re > 10⁴: Gnielinski (1976), Int. Chem. Eng. 16:359,
//     Nu = (f/8)(Re − 1000)Pr/[1 + 12.7·√(f/8)·(Pr^(2/3) − 1)] with the
//     Petukhov f = (0.790·ln Re − 1.64)^−2, no entrance factor;
//   - between: Nu = (1 − γ)·Nu_Hausen(2300) + γ·Nu_Gnielinski(10⁴),
//     γ = (Re − 2300)/(10⁴ − 2300) (Gnielinski 1995, Forsch. Ingenieurwes.
//     61:240; VDI Heat Atlas, 2nd ed. 2010, G1).
func nusseltBlend(re, pr, dOverL float64) float64 {
	hausen := func(re float64) float64 {
		gz := dOverL * re * pr
		return 3.66 + 0.0668*gz/(1+0.04*math.Pow(gz, 2.0/3.0))
	}
	gniel := func(re float64) float64 {
		d := 0.790*math.Log(re) - 1.64
		f8 := 1 / (8 * d * d)
		return f8 * (re - 1000) * pr / (1 + 12.7*math.Sqrt(f8)*(math.Pow(pr, 2.0/3.0)-1))
	}
	switch {
	case re < 2300:
		return hausen(re)
	case re > 1e4:
		return gniel(re)
	}
	w := (re - 2300) / (1e4 - 2300)
	return (1-w)*hausen(2300) + w*gniel(1e4)
}

// localUA is the conductance (W/K) of one segment in the rate-inputs
// physics, with air properties at taC and water properties at twC, for air
// mass flow mAir (whole coil) and water mass flow mc (the segment's
// circuit). The resistances are in series as in Jacobi, Engineering Data
// Book III (Wolverine Tube, 2006), Eq. 6.1.7:
// 1/UA = [1/(h_a·A_o) + R_fa/A_o]/η_o + R_wall + (R_fw + 1/h_w)/A_i, with
// h_a = j·G_c·cp/Pr^(2/3) and η_o = 1 − (A_f/A_o)(1 − η_f(h_a)).
func (g *coilGeom) localUA(mAir, taC, mc, twC float64, f coilFaults) float64 {
	gc := mAir / g.minFlowAreaM2
	muA := airViscosity(taC)
	prA := airPrandtl(taC)
	h := g.wangJ(gc*g.dc/muA) * gc * airCp / math.Pow(prA, 2.0/3.0)
	etaO := 1 - g.afSeg/g.aoSeg*(1-g.schmidtFinEfficiency(h))
	rAir := (1/(h*g.aoSeg) + f.foulAir/g.aoSeg) / etaO

	muW := waterViscosity(twC)
	kW := waterConductivity(twC)
	re := 4 * mc / (math.Pi * g.di * muW)
	hw := nusseltBlend(re, muW*waterCp(twC)/kW, g.check.dOverL) * kW / g.di
	return 1 / (rAir + g.rWallSeg + (f.foulWater+1/hw)/g.aiSeg)
}
