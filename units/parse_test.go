package units

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

func near(a, b, rel float64) bool {
	return math.Abs(a-b) <= rel*math.Max(math.Abs(a), math.Abs(b))+1e-12
}

// NIST SP 811 (2008), Appendix B.8 "Factors for units listed alphabetically":
// the factors are printed to 7 significant digits, so each check allows 1e-6
// relative (5e-6 for the water-column entries, printed to 6 digits).
func TestParseNISTFactors(t *testing.T) {
	cases := []struct {
		in   string
		dim  Dimension
		want float64 // SI
		rel  float64
		src  string
	}{
		{"1 cfm", VolumeFlow, 4.719474e-4, 1e-6, "NIST SP 811 B.8: cubic foot per minute = 4.719 474 E-04 m3/s"},
		{"1 gpm", VolumeFlow, 6.309020e-5, 1e-6, "NIST SP 811 B.8: gallon (U.S.) per minute = 6.309 020 E-05 m3/s"},
		{"1 Btu/h", Power, 2.930711e-1, 1e-6, "NIST SP 811 B.8: Btu_IT per hour = 2.930 711 E-01 W"},
		{"1 psi", Pressure, 6.894757e3, 1e-6, "NIST SP 811 B.8: pound-force per square inch = 6.894 757 E+03 Pa"},
		{"1 in.w.c.", Pressure, 2.49082e2, 5e-6, "NIST SP 811 B.8: inch of water (39.2 °F) = 2.490 82 E+02 Pa"},
		{"1 ft", Pressure, 2.98898e3, 5e-5, "NIST SP 811 B.8: foot of water (39.2 °F) = 2.988 98 E+03 Pa (6 digits; units.go uses 2989.067 from rho(4 °C)·g_n, 3e-5 apart)"},
		{"1 in", Length, 0.0254, 1e-15, "NIST SP 811 B.8: inch = 2.54 E-02 m (exact)"},
		{"1 ft", Length, 0.3048, 1e-15, "NIST SP 811 B.8: foot = 3.048 E-01 m (exact)"},
		{"212 F", Temperature, 100, 1e-12, "NIST SP 811 B.9: t/°C = (t/°F - 32)/1.8 (exact)"},
		{"32 F", Temperature, 0, 1e-12, "NIST SP 811 B.9: t/°C = (t/°F - 32)/1.8 (exact)"},
		{"273.15 K", Temperature, 0, 1e-12, "NIST SP 811 B.9: t/°C = T/K - 273.15 (exact)"},
		{"1.8 F", TempDiff, 1, 1e-12, "NIST SP 811 B.9: 1 °F difference = 5/9 K (exact)"},
		{"1 kW", Power, 1000, 1e-15, "SI prefix kilo (NIST SP 811 §4.3)"},
		{"10 fpi", FinDensity, 393.7008, 1e-6, "10 per inch = 10/0.0254 per metre (NIST SP 811 B.8 inch, exact)"},
		{"50 %", Fraction, 0.5, 1e-15, "definition of percent (NIST SP 811 §7.10.2)"},
		{"0.5", Fraction, 0.5, 1e-15, "bare fraction"},
		{"1 Btu/(h.ft.F)", Conductivity, 1.730735, 1e-6, "NIST SP 811 B.8: Btu_IT·ft/(h·ft²·°F) = 1.730 735 E+00 W/(m·K)"},
	}
	for _, c := range cases {
		got, err := Parse(c.in, c.dim)
		if err != nil {
			t.Errorf("Parse(%q, %s): %v", c.in, c.dim, err)
			continue
		}
		if !near(got, c.want, c.rel) {
			t.Errorf("Parse(%q, %s) = %.9g, want %.9g (%s)", c.in, c.dim, got, c.want, c.src)
		}
	}
}

// The pairs below are the same quantity written in IP and SI, rounded the
// way a schedule prints them; they must agree to the printed precision.
// Values: conversions of the IP figure with the NIST SP 811 B.8 factors above.
func TestParseIPAndSIAgree(t *testing.T) {
	cases := []struct {
		ip, si string
		dim    Dimension
		rel    float64
	}{
		{"180 F", "82.2 C", Temperature, 3e-4},
		{"450 cfm", "212 L/s", VolumeFlow, 2e-3},
		{"2.5 gpm", "0.158 L/s", VolumeFlow, 2e-3},
		{"30 MBH", "8.8 kW", Power, 2e-3},
		{"0.25 in.w.c.", "62.3 Pa", Pressure, 1e-3},
		{"6 ft", "17.9 kPa", Pressure, 2e-3},
		{"3 psi", "20.7 kPa", Pressure, 2e-3},
		{"12 in", "304.8 mm", Length, 1e-12},
		{"20 F", "11.11 K", TempDiff, 1e-3},
		{"10 fpi", "393.7 /m", FinDensity, 1e-4},
	}
	for _, c := range cases {
		a, err := Parse(c.ip, c.dim)
		if err != nil {
			t.Fatalf("Parse(%q): %v", c.ip, err)
		}
		b, err := Parse(c.si, c.dim)
		if err != nil {
			t.Fatalf("Parse(%q): %v", c.si, err)
		}
		if !near(a, b, c.rel) {
			t.Errorf("%q = %g SI but %q = %g SI", c.ip, a, c.si, b)
		}
	}
}

func TestParseSpellings(t *testing.T) {
	for _, s := range []string{"180F", "180 °F", "180 degF", "180 deg F", " 180  F "} {
		v, err := Parse(s, Temperature)
		if err != nil || !near(v, FToC(180), 1e-12) {
			t.Errorf("Parse(%q) = %v, %v", s, v, err)
		}
	}
	for _, s := range []string{"0.25 in. w.c.", "0.25 IN.WC", "0.25 inwg", "0.25 in w.c."} {
		v, err := Parse(s, Pressure)
		if err != nil || !near(v, InWCToPa(0.25), 1e-12) {
			t.Errorf("Parse(%q) = %v, %v", s, v, err)
		}
	}
	if v, err := ParseDefault("10", FinDensity, "fpi"); err != nil || !near(v, FPIToPerM(10), 1e-12) {
		t.Errorf("ParseDefault fpi = %v, %v", v, err)
	}
	if v, err := Parse("-1.5e1 C", Temperature); err != nil || v != -15 {
		t.Errorf("exponent: %v, %v", v, err)
	}
}

func TestParseErrors(t *testing.T) {
	cases := []struct {
		in   string
		dim  Dimension
		want []string // substrings of the message
	}{
		{"180", Temperature, []string{`"180"`, "missing unit", "temperature", "F, C, K"}},
		{"450 cfx", VolumeFlow, []string{`unknown unit "cfx"`, "volume flow", "cfm", "L/s", "gpm"}},
		{"450 cfm", Temperature, []string{`"cfm" is a volume flow unit`, "expected a temperature"}},
		{"warm", Temperature, []string{"not a number"}},
		{"", Power, []string{"not a number", "MBH", "kW"}},
		{"1,200 cfm", VolumeFlow, []string{`unknown unit ",200 cfm"`}},
		{"0.25 in", Pressure, []string{`"in" is a length unit`, "in.w.c."}},
		{"1e999 Pa", Pressure, []string{"not a number"}},
		{"3 cfm", NoDimension, []string{"no unit"}},
	}
	for _, c := range cases {
		_, err := Parse(c.in, c.dim)
		var pe *ParseError
		if !errors.As(err, &pe) {
			t.Errorf("Parse(%q, %s): error %v, want *ParseError", c.in, c.dim, err)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("Parse(%q, %s): %q lacks %q", c.in, c.dim, err, w)
			}
		}
	}
}

func TestParseUnitAndRoundTrip(t *testing.T) {
	for _, name := range []string{"degF", "F", "cfm", "%", "on/off", "L/s", "gpm", "kPa", "psi"} {
		u, err := ParseUnit(name)
		if err != nil {
			t.Fatalf("ParseUnit(%q): %v", name, err)
		}
		for _, v := range []float64{-40, 0, 1, 55.5, 180} {
			if back := u.FromSI(u.ToSI(v)); !near(back, v, 1e-12) {
				t.Errorf("%s: %g -> %g -> %g", name, v, u.ToSI(v), back)
			}
		}
	}
	// -40 °F is -40 °C (exact, from t/°C = (t/°F - 32)/1.8).
	if u, _ := ParseUnit("F"); u.ToSI(-40) != -40 || u.Dim != Temperature {
		t.Errorf("F as point unit: %v %v", u.ToSI(-40), u.Dim)
	}
	if u, _ := ParseUnit("ft"); u.Dim != Length {
		t.Errorf("ft without dimension should be a length, got %s", u.Dim)
	}
	if _, err := ParseUnit("furlong"); err == nil {
		t.Error("furlong accepted")
	}
	// FormatSI must read back bit-identical.
	for _, d := range []Dimension{Temperature, TempDiff, VolumeFlow, Power, Pressure, Length, FinDensity, Fraction, Conductivity} {
		for _, v := range []float64{0.1 + 0.2, 82.22222222222223, 1e-7, 12345.678} {
			got, err := Parse(FormatSI(v, d), d)
			if err != nil || got != v {
				t.Errorf("FormatSI(%v, %s) = %q -> %v, %v", v, d, FormatSI(v, d), got, err)
			}
		}
	}
}

func TestFormat(t *testing.T) {
	// Expected strings: conversions with the NIST SP 811 B.8 factors, rounded.
	cases := []struct{ got, want string }{
		{FormatTemp(FToC(180), true), "180.0 °F"},
		{FormatTemp(FToC(180), false), "82.2 °C"},
		{FormatTempDiff(DeltaFToK(20), true), "20.0 °F"},
		{FormatTempDiff(DeltaFToK(20), false), "11.1 K"},
		{FormatAirflow(CFMToM3s(450), true), "450 cfm"},
		{FormatAirflow(CFMToM3s(450), false), "212.4 L/s"},
		{FormatWaterFlow(GPMToM3s(2.5), true), "2.50 gpm"},
		{FormatWaterFlow(GPMToM3s(2.5), false), "0.158 L/s"},
		{FormatPower(MBHToW(30), true), "30.0 MBH"},
		{FormatPower(MBHToW(30), false), "8.79 kW"},
		{FormatAirDP(InWCToPa(0.25), true), "0.25 in. w.c."},
		{FormatAirDP(InWCToPa(0.25), false), "62 Pa"},
		{FormatWaterDP(FtWCToPa(6), true), "6.0 ft w.c."},
		{FormatWaterDP(FtWCToPa(6), false), "17.9 kPa"},
		{FormatLength(InToM(12), true), "12.0 in"},
		{FormatLength(InToM(12), false), "305 mm"},
		{FormatPercent(0.42), "42 %"},
		{FormatPair(FormatTemp, FToC(180), true, "n/a"), "180.0 °F (82.2 °C)"},
		{FormatPair(FormatTemp, FToC(180), false, "n/a"), "82.2 °C (180.0 °F)"},
		{FormatPair(FormatTemp, math.NaN(), true, "–"), "–"},
	}
	for _, c := range cases {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}

func FuzzParse(f *testing.F) {
	for _, s := range []string{"180 F", "82.2 C", "450 cfm", "0.25 in.w.c.", "1e400", "-", ".", "1e", "3 ΔF", "\xff"} {
		f.Add(s, 1)
	}
	f.Fuzz(func(t *testing.T, s string, d int) {
		dim := Dimension(d % 11)
		v, err := Parse(s, dim)
		if err == nil && (math.IsNaN(v) || math.IsInf(v, 0)) {
			t.Fatalf("Parse(%q) = %v without error", s, v)
		}
	})
}

func BenchmarkParse(b *testing.B) {
	for b.Loop() {
		if _, err := Parse("0.25 in. w.c.", Pressure); err != nil {
			b.Fatal(err)
		}
	}
}

// Kv = 0.865·Cv (IEC 60534-1 / ISA-75.01.01 relation between the metric and
// US flow coefficients, printed to 3 digits).
func TestCvKv(t *testing.T) {
	if kv := CvToKv(1); !near(kv, 0.865, 1e-3) {
		t.Errorf("CvToKv(1) = %g, want 0.865", kv)
	}
	if cv := KvToCv(1); !near(cv, 1.156, 1e-3) {
		t.Errorf("KvToCv(1) = %g, want 1.156", cv)
	}
}

// TestFormatNoNegativeZero: a value that rounds to zero prints without a
// minus sign; one that rounds away from zero keeps it.
func TestFormatNoNegativeZero(t *testing.T) {
	for _, c := range []struct{ got, want string }{
		{FormatTempDiff(-0.01, false), "0.0 K"},
		{FormatTempDiff(-0.01, true), "0.0 °F"},
		{FormatTempDiff(math.Copysign(0, -1), false), "0.0 K"},
		{FormatTempDiff(-0.06, false), "-0.1 K"},
		{FormatTemp(-0.04, false), "0.0 °C"},
		{FormatAirflow(-0.0001, true), "0 cfm"},
		{FormatTemp(-10, false), "-10.0 °C"},
	} {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}

// TestFormatExact: a value entered in IP units and converted to SI is
// written back in those units (the site file the simulator writes reads
// "180 F", not "82.22222222222223 C"), and every written value, whatever the
// unit chosen, reads back bit-identical.
func TestFormatExact(t *testing.T) {
	cases := []struct {
		si   float64
		d    Dimension
		want string
	}{
		{FToC(180), Temperature, "180 F"},
		{FToC(55), Temperature, "55 F"},
		{20, Temperature, "20 C"}, // a tie with "68 F" keeps SI
		{DeltaFToK(20), TempDiff, "20 F"},
		{InToM(14), Length, "14 in"},
		{FPIToPerM(10), FinDensity, "10 fpi"},
		{CFMToM3s(315), VolumeFlow, "315 cfm"},
		{GPMToM3s(1.5), VolumeFlow, "1.5 gpm"},
		{FtWCToPa(6), Pressure, "6 ft"},
		{240, Length, "240 m"},
		{0.1 + 0.2, Length, FormatSI(0.1+0.2, Length)}, // no unit writes it exactly in a few digits
	}
	for _, c := range cases {
		if got := FormatExact(c.si, c.d); got != c.want {
			t.Errorf("FormatExact(%v, %s) = %q, want %q", c.si, c.d, got, c.want)
		}
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for _, d := range []Dimension{Temperature, TempDiff, VolumeFlow, Power, Pressure, Length, FinDensity, Fraction, Conductivity} {
		for i := 0; i < 2000; i++ {
			v := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(8)-4))
			if i%3 == 0 { // values entered in a unit of d with a few decimals
				names := Accepted(d)
				u, _ := LookupUnit(names[rng.IntN(len(names))], d)
				v = u.ToSI(math.Round(v*100) / 100)
			}
			s := FormatExact(v, d)
			if got, err := Parse(s, d); err != nil || got != v {
				t.Fatalf("FormatExact(%v, %s) = %q -> %v, %v", v, d, s, got, err)
			}
			if len(s) > len(FormatSI(v, d)) {
				t.Fatalf("FormatExact(%v, %s) = %q, longer than %q", v, d, s, FormatSI(v, d))
			}
		}
	}
}
