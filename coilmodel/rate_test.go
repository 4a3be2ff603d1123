package coilmodel

import (
	"errors"
	"math"
	"strings"
	"testing"

	"risewatch/units"
)

// chainCoil is the 1/2 in tube, 10 FPI, 24 in × 11.25 in coil of the rating
// chain below.
func chainCoil(rows int) Coil {
	return Coil{
		FaceWidthM: 0.6096, FaceHeightM: 9 * 0.03175, Rows: rows, Circuits: 1, TubesPerRow: 9,
		Tube:             Tube{OuterDiaM: 0.0127, WallM: 0.000406, ConductivityWmK: 390},
		Fin:              Fin{PerM: units.FPIToPerM(10), ThicknessM: 0.0001143, ConductivityWmK: 220, Material: "aluminum"},
		TransversePitchM: 0.03175, LongitudinalPitchM: 0.0275, Layout: Staggered,
	}
}

func ipOp(cfm, eatF, gpm, ewtF float64) Operating {
	return Operating{AirflowM3s: units.CFMToM3s(cfm), EnteringAirC: units.FToC(eatF), WaterFlowM3s: units.GPMToM3s(gpm), EnteringWaterC: units.FToC(ewtF)}
}

func mustRate(t *testing.T, c Coil, op Operating) Rating {
	t.Helper()
	r, err := Rate(c, op)
	if err != nil {
		t.Fatalf("Rate: %v", err)
	}
	return r
}

func TestRatingChainRegression(t *testing.T) {
	// Regression vector: an independent implementation of the same published
	// correlations (Wang 2000, Schmidt, Gnielinski, Nicole), 937.5 scfm of
	// standard air (1.2041 kg/m³) at 55 °F, 3 gpm at 180 °F. Computed, not a
	// published example; a 3 % band allows for property-correlation choices.
	op := ipOp(937.5, 55, 3, 180)
	op.AirDensityKgM3 = 1.2041
	want := []struct{ mbh, latF, lwtF, ua, waterFt float64 }{
		{29.1, 83.6, 160.1, 153.8, 6.9},
		{47.4, 101.7, 147.5, 296.1, 14.2},
	}
	for i, w := range want {
		r := mustRate(t, chainCoil(i+1), op)
		if relErr(units.WToMBH(r.CapacityW), w.mbh) > 0.03 || relErr(r.UAWK, w.ua) > 0.03 ||
			math.Abs(units.CToF(r.LeavingAirC)-w.latF) > 1 || math.Abs(units.CToF(r.LeavingWaterC)-w.lwtF) > 1 ||
			relErr(units.PaToFtWC(r.WaterDropPa), w.waterFt) > 0.05 {
			t.Errorf("%d rows: %.1f MBH LAT %.1f °F LWT %.1f °F UA %.1f W/K water %.2f ft; want %+v",
				i+1, units.WToMBH(r.CapacityW), units.CToF(r.LeavingAirC), units.CToF(r.LeavingWaterC), r.UAWK, units.PaToFtWC(r.WaterDropPa), w)
		}
		if r.Regime != Turbulent || r.Extrapolated != 0 {
			t.Errorf("%d rows: regime %v extrapolated %v", i+1, r.Regime, r.Extrapolated)
		}
	}
}

func TestEnergyBalanceCloses(t *testing.T) {
	// Air side ṁ_da·(1.006 + 1.86·W)·ΔT (ASHRAE Fundamentals ch. 1 enthalpy)
	// against water side ṁ·cp·ΔT, cp at the mean water temperature: within 0.1 %.
	for _, rows := range []int{1, 2, 3, 4} {
		for _, gpm := range []float64{0.05, 0.3, 1, 3, 8} {
			for _, ewtF := range []float64{110, 140, 180} {
				op := ipOp(600, 55, gpm, ewtF)
				op.HumidityRatio = 0.008
				r := mustRate(t, chainCoil(rows), op)
				mda := op.AirflowM3s * StandardAirDensity / (1 + op.HumidityRatio)
				qAir := mda * MoistAirCp(op.HumidityRatio) * (r.LeavingAirC - op.EnteringAirC)
				tm := (op.EnteringWaterC + r.LeavingWaterC) / 2
				qWater := op.WaterFlowM3s * WaterDensity(op.EnteringWaterC) * WaterCp(tm) * (op.EnteringWaterC - r.LeavingWaterC)
				if relErr(qAir, r.CapacityW) > 1e-3 || relErr(qWater, r.CapacityW) > 1e-3 {
					t.Errorf("%d rows %g gpm %g °F: capacity %.2f W, air %.2f W, water %.2f W", rows, gpm, ewtF, r.CapacityW, qAir, qWater)
				}
			}
		}
	}
}

func TestSensibleHeatFactors(t *testing.T) {
	c := chainCoil(2)
	// 1.08·CFM·ΔT: 60 min/h × 0.075 lb/ft³ × 0.24 Btu/(lb·°F) (ASHRAE Handbook
	// Fundamentals; standard air, dry).
	op := ipOp(800, 55, 2, 180)
	op.AirDensityKgM3 = 0.075 * 0.45359237 / math.Pow(units.MetrePerFoot, 3)
	r := mustRate(t, c, op)
	dtF := units.DeltaKToF(r.LeavingAirC - op.EnteringAirC)
	if e := relErr(1.08*800*dtF, units.WToBtuh(r.CapacityW)); e > 0.01 {
		t.Errorf("1.08 rule: %.0f Btu/h vs model %.0f (%.2f %%)", 1.08*800*dtF, units.WToBtuh(r.CapacityW), 100*e)
	}
	// 500·GPM·ΔT: 60 min/h × 8.33 lb/gal × 1.0 Btu/(lb·°F), water near 60 °F
	// (ASHRAE Handbook Fundamentals).
	op = ipOp(800, 35, 2, 64)
	r = mustRate(t, c, op)
	dwF := units.DeltaKToF(op.EnteringWaterC - r.LeavingWaterC)
	if tm := units.CToF((op.EnteringWaterC + r.LeavingWaterC) / 2); math.Abs(tm-60) > 3 {
		t.Fatalf("test point mean water %.1f °F is not near 60 °F", tm)
	}
	if e := relErr(500*2*dwF, units.WToBtuh(r.CapacityW)); e > 0.01 {
		t.Errorf("500 rule at 60 °F: %.0f Btu/h vs model %.0f (%.2f %%)", 500*2*dwF, units.WToBtuh(r.CapacityW), 100*e)
	}
	// The drift a practitioner should know: at 180 °F the water factor is
	// 60·ρ·cp ≈ 487 (ρ and cp from IAPWS-IF97 Region 1, computed here).
	op = ipOp(800, 55, 2, 180)
	r = mustRate(t, c, op)
	factor := units.WToBtuh(r.CapacityW) / (2 * units.DeltaKToF(op.EnteringWaterC-r.LeavingWaterC))
	v, cp := if97Region1(op.EnteringWaterC+273.15, 0.101325)
	tm := (op.EnteringWaterC + r.LeavingWaterC) / 2
	_, cpm := if97Region1(tm+273.15, 0.101325)
	_ = cp
	lbPerGal := (1 / v) * units.CubicMetrePerUSGal / 0.45359237
	want := 60 * lbPerGal * cpm / 4186.8
	if relErr(factor, want) > 0.01 || factor > 492 || factor < 482 {
		t.Errorf("water factor at 180 °F: %.1f, IF97 %.1f (expected ≈ 487, clearly below 500)", factor, want)
	}
}

func TestBadGeometryRejected(t *testing.T) {
	good := chainCoil(1)
	cases := []struct {
		name string
		mod  func(*Coil)
		want string
	}{
		{"zero rows", func(c *Coil) { c.Rows = 0 }, "rows"},
		{"five rows", func(c *Coil) { c.Rows = 5 }, "rows"},
		{"negative face", func(c *Coil) { c.FaceWidthM = -0.3 }, "face width"},
		{"zero height", func(c *Coil) { c.FaceHeightM = 0; c.TubesPerRow = 0 }, "face height"},
		{"FPI 0", func(c *Coil) { c.Fin.PerM = 0 }, "fin density"},
		{"NaN pitch", func(c *Coil) { c.TransversePitchM = math.NaN() }, "transverse pitch"},
		{"pitch under collar", func(c *Coil) { c.TransversePitchM = 0.012 }, "transverse pitch"},
		{"wall too thick", func(c *Coil) { c.Tube.WallM = 0.006 }, "tube wall"},
		{"no circuits", func(c *Coil) { c.Circuits = 0 }, "circuits"},
		{"too many circuits", func(c *Coil) { c.Circuits = 10 }, "circuits"},
		{"fins touching", func(c *Coil) { c.Fin.ThicknessM = 0.0025 }, "fin thickness"},
		{"negative fouling", func(c *Coil) { c.FoulingWaterM2KW = -1e-4 }, "fouling"},
	}
	op := ipOp(500, 55, 2, 180)
	for _, tc := range cases {
		c := good
		tc.mod(&c)
		r, err := Rate(c, op)
		if !errors.Is(err, ErrBadGeometry) || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v, want ErrBadGeometry mentioning %q", tc.name, err, tc.want)
		}
		if r != (Rating{}) {
			t.Errorf("%s: rating %+v returned with an error", tc.name, r)
		}
		if _, err := NewCalibrated(c); !errors.Is(err, ErrBadGeometry) {
			t.Errorf("%s: NewCalibrated accepted it", tc.name)
		}
	}
	bad := []Operating{
		{AirflowM3s: -1, EnteringAirC: 10, WaterFlowM3s: 1e-4, EnteringWaterC: 80},
		{AirflowM3s: 0.2, EnteringAirC: math.NaN(), WaterFlowM3s: 1e-4, EnteringWaterC: 80},
		{AirflowM3s: 0.2, EnteringAirC: 10, WaterFlowM3s: 1e-4, EnteringWaterC: 200},
	}
	for _, op := range bad {
		if _, err := Rate(good, op); err == nil {
			t.Errorf("operating point %+v accepted", op)
		}
	}
}

func TestZeroFlowsAreFinite(t *testing.T) {
	c := chainCoil(2)
	for _, op := range []Operating{ipOp(0, 55, 2, 180), ipOp(500, 55, 0, 180), ipOp(0, 55, 0, 180)} {
		r := mustRate(t, c, op)
		if r.CapacityW != 0 || math.IsNaN(r.LeavingAirC) || math.IsNaN(r.LeavingWaterC) || math.IsNaN(r.AirDropPa) || math.IsNaN(r.WaterDropPa) {
			t.Errorf("%+v: %+v", op, r)
		}
	}
}

func TestWaterRegimeAndTransition(t *testing.T) {
	// A throttled reheat valve puts the tubes into laminar flow; the water-side
	// coefficient falls several-fold (Incropera ch. 8; common practice) and the
	// blend keeps h and capacity continuous and increasing with flow.
	c := chainCoil(1)
	prevH, prevQ := 0.0, 0.0
	seen := map[Regime]bool{}
	for gpm := 0.02; gpm < 6; gpm *= 1.05 {
		r := mustRate(t, c, ipOp(500, 55, gpm, 180))
		seen[r.Regime] = true
		if r.HWaterWm2K < prevH || r.CapacityW < prevQ {
			t.Fatalf("%.3f gpm: h %.0f (prev %.0f), Q %.0f (prev %.0f) not increasing", gpm, r.HWaterWm2K, prevH, r.CapacityW, prevQ)
		}
		if prevH > 0 && r.HWaterWm2K/prevH > 1.3 {
			t.Fatalf("%.3f gpm: water h jumps %.0f → %.0f", gpm, prevH, r.HWaterWm2K)
		}
		prevH, prevQ = r.HWaterWm2K, r.CapacityW
	}
	if !seen[Laminar] || !seen[Transitional] || !seen[Turbulent] {
		t.Errorf("regimes seen %v", seen)
	}
	lo := mustRate(t, c, ipOp(500, 55, 0.1, 180))
	hi := mustRate(t, c, ipOp(500, 55, 3, 180))
	if lo.Regime != Laminar || hi.HWaterWm2K/lo.HWaterWm2K < 5 {
		t.Errorf("0.1 gpm %v h %.0f vs 3 gpm h %.0f", lo.Regime, lo.HWaterWm2K, hi.HWaterWm2K)
	}
}

func TestFoulingLowersUA(t *testing.T) {
	// ΔUA/UA ≈ −UA·R_fw/A_i (series resistance; Jacobi, Data Book III Eq. 6.1.7).
	c := chainCoil(1)
	op := ipOp(937.5, 55, 3, 180)
	clean := mustRate(t, c, op)
	c.FoulingWaterM2KW = 8.8e-5 // 0.0005 h·ft²·°F/Btu, closed-system water (ASHRAE Handbook fouling table)
	fouled := mustRate(t, c, op)
	ai := SurfacesOf(c).InnerAreaM2
	want := 1 / (1/clean.UAWK + c.FoulingWaterM2KW/ai)
	if relErr(fouled.UAWK, want) > 0.01 || fouled.CapacityW >= clean.CapacityW {
		t.Errorf("fouled UA %.2f, series-resistance estimate %.2f (clean %.2f)", fouled.UAWK, want, clean.UAWK)
	}
}

func TestInlineLayoutAndExtrapolationFlags(t *testing.T) {
	// Wang et al. (2000) is fitted on staggered coils only (Shah & Sekulić 2003,
	// §7.5.4.2), so inline ratings are flagged as extrapolated; the model has no
	// inline j correlation and only the Schmidt inline fin geometry differs.
	st := chainCoil(2)
	in := st
	in.Layout = Inline
	in.LongitudinalPitchM = 0.0275
	op := ipOp(800, 55, 2, 180)
	rs, ri := mustRate(t, st, op), mustRate(t, in, op)
	if ri.Extrapolated&ExtrapInline == 0 || rs.Extrapolated != 0 {
		t.Errorf("flags: staggered %v inline %v", rs.Extrapolated, ri.Extrapolated)
	}
	if ri.FinEfficiency <= 0 || ri.FinEfficiency >= 1 || math.IsNaN(ri.CapacityW) {
		t.Errorf("inline rating %+v", ri)
	}
	// A trickle of air is below the Wang Reynolds range (300): flagged, finite.
	lo := mustRate(t, st, ipOp(20, 55, 2, 180))
	if lo.Extrapolated&ExtrapAirRe == 0 || lo.ReAirDc >= 300 || math.IsNaN(lo.LeavingAirC) {
		t.Errorf("low airflow: Re %.0f flags %v", lo.ReAirDc, lo.Extrapolated)
	}
}

func TestExpectedRiseEdgeInputs(t *testing.T) {
	k, err := NewCalibrated(chainCoil(1))
	if err != nil {
		t.Fatal(err)
	}
	if r := k.ExpectedRise(ipOp(500, 55, -1, 180)); r != 0 {
		t.Errorf("negative water flow: rise %g", r)
	}
	op := ipOp(500, 55, 2, 180)
	op.EnteringAirC = math.NaN()
	if r := k.ExpectedRise(op); !math.IsNaN(r) {
		t.Errorf("NaN input gave %g", r)
	}
}

func TestWangChiChangExport(t *testing.T) {
	// Rating chain above (computed, not published): at Re_Dc ≈ 3844, 1 row,
	// j ≈ 0.0090 and f ≈ 0.0312.
	j, f := WangChiChang(chainCoil(1), 3844)
	if relErr(j, 0.0090) > 0.02 || relErr(f, 0.0312) > 0.02 {
		t.Errorf("j %.5f f %.5f", j, f)
	}
	// Continuity at the range edges of the extension.
	for _, re := range []float64{wangReMin, wangReMax} {
		j1, f1 := WangChiChang(chainCoil(2), re*(1-1e-9))
		j2, f2 := WangChiChang(chainCoil(2), re*(1+1e-9))
		if relErr(j1, j2) > 1e-6 || relErr(f1, f2) > 1e-6 {
			t.Errorf("discontinuity at Re %g: j %g/%g f %g/%g", re, j1, j2, f1, f2)
		}
	}
}
