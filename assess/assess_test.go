package assess

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"math"
	"strings"
	"testing"
	"time"

	"risewatch/coilmodel"
	"risewatch/site"
	"risewatch/units"
)

// oneBox is a site with one 180 °F loop (20 °F ΔT, 5 psi branch), one AHU
// and one 8 in box with a preset coil (coilmodel.Preset, common-practice
// geometry), a Cv 2.5 valve, heating airflow 400 cfm and the given load.
func oneBox(t testing.TB, rows int, fpi float64, oversized bool, loadW float64) *site.Site {
	t.Helper()
	c, err := coilmodel.Preset(8, rows, fpi, oversized)
	if err != nil {
		t.Fatal(err)
	}
	s := &site.Site{Name: "test", Location: time.UTC,
		Loops: []site.Loop{{ID: "HW-1", DesignSupplyC: units.FToC(180), DesignDeltaK: units.DeltaFToK(20), BranchDPPa: units.PSIToPa(5)}},
		AHUs:  []site.AHU{{ID: "AHU-1"}},
		Terminals: []site.Terminal{{ID: "VAV-1", AHU: "AHU-1", Loop: "HW-1", InletIn: 8, Oversized: oversized, Coil: c,
			Valve:         coilmodel.Valve{Cv: 2.5, Characteristic: coilmodel.EqualPercentage, Rangeability: 50},
			MinAirflowM3s: units.CFMToM3s(150), MaxAirflowM3s: units.CFMToM3s(600), HeatingAirflowM3s: units.CFMToM3s(400),
			DesignLoadW: loadW}},
	}
	s.Index()
	return s
}

func evalOne(t testing.TB, s *site.Site, supplyF float64, opt Options) Result {
	t.Helper()
	us := Prepare(s, nil, opt)
	if us[0].Err != nil {
		t.Fatal(us[0].Err)
	}
	return us[0].Evaluate(Conditions{SupplyC: units.FToC(supplyF)}, opt)
}

// TestHandCheck compares the tool with the sensible-heat relations of the
// ASHRAE Handbook—Fundamentals (ch. 1 psychrometrics; the HVAC rules
// Q = 1.08·cfm·ΔT for standard air and Q = 500·gpm·ΔT for water near 60 °F).
// 1.08 is 60 min/h × 0.075 lb/ft³ × 0.24 Btu/(lb·°F); the model's moist-air cp
// at W = 0.003 is 0.6 % above 0.24, so the air side must agree within 1.5 %.
// The 500 factor takes water at 8.33 lb/gal and 1 Btu/(lb·°F); at 160-180 °F
// ρ·cp is about 2.5 % lower (the Handbook's water property tables), so the
// water side must agree within 4 %.
func TestHandCheck(t *testing.T) {
	const loadBtuh = 20000.0 // chosen: 20 MBH
	const cfm, eatF = 400.0, 55.0
	s := oneBox(t, 2, 10, false, units.BtuhToW(loadBtuh))
	r := evalOne(t, s, 180, Options{EnteringAirC: ptr(units.FToC(eatF))})
	if !r.NeedReachable {
		t.Fatalf("load not reachable: %+v", r.Performance)
	}
	// At the available flow: capacity from the air rise, 1.08·cfm·ΔT.
	airQ := 1.08 * cfm * (units.CToF(r.LeavingAirC) - eatF)
	if rel := airQ/units.WToBtuh(r.CapacityW) - 1; math.Abs(rel) > 0.015 {
		t.Errorf("1.08·cfm·ΔT = %.0f Btu/h, tool capacity %.0f Btu/h (%.1f %%)", airQ, units.WToBtuh(r.CapacityW), 100*rel)
	}
	// At the needed flow: 500·gpm·ΔT_water equals the load.
	gpm := units.M3sToGPM(r.NeedFlowM3s)
	waterQ := 500 * gpm * units.DeltaKToF(r.NeedDeltaK)
	if rel := waterQ/loadBtuh - 1; math.Abs(rel) > 0.04 || rel < 0 {
		t.Errorf("500·gpm·ΔT = %.0f Btu/h at %.2f gpm, load %.0f Btu/h (%.1f %%; the 500 factor overstates hot water, so ≥ 0)", waterQ, gpm, loadBtuh, 100*rel)
	}
	// The leaving-water temperature by hand: EWT − Q/(500·gpm), within 4 %
	// of the water ΔT.
	lwtHand := 180 - loadBtuh/(500*gpm)
	if d := math.Abs(units.CToF(r.NeedLeavingWaterC) - lwtHand); d > 0.04*(180-lwtHand) {
		t.Errorf("LWT %.1f °F, by hand %.1f °F", units.CToF(r.NeedLeavingWaterC), lwtHand)
	}
	if !(r.NeedFlowM3s < r.AvailFlowM3s) || r.Status == StatusShort {
		t.Errorf("a 20 MBH load on a 2-row 8 in coil at 180 °F should be met: %+v", r.Performance)
	}
}

func ptr(x float64) *float64 { return &x }

// TestPhysicalConsistency checks directions that hold for any coil
// (coilmodel's effectiveness-NTU rating): capacity falls with supply
// temperature at fixed flows; more rows, more fins and a larger face raise
// it; an oversized face meets a load the standard face misses.
func TestPhysicalConsistency(t *testing.T) {
	s := oneBox(t, 1, 10, false, 1)
	u := Prepare(s, nil, Options{})[0]
	cc := u.unitCase()
	q := units.GPMToM3s(2)
	r180, err := cc.capacity(units.FToC(180), q)
	if err != nil {
		t.Fatal(err)
	}
	r120, err := cc.capacity(units.FToC(120), q)
	if err != nil {
		t.Fatal(err)
	}
	if !(r120.CapacityW < r180.CapacityW) {
		t.Errorf("capacity at 120 °F %.0f W not below 180 °F %.0f W", r120.CapacityW, r180.CapacityW)
	}
	// Capacity is roughly proportional to EWT − EAT (effectiveness changes
	// little): (120−55)/(180−55) = 0.52.
	if ratio := r120.CapacityW / r180.CapacityW; ratio < 0.45 || ratio > 0.6 {
		t.Errorf("capacity ratio 120/180 °F = %.2f, want near 0.52 (ΔT ratio)", ratio)
	}

	// Standard against oversized face at 120 °F with the same valve and branch.
	std := evalOne(t, oneBox(t, 1, 10, false, 1), 120, Options{NoRemedies: true})
	big := evalOne(t, oneBox(t, 1, 10, true, 1), 120, Options{NoRemedies: true})
	if !(big.CapacityW > std.CapacityW) {
		t.Fatalf("oversized capacity %.0f W not above standard %.0f W", big.CapacityW, std.CapacityW)
	}
	load := 0.5 * (std.CapacityW + big.CapacityW)
	stdR := evalOne(t, oneBox(t, 1, 10, false, load), 120, Options{})
	bigR := evalOne(t, oneBox(t, 1, 10, true, load), 120, Options{})
	if stdR.Met || !bigR.Met {
		t.Errorf("load %.0f W: standard met=%v, oversized met=%v; want false, true", load, stdR.Met, bigR.Met)
	}
	// The options for the short standard coil, each against its base.
	byKind := map[string]Remedy{}
	for _, m := range stdR.Remedies {
		byKind[m.Kind] = m
	}
	for _, k := range remedyOrder {
		if _, ok := byKind[k]; !ok {
			t.Errorf("no %s option", k)
		}
	}
	// More circuits may lower capacity when the valve limits the flow (lower
	// tube velocity, lower h), so only rows, fins, face and airflow must rise.
	for _, k := range []string{RemedyRows, RemedyFins, RemedyFace, RemedyAirflow} {
		m := byKind[k]
		if !(m.CapacityW > stdR.CapacityW) {
			t.Errorf("%s (%s): capacity %.0f W not above the existing %.0f W", k, m.Summary, m.CapacityW, stdR.CapacityW)
		}
	}
	if m := byKind[RemedyFace]; !m.Met {
		t.Errorf("face option %s does not meet the load the oversized box meets: %+v", m.Summary, m.Performance)
	}
	if m := byKind[RemedyRows]; m.Rows != 2 || !m.Met {
		t.Errorf("rows option %s (%d rows, met=%v): want 2 rows meeting the load", m.Summary, m.Rows, m.Met)
	}
	if m := byKind[RemedyFins]; math.Abs(m.FPI-12) > 0.01 {
		t.Errorf("fins option at %.1f FPI, want 12", m.FPI)
	}
	if m := byKind[RemedyAirflow]; !(m.AirflowM3s > stdR.AirflowM3s) || m.AirflowM3s > units.CFMToM3s(600)*1.0001 {
		t.Errorf("airflow option %.0f cfm: want above 400 and at most the 600 cfm cooling max", units.M3sToCFM(m.AirflowM3s))
	}
	if m := byKind[RemedyRedesign]; m.Rows != 4 || !(m.NeedDeltaK > units.DeltaFToK(20)) {
		t.Errorf("redesign %s: %d rows, water ΔT %.1f °F; want 4 rows and more than the 20 °F loop ΔT", m.Summary, m.Rows, units.DeltaKToF(m.NeedDeltaK))
	}
	b := stdR.BestRemedy()
	if b == nil || !b.Met {
		t.Fatalf("first option that meets = %+v", b)
	}
	for _, k := range remedyOrder {
		if k == b.Kind {
			break
		}
		if byKind[k].Met {
			t.Errorf("first option %s, but %s (less work) also meets", b.Kind, k)
		}
	}
}

// TestMinimumSupply checks the bisection: the coil meets its load just
// above the minimum and not just below.
func TestMinimumSupply(t *testing.T) {
	s := oneBox(t, 2, 10, false, units.BtuhToW(15000))
	us := Prepare(s, nil, Options{})
	r := us[0].Evaluate(Conditions{SupplyC: units.FToC(120)}, Options{})
	if math.IsNaN(r.MinSupplyC) {
		t.Fatal("no minimum supply")
	}
	c := Conditions{}
	if !us[0].MeetsAt(r.MinSupplyC+0.1, c) || us[0].MeetsAt(r.MinSupplyC-0.1, c) {
		t.Errorf("minimum supply %.2f °C is not the threshold", r.MinSupplyC)
	}
	if r.Met != (r.MinSupplyC <= units.FToC(120)) {
		t.Errorf("met at 120 °F = %v but minimum supply %.1f °F", r.Met, units.CToF(r.MinSupplyC))
	}
	a, err := Assess(context.Background(), s, us, Conditions{SupplyC: units.FToC(120)}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	prev := math.MaxInt
	for _, p := range a.Loops[0].Pass { // 140, 130, 120, 110 °F: never more pass when colder
		if p.Pass > prev {
			t.Errorf("pass counts rise as the supply falls: %+v", a.Loops[0].Pass)
		}
		prev = p.Pass
	}
}

func TestNoLoadIsReportedNotDropped(t *testing.T) {
	s := oneBox(t, 1, 10, false, 0)
	us := Prepare(s, nil, Options{})
	if us[0].Err == nil || !strings.Contains(us[0].Err.Error(), "VAV-1") {
		t.Fatalf("want an error naming the terminal, got %v", us[0].Err)
	}
	a, err := Assess(context.Background(), s, us, Conditions{SupplyC: units.FToC(120)}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(a.Results) != 1 || a.Results[0].Status != StatusNoData || a.Loops[0].Assessed != 0 {
		t.Errorf("results %+v loops %+v", a.Results, a.Loops)
	}
}

func TestOutputs(t *testing.T) {
	s := oneBox(t, 1, 10, false, units.BtuhToW(25000))
	us := Prepare(s, nil, Options{})
	a, err := Assess(context.Background(), s, us, Conditions{SupplyC: units.FToC(120)}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	for _, ip := range []bool{true, false} {
		var b bytes.Buffer
		if err := a.WriteTable(&b, ip); err != nil {
			t.Fatal(err)
		}
		want := "°C"
		if ip {
			want = "°F"
		}
		if !strings.Contains(b.String(), "VAV-1") || !strings.Contains(b.String(), "short") || !strings.Contains(b.String(), want) {
			t.Errorf("table (ip=%v):\n%s", ip, b.String())
		}
		// The leaving water and coil pressure drop are at the flow the
		// load needs, not at today's flow: the header says so (a 50 ft
		// drop read as today's would send someone after a blocked coil).
		if !strings.Contains(b.String(), "LWT at need") || !strings.Contains(b.String(), "coil ΔP at need") {
			t.Errorf("table (ip=%v) header does not say LWT and coil ΔP are at the needed flow:\n%s", ip, b.String())
		}
		b.Reset()
		if err := a.WriteCSV(&b, ip); err != nil {
			t.Fatal(err)
		}
		recs, err := csv.NewReader(&b).ReadAll()
		if err != nil || len(recs) != 2 || len(recs[0]) != len(recs[1]) {
			t.Errorf("csv: %v %q", err, recs)
		}
	}
	var j bytes.Buffer
	if err := a.WriteJSON(&j); err != nil {
		t.Fatal(err)
	}
	var back map[string]any
	if err := json.Unmarshal(j.Bytes(), &back); err != nil {
		t.Fatalf("json: %v\n%s", err, j.String())
	}
	if rs, _ := back["Results"].([]any); len(rs) != 1 {
		t.Errorf("json results: %v", back["Results"])
	}
	var png bytes.Buffer
	if err := a.WritePlot(&png, "x.png", true); err != nil {
		t.Fatal(err)
	}
	if !bytes.HasPrefix(png.Bytes(), []byte("\x89PNG")) {
		t.Error("plot is not a PNG")
	}
	if err := a.WritePlot(&png, "x.gif", true); err == nil {
		t.Error("a .gif plot name was accepted")
	}
	sec := a.Section(true)
	if len(sec.Rows) != 1 || len(sec.Rows[0]) != len(sec.Header) || !strings.Contains(sec.Title, "120.0 °F (48.9 °C)") {
		t.Errorf("section %+v", sec)
	}
	// More terminals than the report shows: the rest are pointed to where
	// they are (the weekly CSV is the fault work list and has none).
	for len(a.Results) <= maxSectionRows {
		a.Results = append(a.Results, a.Results[0])
	}
	sec = a.Section(false)
	intro := strings.Join(sec.Intro, " ")
	if len(sec.Rows) != maxSectionRows || strings.Contains(intro, "CSV") || !strings.Contains(intro, "risewatch assess --supply 48.9C --si ") {
		t.Errorf("%d rows, intro %q", len(sec.Rows), intro)
	}
}

func TestStudentT(t *testing.T) {
	// Two-sided 95 % points of Student's t (Abramowitz & Stegun, Table 26.10).
	for _, c := range []struct{ df, want float64 }{{3, 3.182}, {5, 2.571}, {10, 2.228}, {30, 2.042}, {120, 1.980}} {
		if got := studentT975(c.df); math.Abs(got/c.want-1) > 0.003 {
			t.Errorf("t(0.975, %g) = %.4f, want %.3f", c.df, got, c.want)
		}
	}
}

func TestFitLine(t *testing.T) {
	x := []float64{-10, -8, -5, -3, 0, 2}
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = 1000 - 150*v + 20*math.Sin(float64(i)) // a known line plus a small wobble (chosen)
	}
	f, ok := fitLine(x, y)
	if !ok || math.Abs(f.b+150) > 10 || math.Abs(f.a-1000) > 30 {
		t.Fatalf("fit %+v", f)
	}
	if w0, w1 := f.predictionHalfWidth(f.xMean), f.predictionHalfWidth(-30); !(w1 > w0) || !(w0 > 0) {
		t.Errorf("prediction interval %.1f at the mean, %.1f far outside: want wider outside", w0, w1)
	}
	if _, ok := fitLine([]float64{1, 1, 1}, []float64{1, 2, 3}); ok {
		t.Error("a fit without spread in x was accepted")
	}
}
