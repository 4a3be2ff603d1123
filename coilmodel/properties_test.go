package coilmodel

import (
	"math"
	"testing"

	"risewatch/units"
)

func relErr(got, want float64) float64 { return math.Abs(got/want - 1) }

// The reference implementation must reproduce the IF97 verification table
// before it can judge anything.
func TestIF97ReferenceVerification(t *testing.T) {
	// IAPWS-IF97 (Wagner et al. 2000), Table 5, Region 1 verification values
	// (from memory; reproduced to 7 digits by the independent implementation).
	cases := []struct{ tK, pMPa, v, cp float64 }{
		{300, 3, 0.100215168e-2, 0.417301218e4},
		{300, 80, 0.971180894e-3, 0.401008987e4},
		{500, 3, 0.120241800e-2, 0.465580682e4},
	}
	for _, c := range cases {
		v, cp := if97Region1(c.tK, c.pMPa)
		if relErr(v, c.v) > 5e-7 || relErr(cp, c.cp) > 5e-7 {
			t.Errorf("IF97 at %g K %g MPa: v %.9e cp %.9e, want %.9e %.9e", c.tK, c.pMPa, v, cp, c.v, c.cp)
		}
	}
}

func TestWaterDensityAndCpAgainstIF97(t *testing.T) {
	for tc := 5.0; tc <= 100; tc += 5 {
		v, cp := if97Region1(tc+273.15, 0.101325) // IAPWS-IF97 Region 1 at 1 atm
		if e := relErr(WaterDensity(tc), 1/v); e > 0.001 {
			t.Errorf("density at %g °C: %.3f, IF97 %.3f (%.3f %%)", tc, WaterDensity(tc), 1/v, 100*e)
		}
		if e := relErr(WaterCp(tc), cp); e > 0.001 {
			t.Errorf("cp at %g °C: %.2f, IF97 %.2f (%.3f %%)", tc, WaterCp(tc), cp, 100*e)
		}
	}
}

func TestWaterTransportProperties(t *testing.T) {
	// Viscosity: IAPWS 2008 (Huber et al. 2009, JPCRD 38:101) values at 0.1 MPa;
	// conductivity: IAPWS 2011 (Huber et al. 2012, JPCRD 41:033102) at 0.1 MPa.
	// Both from memory; they agree with Incropera & DeWitt Table A.6 (350 K:
	// μ 365e−6 Pa·s, k 0.668 W/(m·K)) within its rounding.
	cases := []struct{ tC, muMPas, k float64 }{
		{20, 1.0016, 0.5984},
		{25, 0.8900, 0.6065},
		{50, 0.5465, 0.6436},
		{60, 0.4666, 0.6544},
		{80, 0.3544, 0.6701},
	}
	for _, c := range cases {
		if e := relErr(WaterViscosity(c.tC)*1e3, c.muMPas); e > 0.01 {
			t.Errorf("viscosity at %g °C: %.4f mPa·s, want %.4f (%.2f %%)", c.tC, WaterViscosity(c.tC)*1e3, c.muMPas, 100*e)
		}
		if e := relErr(WaterConductivity(c.tC), c.k); e > 0.01 {
			t.Errorf("conductivity at %g °C: %.4f, want %.4f (%.2f %%)", c.tC, WaterConductivity(c.tC), c.k, 100*e)
		}
	}
	// Incropera & DeWitt Table A.6, saturated water at 350 K: Pr 2.29 (from memory).
	if e := relErr(WaterPrandtl(350-273.15), 2.29); e > 0.02 {
		t.Errorf("Pr at 350 K: %.3f, want 2.29 (%.2f %%)", WaterPrandtl(76.85), 100*e)
	}
}

func TestAtmosphericPressure(t *testing.T) {
	// ASHRAE Handbook Fundamentals ch. 1, Table 1 (standard atmosphere; from memory).
	cases := []struct{ zM, kPa float64 }{{0, 101.325}, {500, 95.461}, {1000, 89.875}, {1500, 84.556}, {2000, 79.495}}
	for _, c := range cases {
		if e := relErr(AtmosphericPressurePa(c.zM)/1000, c.kPa); e > 2e-4 {
			t.Errorf("p at %g m: %.3f kPa, want %.3f", c.zM, AtmosphericPressurePa(c.zM)/1000, c.kPa)
		}
	}
}

func TestMoistAirDensity(t *testing.T) {
	// Standard air: dry air at 20 °C and 101.325 kPa is 1.204 kg/m³ (ASHRAE
	// Handbook Fundamentals ch. 1).
	if e := relErr(MoistAirDensity(20, 101325, 0), 1.204); e > 5e-4 {
		t.Errorf("dry air at 20 °C: %.4f kg/m³", MoistAirDensity(20, 101325, 0))
	}
	// Independent check: ideal-gas mixture of dry air (R = 287.042 J/(kg·K))
	// and vapour (R = 461.524), vapour pressure p·W/(0.621945 + W)
	// (ASHRAE Fundamentals ch. 1, Eq. 20 of the 2009 edition).
	for _, w := range []float64{0, 0.005, 0.01, 0.02} {
		for _, tc := range []float64{0, 25, 50} {
			p := 90000.0
			pw := p * w / (0.621945 + w)
			tk := tc + 273.15
			want := (p-pw)/(287.042*tk) + pw/(461.524*tk)
			if e := relErr(MoistAirDensity(tc, p, w), want); e > 1e-4 {
				t.Errorf("moist air at %g °C W %g: %.5f, ideal mixture %.5f", tc, w, MoistAirDensity(tc, p, w), want)
			}
		}
	}
	// 0.075 lb/ft³ is the same standard air in IP units (ASHRAE Fundamentals ch. 1).
	lbft3 := 0.075 * 0.45359237 / math.Pow(units.MetrePerFoot, 3)
	if e := relErr(StandardAirDensity, lbft3); e > 0.003 {
		t.Errorf("standard air %.4f kg/m³ vs 0.075 lb/ft³ = %.4f", StandardAirDensity, lbft3)
	}
}

func TestAirTransportProperties(t *testing.T) {
	// Incropera & DeWitt Table A.4, air at 1 atm (from memory).
	cases := []struct{ tK, mu, k, pr float64 }{
		{250, 159.6e-7, 22.3e-3, 0.720},
		{300, 184.6e-7, 26.3e-3, 0.707},
		{350, 208.2e-7, 30.0e-3, 0.700},
	}
	for _, c := range cases {
		tc := c.tK - 273.15
		if e := relErr(AirViscosity(tc), c.mu); e > 0.01 {
			t.Errorf("air μ at %g K: %.4g, want %.4g", c.tK, AirViscosity(tc), c.mu)
		}
		if e := relErr(AirConductivity(tc), c.k); e > 0.01 {
			t.Errorf("air k at %g K: %.4g, want %.4g", c.tK, AirConductivity(tc), c.k)
		}
		if e := relErr(AirPrandtl(tc), c.pr); e > 0.01 {
			t.Errorf("air Pr at %g K: %.4g, want %.4g", c.tK, AirPrandtl(tc), c.pr)
		}
	}
	// Moist-air cp from the ASHRAE enthalpy relation: 0.240 + 0.444·W Btu/(lb_da·°F).
	if e := relErr(MoistAirCp(0.01)/4186.8, 0.240+0.444*0.01); e > 0.003 {
		t.Errorf("moist cp %.1f J/(kg·K)", MoistAirCp(0.01))
	}
}
