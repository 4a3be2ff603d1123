package coilmodel

import (
	"math"
	"testing"

	"risewatch/units"
)

func TestValveSizingEquation(t *testing.T) {
	// Cv definition (ANSI/ISA-75.01.01): 1 US gpm of 60 °F water at 1 psi.
	v := Valve{Cv: 1, Characteristic: Linear}
	if q := units.M3sToGPM(v.FlowM3s(1, units.PSIToPa(1), 0)); math.Abs(q-1) > 1e-12 {
		t.Errorf("Cv 1 at 1 psi: %g gpm", q)
	}
	// Q ∝ √ΔP and ∝ 1/√SG (same equation).
	v.Cv = 2.5
	q4 := units.M3sToGPM(v.FlowM3s(1, units.PSIToPa(4), WaterDensity(units.FToC(60))))
	if math.Abs(q4-5) > 1e-3 {
		t.Errorf("Cv 2.5 at 4 psi: %g gpm, want 5", q4)
	}
	if dp := v.DropPa(1, units.GPMToM3s(5), WaterDensity(units.FToC(60))); math.Abs(units.PaToPSI(dp)-4) > 1e-3 {
		t.Errorf("DropPa inverse: %g psi", units.PaToPSI(dp))
	}
}

func TestValveCharacteristics(t *testing.T) {
	// Equal percentage φ = R^(y−1) (ISA-75.11.01): R 50 at half lift is 50^−0.5.
	eq := Valve{Cv: 3, Characteristic: EqualPercentage, Rangeability: 50}
	if v := eq.RelativeCv(0.5); math.Abs(v-1/math.Sqrt(50)) > 1e-12 {
		t.Errorf("EQ%% at 50 %%: %g", v)
	}
	if eq.RelativeCv(1) != 1 || eq.RelativeCv(0) != 0 || eq.RelativeCv(2) != 1 || eq.RelativeCv(-1) != 0 {
		t.Error("EQ% end points")
	}
	// Each 10 % of lift multiplies flow by R^0.1 (the defining property).
	if r := eq.RelativeCv(0.7) / eq.RelativeCv(0.6); math.Abs(r-math.Pow(50, 0.1)) > 1e-12 {
		t.Errorf("EQ%% step ratio %g", r)
	}
	lin := Valve{Cv: 3, Characteristic: Linear, LeakageFrac: 0.01}
	if v := lin.RelativeCv(0.5); math.Abs(v-(0.01+0.99*0.5)) > 1e-12 {
		t.Errorf("linear with leakage: %g", v)
	}
	prev := -1.0
	for y := 0.0; y <= 1; y += 0.001 {
		v := eq.RelativeCv(y)
		if v < prev {
			t.Fatalf("EQ%% not monotone at %g", y)
		}
		prev = v
	}
	// Installed characteristic (Wade, Appendix B): authority 1 gives the
	// inherent curve; low authority makes equal percentage look more linear.
	if v := eq.InstalledFraction(0.5, 1); math.Abs(v-eq.RelativeCv(0.5)) > 1e-12 {
		t.Errorf("authority 1: %g", v)
	}
	if eq.InstalledFraction(0.5, 0.2) <= eq.InstalledFraction(0.5, 0.6) {
		t.Error("lower authority should open the installed curve")
	}
}

func TestInstalledFlow(t *testing.T) {
	c := mustPreset(t, 12, 2, 10, false)
	v := Valve{Cv: 1.6, Characteristic: EqualPercentage}
	branch := units.PSIToPa(5)
	q, err := InstalledFlowM3s(v, c, 1, branch, 80)
	if err != nil {
		t.Fatal(err)
	}
	// The balance must hold: valve drop + coil drop = branch ΔP.
	dpc, _ := WaterDropPa(c, q, 80)
	if dpv := v.DropPa(1, q, WaterDensity(80)); math.Abs(dpv+dpc-branch) > 1e-3*branch {
		t.Errorf("balance: valve %.0f + coil %.0f vs branch %.0f Pa", dpv, dpc, branch)
	}
	// Against the square-law installed curve (Wade) with the authority at full
	// flow: close, since the turbulent coil drop is nearly square-law.
	a, err := Authority(v, c, q, 80)
	if err != nil {
		t.Fatal(err)
	}
	qHalf, _ := InstalledFlowM3s(v, c, 0.7, branch, 80)
	if approx := q * v.InstalledFraction(0.7, a); relErr(qHalf, approx) > 0.05 {
		t.Errorf("70 %% command: %.3f gpm solved vs %.3f gpm square-law", units.M3sToGPM(qHalf), units.M3sToGPM(approx))
	}
	if q0, _ := InstalledFlowM3s(v, c, 0, branch, 80); q0 != 0 {
		t.Errorf("closed valve without leakage passes %g", q0)
	}
	if _, err := InstalledFlowM3s(Valve{}, c, 1, branch, 80); err == nil {
		t.Error("Cv 0 accepted")
	}
}
