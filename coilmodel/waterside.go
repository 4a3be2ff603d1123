package coilmodel

import (
	"fmt"
	"math"
)

// Water-side heat transfer and friction in the coil tubes.

// Reynolds-number limits of the water-side regimes (Gnielinski 1995; VDI Heat
// Atlas, ch. G1): laminar below ReLaminarMax, Gnielinski above ReTurbulentMin,
// linear blend between.
const (
	ReLaminarMax   = 2300.0
	ReTurbulentMin = 1e4
	// CopperRoughnessM is the absolute roughness of drawn copper tube (Moody
	// chart value, about 1.5 µm; from memory).
	CopperRoughnessM = 1.5e-6
)

// PetukhovFriction is the smooth-tube Darcy friction factor
// f = (0.790·ln Re − 1.64)^−2 (Petukhov 1970; Incropera & DeWitt Eq. 8.21),
// valid 3000 ≤ Re ≤ 5e6.
func PetukhovFriction(re float64) float64 {
	d := 0.790*math.Log(re) - 1.64
	return 1 / (d * d)
}

// ChurchillFriction is the Darcy friction factor of Churchill (1977), Chem.
// Eng. 84(24):91, valid in laminar, transitional and turbulent flow:
// f = 8·[(8/Re)^12 + (A + B)^−1.5]^(1/12), A = {−2.457·ln[(7/Re)^0.9 + 0.27·ε/D]}^16,
// B = (37530/Re)^16. relRough is ε/D.
func ChurchillFriction(re, relRough float64) float64 {
	if re <= 0 {
		return math.Inf(1)
	}
	if re < 1 {
		return 64 / re
	}
	// The integer powers by repeated squaring, x^−1.5 = 1/(x·√x), and the
	// two fractional powers through one logarithm and exponential each.
	lnRe := log(re)
	a := pow16(-2.457 * log(exp(0.9*(ln7-lnRe))+0.27*relRough))
	b := pow16(37530 / re)
	s := a + b
	c := 8 / re
	c4 := c * c
	c4 *= c4
	return 8 * exp(log(c4*c4*c4+1/(s*math.Sqrt(s)))*(1.0/12))
}

const ln7 = 1.9459101490553132 // ln 7

// pow16 is x¹⁶ by four squarings.
func pow16(x float64) float64 {
	x *= x
	x *= x
	x *= x
	return x * x
}

// NusseltGnielinski is the turbulent tube Nusselt number of Gnielinski (1976),
// Int. Chem. Eng. 16:359: Nu = (f/8)(Re − 1000)Pr / [1 + 12.7·√(f/8)·(Pr^(2/3) − 1)]
// with the Petukhov friction factor; valid 3000 ≤ Re ≤ 5e6, 0.5 ≤ Pr ≤ 2000.
func NusseltGnielinski(re, pr float64) float64 {
	f8 := PetukhovFriction(re) / 8
	pr23 := math.Cbrt(pr * pr)
	return f8 * (re - 1000) * pr / (1 + 12.7*math.Sqrt(f8)*(pr23-1))
}

// NusseltHausen is the laminar thermal-entry mean Nusselt number for developed
// velocity and constant wall temperature (Hausen 1943; Incropera & DeWitt
// Eq. 8.57): Nu = 3.66 + 0.0668·Gz/(1 + 0.04·Gz^(2/3)), Gz = (D/L)·Re·Pr.
// It tends to the fully developed 3.66 as Gz → 0.
func NusseltHausen(re, pr, dOverL float64) float64 {
	gz := dOverL * re * pr
	return 3.66 + 0.0668*gz/(1+0.04*math.Cbrt(gz*gz))
}

// NusseltTube is the mean Nusselt number in a straight tube of diameter D and
// length L over all regimes: Hausen below Re 2300, Gnielinski above 10⁴, and
// between them the linear blend of Gnielinski (1995) / VDI Heat Atlas G1,
// Nu = (1 − γ)·Nu_lam(2300) + γ·Nu_turb(10⁴), γ = (Re − 2300)/(10⁴ − 2300),
// which is continuous and monotone in Re (safe for the bracketed solvers).
func NusseltTube(re, pr, dOverL float64) (float64, Regime) {
	switch {
	case re < ReLaminarMax:
		return NusseltHausen(re, pr, dOverL), Laminar
	case re <= ReTurbulentMin:
		g := (re - ReLaminarMax) / (ReTurbulentMin - ReLaminarMax)
		return (1-g)*NusseltHausen(ReLaminarMax, pr, dOverL) + g*NusseltGnielinski(ReTurbulentMin, pr), Transitional
	default:
		return NusseltGnielinski(re, pr), Turbulent
	}
}

// circuitPath is the hydraulic path of one water circuit.
type circuitPath struct {
	areaM2    float64 // flow area of one tube
	di        float64
	tubes     float64 // straight tubes in series per circuit
	straightM float64 // length of one straight tube (the finned length)
	bends     float64 // return bends per circuit
}

func (c Coil) path() circuitPath {
	di := c.InnerDiaM()
	tubes := float64(c.Rows*c.TubesPerRowEff()) / float64(c.Circuits)
	return circuitPath{
		areaM2:    math.Pi * di * di / 4,
		di:        di,
		tubes:     tubes,
		straightM: c.FaceWidthM,
		bends:     math.Max(tubes-1, 0),
	}
}

// waterDrop is the circuit pressure drop (Pa) at total flow q (m³/s):
// ΔP = [f·(n·L/Di) + (n − 1)·K]·ρV²/2 with the Churchill friction factor and
// return-bend coefficient K (Darcy-Weisbach; Crane TP-410 for the bends).
// Headers and connections are not included.
func (c Coil) waterDrop(p circuitPath, q float64, w waterProps) (dp, vel, re float64) {
	if q <= 0 {
		return 0, 0, 0
	}
	vel = q / float64(c.Circuits) / p.areaM2
	re = w.rho * vel * p.di / w.mu
	f := ChurchillFriction(re, CopperRoughnessM/p.di)
	dyn := w.rho * vel * vel / 2
	dp = (f*p.tubes*p.straightM/p.di + p.bends*c.returnBendK()) * dyn
	return dp, vel, re
}

// WaterDropPa is the coil water pressure drop (Pa) at total water flow
// flowM3s and mean water temperature waterC (°C); see the Rating field of the
// same name for the method.
func WaterDropPa(c Coil, flowM3s, waterC float64) (float64, error) {
	if err := c.Validate(); err != nil {
		return 0, err
	}
	if !inRange(flowM3s, 0, 1) || !inRange(waterC, 0.5, 120) {
		return 0, fmt.Errorf("coil water drop: flow %g m³/s, water %g °C out of range", flowM3s, waterC)
	}
	dp, _, _ := c.waterDrop(c.path(), flowM3s, waterAt(waterC))
	return dp, nil
}

// Constants of the transition blend's turbulent end (Re = 10⁴): the Petukhov
// d = 0.790·ln Re − 1.64, f/8 = 1/(8·d²) and √(f/8) = 1/(d·√8).
const (
	petukhovD1e4     = 0.790*9.210340371976184 - 1.64 // ln 10⁴ = 9.210340371976184
	petukhovF8at1e4  = 1 / (8 * petukhovD1e4 * petukhovD1e4)
	petukhovSq8at1e4 = 1 / (petukhovD1e4 * 2.8284271247461903) // √8 = 2.8284271247461903
	gnielinskiK      = 12.7 * 2.8284271247461903               // 12.7·√8
)

// nusseltTube is NusseltTube for the rating pass, with the logarithms and
// powers it needs passed in (ln Re, Pr^(2/3), ln Pr) and the geometry-only
// factors taken from the model: the same equations, rearranged so that the
// turbulent branch needs no transcendental function and the laminar branch
// one exponential. Gnielinski with the Petukhov f: multiplying through by
// 8·d² gives Nu = (Re − 1000)·Pr / [8·d² + 12.7·√8·d·(Pr^(2/3) − 1)].
// Hausen: Gz^(2/3) = exp[(2/3)·(ln(D/L) + ln Re + ln Pr)], and at Re = 2300
// it is (2300·D/L)^(2/3)·Pr^(2/3).
func (m *model) nusseltTube(re, lnRe float64, w *waterPoint) (float64, Regime) {
	switch {
	case re < ReLaminarMax:
		gz := m.dOverL * re * w.pr
		gz23 := exp((2.0 / 3.0) * (m.lnDOverL + lnRe + w.lnPr))
		return 3.66 + 0.0668*gz/(1+0.04*gz23), Laminar
	case re <= ReTurbulentMin:
		g := (re - ReLaminarMax) * (1 / (ReTurbulentMin - ReLaminarMax))
		gz := m.dOverL * ReLaminarMax * w.pr
		lam := 3.66 + 0.0668*gz/(1+0.04*m.hausen23*w.pr23)
		turb := petukhovF8at1e4 * (ReTurbulentMin - 1000) * w.pr / (1 + 12.7*petukhovSq8at1e4*(w.pr23-1))
		return (1-g)*lam + g*turb, Transitional
	default:
		d := 0.790*lnRe - 1.64
		return (re - 1000) * w.pr / (8*d*d + gnielinskiK*d*(w.pr23-1)), Turbulent
	}
}
