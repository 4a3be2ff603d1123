package fdd

import "math"

// Standard air density the BAS airflow of a pressure-independent box refers
// to, kg/m³ (0.075 lb/ft³; ASHRAE Handbook—Fundamentals, ch. 1).
const standardAirDensity = 1.204

// airProps gives the sensible heat flow per unit airflow and temperature
// difference, W/(m³/s·K), with real moist-air properties.
type airProps struct {
	pressureKPa float64
	w           float64 // humidity ratio, kg/kg dry air
	actual      bool    // airflow is actual volume at the discharge state
}

// newAirProps uses the standard-atmosphere pressure at the site elevation,
// p = 101.325·(1 − 2.25577e−5·Z)^5.2559 kPa (ASHRAE Handbook—Fundamentals
// 2017, ch. 1, eq. 3).
func newAirProps(elevationM, w float64, actual bool) airProps {
	p := 101.325 * math.Pow(1-2.25577e-5*elevationM, 5.2559)
	if !(p > 0) {
		p = 101.325
	}
	return airProps{pressureKPa: p, w: w, actual: actual}
}

// factor is ṁ_da·c_p per unit volumetric flow, W/(m³/s·K):
//
//   - moist specific volume v = 0.287042·(t + 273.15)·(1 + 1.607858·W)/p
//     m³/kg_da (ASHRAE Fundamentals ch. 1, eq. 28);
//   - c_p of moist air per kg dry air 1006 + 1860·W J/(kg_da·K), from the
//     enthalpy h = 1.006·t + W·(2501 + 1.86·t) kJ/kg_da (eq. 32).
//
// For standard-air volume (the default), ṁ_da = V·1.204/(1 + W). The IP
// shorthand Q = 1.08·cfm·ΔT°F is the same relation for dry standard air.
func (a airProps) factor(tC float64) float64 {
	cp := 1006 + 1860*a.w
	if a.actual {
		v := 0.287042 * (tC + 273.15) * (1 + 1.607858*a.w) / a.pressureKPa
		return cp / v
	}
	return standardAirDensity / (1 + a.w) * cp
}

// heatW is the sensible heat flow (W) of airflow v (m³/s) heated by dk (K),
// with properties at tC.
func (a airProps) heatW(v, dk, tC float64) float64 { return a.factor(tC) * v * dk }
