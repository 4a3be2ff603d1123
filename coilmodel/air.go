package coilmodel

import "math"

// Air properties. Density and specific heat follow the ASHRAE Handbook
// Fundamentals ch. 1 psychrometric relations; viscosity and conductivity use
// Sutherland's law with the constants tabulated by White, Viscous Fluid Flow
// (3rd ed., Table 1-2/1-3). Humidity changes μ and k by well under 1 % in
// building conditions and is ignored for them.

// StandardAirDensity is the density of standard air (dry air at 20 °C and
// 101.325 kPa, ASHRAE Handbook Fundamentals ch. 1; 0.075 lb/ft³ in IP), kg/m³.
const StandardAirDensity = 1.204

// DryAirCp is the specific heat of dry air in J/(kg·K) implied by the ASHRAE
// Fundamentals ch. 1 moist-air enthalpy h = 1.006·t + W·(2501 + 1.86·t) kJ/kg_da.
const DryAirCp = 1006.0

// VapourCp is the specific heat of water vapour in the same enthalpy relation, J/(kg·K).
const VapourCp = 1860.0

// StandardPressurePa is the standard atmosphere at sea level.
const StandardPressurePa = 101325.0

// AtmosphericPressurePa is the standard-atmosphere barometric pressure (Pa) at
// elevationM metres: p = 101.325·(1 − 2.25577e−5·Z)^5.2559 kPa (ASHRAE
// Handbook Fundamentals ch. 1, Eq. 3).
func AtmosphericPressurePa(elevationM float64) float64 {
	b := 1 - 2.25577e-5*elevationM
	if b <= 0 {
		return 0
	}
	return StandardPressurePa * math.Pow(b, 5.2559)
}

// MoistAirDensity is the density of moist air (kg of mixture per m³) at tC
// (°C), total pressure pPa and humidity ratio w (kg water / kg dry air). It
// uses the specific volume v = 0.287042·(t + 273.15)·(1 + 1.607858·W)/p
// [m³/kg_da, p in kPa] and ρ = (1 + W)/v (ASHRAE Handbook Fundamentals ch. 1,
// Eqs. 28 and 11 of the 2009 edition). w = 0 gives dry air.
func MoistAirDensity(tC, pPa, w float64) float64 {
	v := 0.287042 * (tC + 273.15) * (1 + 1.607858*w) / (pPa / 1000)
	return (1 + w) / v
}

// MoistAirCp is the specific heat of moist air per kg of DRY air,
// cp = 1006 + 1860·W J/(kg_da·K), from the ASHRAE Fundamentals ch. 1 enthalpy
// relation. Divide by (1 + W) for the value per kg of mixture.
func MoistAirCp(w float64) float64 { return DryAirCp + VapourCp*w }

// AirViscosity is the dynamic viscosity of air (Pa·s) at tC (°C) by
// Sutherland's law, μ = μ0·(T/T0)^1.5·(T0 + S)/(T + S), μ0 = 1.716e−5 Pa·s,
// T0 = 273.15 K, S = 110.4 K (White, Viscous Fluid Flow, Table 1-2).
func AirViscosity(tC float64) float64 {
	t := tC + 273.15
	r := t / 273.15
	return 1.716e-5 * r * math.Sqrt(r) * (273.15 + 110.4) / (t + 110.4)
}

// AirConductivity is the thermal conductivity of air (W/(m·K)) at tC (°C) by
// Sutherland's law, k0 = 0.0241 W/(m·K), T0 = 273.15 K, S = 194.4 K (White,
// Viscous Fluid Flow, Table 1-3).
func AirConductivity(tC float64) float64 {
	t := tC + 273.15
	r := t / 273.15
	return 0.0241 * r * math.Sqrt(r) * (273.15 + 194.4) / (t + 194.4)
}

// AirPrandtl is μ·cp/k of dry air at tC (°C).
func AirPrandtl(tC float64) float64 {
	return AirViscosity(tC) * DryAirCp / AirConductivity(tC)
}
