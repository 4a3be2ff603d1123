package sim

import "math"

// Fluid properties used by the simulator's own coil model. They are kept
// here, separate from the detector's coilmodel, so that the two models share
// no code on the path from geometry to capacity.

// waterDensity is liquid water density (kg/m³) at tC, Kell (1975),
// J. Chem. Eng. Data 20:97, Eq. 16 (0–150 °C).
func waterDensity(tC float64) float64 {
	t := tC
	num := 999.83952 + 16.945176*t - 7.9870401e-3*t*t - 46.170461e-6*t*t*t +
		105.56302e-9*t*t*t*t - 280.54253e-12*t*t*t*t*t
	return num / (1 + 16.879850e-3*t)
}

// waterCp is liquid water isobaric specific heat (J/(kg·K)) at tC: a
// quadratic about the minimum near 35 °C, fitted for this package to the
// IAPWS-95 saturated-liquid values (Wagner & Pruß 2002, J. Phys. Chem. Ref.
// Data 31:387) at 35 °C (4178 J/(kg·K)) and 80 °C (4197 J/(kg·K)); within
// about 0.1 % over 20–95 °C.
func waterCp(tC float64) float64 {
	d := tC - 35
	return 4178 + 9.38e-3*d*d
}

// waterViscosity is liquid water dynamic viscosity (Pa·s) at tC, Laliberté
// (2007), J. Chem. Eng. Data 52:321, Eq. 11 for pure water.
func waterViscosity(tC float64) float64 {
	return 1e-3 * (tC + 246) / ((0.05594*tC+5.2842)*tC + 137.37)
}

// waterConductivity is liquid water thermal conductivity (W/(m·K)) at tC,
// Ramires et al. (1995), J. Phys. Chem. Ref. Data 24:1377.
func waterConductivity(tC float64) float64 {
	ts := (tC + 273.15) / 298.15
	return 0.6065 * (-1.48445 + 4.12292*ts - 1.63866*ts*ts)
}

// Air properties. The simulator works in mass flow; volumetric airflows in
// scenarios and trend exports are standard air (1.204 kg/m³, ASHRAE
// Handbook Fundamentals ch. 1 "standard air").
const (
	stdAirDensity = 1.204  // kg/m³
	airCp         = 1006.0 // J/(kg·K), dry air near 20 °C (ASHRAE Handbook Fundamentals ch. 1)
	airPr         = 0.71   // Prandtl number of air, 0–60 °C (Incropera Table A.4; common practice)
)

// airViscosity is dry-air dynamic viscosity (Pa·s) by Sutherland's law with
// μ0 = 1.716e-5 Pa·s at 273.15 K and S = 110.4 K (White, Viscous Fluid Flow,
// 3rd ed., Table 1-2).
func airViscosity(tC float64) float64 {
	t := tC + 273.15
	return 1.716e-5 * math.Pow(t/273.15, 1.5) * (273.15 + 110.4) / (t + 110.4)
}

// airPrandtl is μ·cp/k of dry air at tC with the conductivity also by
// Sutherland's law, k0 = 0.0241 W/(m·K) at 273.15 K and S = 194.4 K (White,
// Viscous Fluid Flow, 3rd ed., Table 1-3). The rate-inputs physics uses it
// (coilmodel evaluates Pr the same way); the simulator's own physics keeps
// the constant airPr.
func airPrandtl(tC float64) float64 {
	t := tC + 273.15
	k := 0.0241 * math.Pow(t/273.15, 1.5) * (273.15 + 194.4) / (t + 194.4)
	return airViscosity(tC) * airCp / k
}
