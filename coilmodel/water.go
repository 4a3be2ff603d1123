package coilmodel

// Liquid water properties near atmospheric pressure, 0-100 °C. The
// correlations are cheap enough for the detector's hot path; the tests check
// them against IAPWS-IF97 Region 1 (computed independently in the test) and
// IAPWS release values.

// WaterDensity is liquid water density (kg/m³) at tC (°C), by Kell (1975),
// J. Chem. Eng. Data 20:97, Eq. 16, valid 0-150 °C at about 1 atm.
func WaterDensity(tC float64) float64 {
	t := tC
	num := 999.83952 + t*(16.945176+t*(-7.9870401e-3+t*(-46.170461e-6+t*(105.56302e-9+t*(-280.54253e-12)))))
	return num / (1 + 16.879850e-3*t)
}

// WaterCp is liquid water isobaric specific heat (J/(kg·K)) at tC (°C). It is
// a fifth-order least-squares polynomial in t/100 fitted for this package to
// IAPWS-IF97 Region 1 (Wagner et al. 2000, J. Eng. Gas Turbines Power 122:150)
// at 101.325 kPa over 0-100 °C; largest deviation from IF97 0.025 %.
func WaterCp(tC float64) float64 {
	x := tC / 100
	return 4218.448934 + x*(-306.5436426+x*(935.0167013+x*(-1484.885508+x*(1272.102415+x*(-417.9856743)))))
}

// WaterViscosity is liquid water dynamic viscosity (Pa·s) at tC (°C), by
// Laliberté (2007), J. Chem. Eng. Data 52:321, Eq. 11 (pure-water term):
// μ = (t + 246)/((0.05594·t + 5.2842)·t + 137.37) mPa·s.
func WaterViscosity(tC float64) float64 {
	t := tC
	return 1e-3 * (t + 246) / ((0.05594*t+5.2842)*t + 137.37)
}

// WaterConductivity is liquid water thermal conductivity (W/(m·K)) at tC (°C),
// by the saturated-liquid correlation of Ramires et al. (1995), J. Phys. Chem.
// Ref. Data 24:1377: k = 0.6065·(−1.48445 + 4.12292·T* − 1.63866·T*²),
// T* = T/298.15 K.
func WaterConductivity(tC float64) float64 {
	ts := (tC + 273.15) / 298.15
	return 0.6065 * (-1.48445 + ts*(4.12292-1.63866*ts))
}

// WaterPrandtl is the Prandtl number μ·cp/k of liquid water at tC (°C).
func WaterPrandtl(tC float64) float64 {
	return WaterViscosity(tC) * WaterCp(tC) / WaterConductivity(tC)
}

// waterProps holds the properties the rating needs at one temperature.
type waterProps struct {
	rho, cp, mu, k float64
}

func waterAt(tC float64) waterProps {
	return waterProps{rho: WaterDensity(tC), cp: WaterCp(tC), mu: WaterViscosity(tC), k: WaterConductivity(tC)}
}
