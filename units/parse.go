package units

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Dimension is the physical kind of a quantity. It decides which unit names
// are accepted: "6 ft" is a length for a Length and a water head for a
// Pressure.
type Dimension int

// Dimensions understood by Parse and ParseUnit.
const (
	NoDimension  Dimension = iota
	Temperature            // °C inside
	TempDiff               // K inside
	VolumeFlow             // m³/s inside (air and water)
	Power                  // W inside
	Pressure               // Pa inside
	Length                 // m inside
	FinDensity             // fins per metre inside
	Fraction               // 0..1 inside
	Binary                 // 0 or 1 inside
	Conductivity           // W/(m·K) inside
)

var dimNames = [...]string{
	NoDimension:  "dimensionless number",
	Temperature:  "temperature",
	TempDiff:     "temperature difference",
	VolumeFlow:   "volume flow",
	Power:        "power",
	Pressure:     "pressure",
	Length:       "length",
	FinDensity:   "fin density",
	Fraction:     "fraction",
	Binary:       "binary state",
	Conductivity: "thermal conductivity",
}

// String returns the dimension's name as used in messages.
func (d Dimension) String() string {
	if d < 0 || int(d) >= len(dimNames) {
		return "unknown dimension"
	}
	return dimNames[d]
}

// Unit is one accepted unit: its canonical name, dimension and conversion to
// the SI value used inside.
type Unit struct {
	Name   string // canonical name, e.g. "degF", "cfm", "%"
	Symbol string // for tables, e.g. "°F"
	Dim    Dimension
	scale  float64 // SI = v*scale + offset
	offset float64
	conv   func(float64) float64 // non-linear/affine exact conversions (temperatures)
	inv    func(float64) float64
}

// ToSI converts v in unit u to the SI value used inside.
func (u Unit) ToSI(v float64) float64 {
	if u.conv != nil {
		return u.conv(v)
	}
	return v*u.scale + u.offset
}

// FromSI converts an SI value to unit u.
func (u Unit) FromSI(si float64) float64 {
	if u.inv != nil {
		return u.inv(si)
	}
	return (si - u.offset) / u.scale
}

// String returns the canonical name.
func (u Unit) String() string { return u.Name }

// unitDef lists the spellings accepted for one unit. Spellings are matched
// after lower-casing and removing spaces, so "in. w.c." and "IN.WC" are one.
type unitDef struct {
	Unit
	show      string
	spellings []string
}

func ident(v float64) float64 { return v }

// unitTable holds every unit. Factors come from units.go (NIST SP 811,
// Appendix B); none is repeated here.
func unitTable() []unitDef {
	// lin: SI = v*scale. show is the spelling used in messages. fn: SI =
	// conv(v); the IP units with a conversion function in units.go use it,
	// so "315 cfm" reads as exactly CFMToM3s(315) (a value entered in code
	// and one read from a file agree to the bit, and FormatExact can write
	// such a value back as it was entered).
	lin := func(name, show, sym string, d Dimension, scale float64, sp ...string) unitDef {
		return unitDef{Unit{Name: name, Symbol: sym, Dim: d, scale: scale}, show, append([]string{name, show}, sp...)}
	}
	fn := func(name, show, sym string, d Dimension, conv, inv func(float64) float64, sp ...string) unitDef {
		return unitDef{Unit{Name: name, Symbol: sym, Dim: d, scale: 1, conv: conv, inv: inv}, show, append([]string{name, show}, sp...)}
	}
	kToC := func(k float64) float64 { return k - 273.15 }
	cToK := func(c float64) float64 { return c + 273.15 }
	return []unitDef{
		fn("degF", "F", "°F", Temperature, FToC, CToF, "°F", "deg F", "℉"),
		fn("degC", "C", "°C", Temperature, ident, ident, "°C", "deg C", "℃"),
		fn("K", "K", "K", Temperature, kToC, cToK, "kelvin"),

		lin("delta_degF", "F", "°F", TempDiff, KelvinPerRankine, "°F", "degF", "deg F", "ΔF", "Δ°F", "delta F", "delta degF", "R", "℉"),
		lin("K", "K", "K", TempDiff, 1, "delta K", "ΔK", "C", "°C", "degC", "deg C", "delta C", "ΔC", "Δ°C", "℃"),

		fn("cfm", "cfm", "cfm", VolumeFlow, CFMToM3s, M3sToCFM, "ft3/min", "ft³/min", "scfm"),
		fn("L/s", "L/s", "L/s", VolumeFlow, LsToM3s, M3sToLs, "lps"),
		lin("m3/s", "m3/s", "m³/s", VolumeFlow, 1, "m³/s"),
		lin("m3/h", "m3/h", "m³/h", VolumeFlow, 1/SecondsPerHour, "m³/h", "cmh"),
		fn("gpm", "gpm", "gpm", VolumeFlow, GPMToM3s, M3sToGPM, "usgpm", "gal/min"),

		lin("W", "W", "W", Power, 1, "watt", "watts"),
		lin("kW", "kW", "kW", Power, 1000),
		fn("MBH", "MBH", "MBH", Power, MBHToW, WToMBH, "MBtu/h", "kBtu/h", "MBtuh"),
		fn("Btu/h", "Btu/h", "Btu/h", Power, BtuhToW, WToBtuh, "btuh", "btu/hr"),

		lin("Pa", "Pa", "Pa", Pressure, 1),
		lin("kPa", "kPa", "kPa", Pressure, 1000),
		lin("bar", "bar", "bar", Pressure, 1e5),
		lin("psi", "psi", "psi", Pressure, PSIToPa(1), "psid", "lbf/in2"),
		lin("inH2O", "in.w.c.", "in. w.c.", Pressure, InWCToPa(1), "inwc", "in.wc", "in w.c.", "in.w.g.", "inwg", "in.wg", "in wg", "in water"),
		lin("ftH2O", "ft", "ft w.c.", Pressure, FtWCToPa(1), "ft.w.c.", "ftwc", "ft.wc", "ft w.c.", "ft head", "ft of head", "ft water"),

		lin("m", "m", "m", Length, 1),
		lin("mm", "mm", "mm", Length, 1e-3),
		lin("cm", "cm", "cm", Length, 1e-2),
		lin("in", "in", "in", Length, InToM(1), "inch", "inches", "\""),
		lin("ft", "ft", "ft", Length, FtToM(1), "feet", "foot"),

		fn("fpi", "fpi", "fpi", FinDensity, FPIToPerM, PerMToFPI, "fins/in", "fin/in"),
		lin("/m", "/m", "/m", FinDensity, 1, "fins/m", "fin/m", "1/m"),

		lin("%", "%", "%", Fraction, 0.01, "percent", "pct"),
		lin("fraction", "fraction", "", Fraction, 1, "frac"),

		lin("on/off", "on/off", "", Binary, 1, "binary", "bool", "boolean", "active/inactive"),

		lin("W/(m.K)", "W/(m.K)", "W/(m·K)", Conductivity, 1, "W/(m·K)", "W/m-K", "W/mK", "W/m.K"),
		// 1 Btu_IT/(h·ft·°F) = 1.730735 W/(m·K) (NIST SP 811, B.9), composed from exact factors.
		lin("Btu/(h.ft.F)", "Btu/(h.ft.F)", "Btu/(h·ft·°F)", Conductivity, JoulePerBtuIT/SecondsPerHour/MetrePerFoot/KelvinPerRankine, "Btu/h-ft-F", "Btu/(h·ft·°F)", "btu/hr-ft-f"),
	}
}

func squash(s string) string {
	return strings.ToLower(strings.Join(strings.Fields(s), ""))
}

// Units is the table of accepted units, indexed by dimension.
type Units struct {
	byDim map[Dimension]map[string]Unit
	names map[Dimension][]string // canonical first spellings for messages
}

// std is built once; it is read-only after construction.
var std = buildUnits()

func buildUnits() *Units {
	u := &Units{byDim: map[Dimension]map[string]Unit{}, names: map[Dimension][]string{}}
	for _, d := range unitTable() {
		m := u.byDim[d.Dim]
		if m == nil {
			m = map[string]Unit{}
			u.byDim[d.Dim] = m
		}
		for _, s := range d.spellings {
			m[squash(s)] = d.Unit
		}
		u.names[d.Dim] = append(u.names[d.Dim], d.show)
	}
	return u
}

// Accepted lists the unit spellings shown in messages for dimension d.
func Accepted(d Dimension) []string { return append([]string(nil), std.names[d]...) }

// LookupUnit finds a unit of dimension d by any accepted spelling.
func LookupUnit(name string, d Dimension) (Unit, bool) {
	u, ok := std.byDim[d][squash(name)]
	return u, ok
}

// ParseUnit finds a unit by any accepted spelling without a known dimension
// (used for point units: "degF", "cfm", "%", "on/off"). Temperatures win over
// temperature differences, lengths over water head, so "F" is °F and "ft" is
// feet; use the dimension-aware LookupUnit when the dimension is known.
func ParseUnit(name string) (Unit, error) {
	for _, d := range []Dimension{Temperature, VolumeFlow, Power, Length, Pressure, FinDensity, Fraction, Binary, Conductivity, TempDiff} {
		if u, ok := LookupUnit(name, d); ok {
			return u, nil
		}
	}
	return Unit{}, fmt.Errorf("unknown unit %q", name)
}

// ParseError says what was wrong with a quantity.
type ParseError struct {
	Input string
	Dim   Dimension
	Msg   string
}

func (e *ParseError) Error() string {
	return fmt.Sprintf("%q: %s; expected a %s with one of the units %s",
		e.Input, e.Msg, e.Dim, strings.Join(Accepted(e.Dim), ", "))
}

// splitNumber splits "180 F" into 180 and "F". The number is a plain decimal
// (sign, digits, point, exponent); thousands separators are rejected.
func splitNumber(s string) (float64, string, bool) {
	s = strings.TrimSpace(s)
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := false
	for i < len(s) && (s[i] >= '0' && s[i] <= '9' || s[i] == '.') {
		if s[i] != '.' {
			digits = true
		}
		i++
	}
	if !digits {
		return 0, "", false
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		j := i + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		if j < len(s) && s[j] >= '0' && s[j] <= '9' {
			for j < len(s) && s[j] >= '0' && s[j] <= '9' {
				j++
			}
			i = j
		}
	}
	v, err := strconv.ParseFloat(s[:i], 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, "", false
	}
	return v, strings.TrimSpace(s[i:]), true
}

// Parse reads a quantity such as "180 F", "82.2 C", "450 cfm", "2.5 gpm",
// "30 MBH", "0.25 in.w.c." or "10 fpi" and returns it in SI (°C, K, m³/s,
// W, Pa, m, fins/m, fraction). The unit is required except for Fraction and
// NoDimension, where a bare number is taken as is.
func Parse(s string, d Dimension) (float64, error) {
	return ParseDefault(s, d, "")
}

// ParseDefault is Parse with a unit assumed when the text has none (e.g.
// "fpi" for a key named fpi). defaultUnit "" means the unit is required.
func ParseDefault(s string, d Dimension, defaultUnit string) (float64, error) {
	v, unit, ok := splitNumber(s)
	if !ok {
		return 0, &ParseError{Input: s, Dim: d, Msg: "not a number followed by a unit"}
	}
	if d == NoDimension {
		if unit != "" {
			return 0, &ParseError{Input: s, Dim: d, Msg: "a plain number has no unit"}
		}
		return v, nil
	}
	if unit == "" {
		switch {
		case defaultUnit != "":
			unit = defaultUnit
		case d == Fraction:
			unit = "fraction"
		default:
			return 0, &ParseError{Input: s, Dim: d, Msg: "missing unit"}
		}
	}
	u, ok := LookupUnit(unit, d)
	if !ok {
		if other, err := ParseUnit(unit); err == nil {
			return 0, &ParseError{Input: s, Dim: d, Msg: fmt.Sprintf("%q is a %s unit", unit, other.Dim)}
		}
		return 0, &ParseError{Input: s, Dim: d, Msg: fmt.Sprintf("unknown unit %q", unit)}
	}
	return u.ToSI(v), nil
}

// FormatSI writes an SI value with its SI unit so that Parse reads back the
// same float64 exactly (shortest round-trip representation).
func FormatSI(si float64, d Dimension) string {
	num := strconv.FormatFloat(si, 'g', -1, 64)
	switch d {
	case Temperature:
		return num + " C"
	case TempDiff:
		return num + " K"
	case VolumeFlow:
		return num + " m3/s"
	case Power:
		return num + " W"
	case Pressure:
		return num + " Pa"
	case Length:
		return num + " m"
	case FinDensity:
		return num + " /m"
	case Conductivity:
		return num + " W/(m.K)"
	}
	return num
}

// FormatExact writes an SI value in whichever accepted unit of d gives the
// shortest text that Parse reads back as exactly the same float64: a value
// entered as "180 F", "14 in" or "10 fpi" and converted to SI is written so
// again, not as "82.22222222222223 C". Each unit is tried with 0-4 decimals;
// a value none of them writes exactly is written as FormatSI writes it, and
// a tie keeps the SI form.
func FormatExact(si float64, d Dimension) string {
	best := FormatSI(si, d)
	if math.IsNaN(si) || math.IsInf(si, 0) {
		return best
	}
	for _, show := range std.names[d] {
		u, ok := LookupUnit(show, d)
		if !ok {
			continue
		}
		v := u.FromSI(si)
		for dec := 0; dec <= 4; dec++ {
			c := strconv.FormatFloat(v, 'f', dec, 64) + " " + show
			if len(c) >= len(best) {
				break
			}
			if back, err := Parse(c, d); err == nil && back == si {
				best = c
				break
			}
		}
	}
	return best
}

// FormatPair writes an SI value in both units with one of the Format
// helpers below, IP first when ipFirst is set and the other in brackets
// ("180.0 °F (82.2 °C)"); a value that is not finite gives unknown. Every
// output's dual-unit text goes through it.
func FormatPair(f func(v float64, ip bool) string, v float64, ipFirst bool, unknown string) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return unknown
	}
	return f(v, ipFirst) + " (" + f(v, !ipFirst) + ")"
}

// Table formatting. Each helper takes the SI value and ip=true for IP units.
// Precision follows what a technician reads off a BAS screen.

// fmtNum formats v with prec decimals; a value that rounds to zero has no
// minus sign ("-0.0" reads as a reading below zero on a BAS screen).
func fmtNum(v float64, prec int) string {
	s := strconv.FormatFloat(v, 'f', prec, 64)
	if len(s) > 1 && s[0] == '-' && strings.Trim(s[1:], "0.") == "" {
		return s[1:]
	}
	return s
}

// FormatTemp formats a temperature (°C inside): "180.0 °F" or "82.2 °C".
func FormatTemp(c float64, ip bool) string {
	if ip {
		return fmtNum(CToF(c), 1) + " °F"
	}
	return fmtNum(c, 1) + " °C"
}

// FormatTempDiff formats a temperature difference (K inside): "20.0 °F" or "11.1 K".
func FormatTempDiff(k float64, ip bool) string {
	if ip {
		return fmtNum(DeltaKToF(k), 1) + " °F"
	}
	return fmtNum(k, 1) + " K"
}

// FormatAirflow formats an airflow (m³/s inside): "450 cfm" or "212.4 L/s".
func FormatAirflow(m3s float64, ip bool) string {
	if ip {
		return fmtNum(M3sToCFM(m3s), 0) + " cfm"
	}
	return fmtNum(M3sToLs(m3s), 1) + " L/s"
}

// FormatWaterFlow formats a water flow (m³/s inside): "2.50 gpm" or "0.158 L/s".
func FormatWaterFlow(m3s float64, ip bool) string {
	if ip {
		return fmtNum(M3sToGPM(m3s), 2) + " gpm"
	}
	return fmtNum(M3sToLs(m3s), 3) + " L/s"
}

// FormatPower formats a heat rate (W inside): "30.0 MBH" or "8.79 kW".
func FormatPower(w float64, ip bool) string {
	if ip {
		return fmtNum(WToMBH(w), 1) + " MBH"
	}
	return fmtNum(w/1000, 2) + " kW"
}

// FormatHeatEnergy formats an amount of heat (kWh inside): "2.7 therm" or
// "79 kWh" (1 therm = 100,000 Btu, KWhPerTherm).
func FormatHeatEnergy(kwh float64, ip bool) string {
	if ip {
		return fmtNum(kwh/KWhPerTherm, 1) + " therm"
	}
	return fmtNum(kwh, 0) + " kWh"
}

// FormatCoolingEnergy formats an amount of cooling (kWh inside): "22.5
// ton-h" or "79 kWh" (1 ton of refrigeration = 12,000 Btu/h, KWhPerTonHour).
func FormatCoolingEnergy(kwh float64, ip bool) string {
	if ip {
		return fmtNum(kwh/KWhPerTonHour, 1) + " ton-h"
	}
	return fmtNum(kwh, 0) + " kWh"
}

// FormatAirDP formats an air-side pressure difference (Pa inside): "0.25 in. w.c." or "62 Pa".
func FormatAirDP(pa float64, ip bool) string {
	if ip {
		return fmtNum(PaToInWC(pa), 2) + " in. w.c."
	}
	return fmtNum(pa, 0) + " Pa"
}

// FormatWaterDP formats a water-side pressure difference (Pa inside): "6.0 ft w.c." or "17.9 kPa".
func FormatWaterDP(pa float64, ip bool) string {
	if ip {
		return fmtNum(PaToFtWC(pa), 1) + " ft w.c."
	}
	return fmtNum(pa/1000, 1) + " kPa"
}

// FormatLength formats a length (m inside): "12.0 in" or "305 mm".
func FormatLength(m float64, ip bool) string {
	if ip {
		return fmtNum(MToIn(m), 1) + " in"
	}
	return fmtNum(m*1000, 0) + " mm"
}

// FormatPercent formats a fraction (0..1 inside) as "42 %".
func FormatPercent(frac float64) string { return fmtNum(frac*100, 0) + " %" }
