// Package units converts between the SI values risewatch uses inside and the IP
// and SI quantities people read and write at every edge (config files, CLI
// tables, e-mails, reports). It is the only place conversions live.
//
// Conversion factors are exact by definition (NIST SP 811, Appendix B) unless
// a comment says otherwise.
package units

import "math"

// Exact conversion factors (NIST Special Publication 811, 2008, Appendix B.8/B.9).
const (
	MetrePerInch       = 0.0254
	MetrePerFoot       = 0.3048
	CubicMetrePerUSGal = 3.785411784e-3
	PascalPerPSI       = 6894.757293168
	JoulePerBtuIT      = 1055.05585262
	SecondsPerMinute   = 60.0
	SecondsPerHour     = 3600.0
	// PascalPerInchWater is 1 in. of water column at 4 °C (NIST SP 811 B.8, "inch of water (39.2 °F)").
	PascalPerInchWater = 249.082
	// PascalPerFootWater is 1 ft of water column at 4 °C (NIST SP 811 B.8, "foot of water (39.2 °F)").
	PascalPerFootWater = 2989.067
	// KelvinPerRankine is the size of one Fahrenheit/Rankine degree in kelvin.
	KelvinPerRankine = 5.0 / 9.0
)

// FToC converts degrees Fahrenheit to degrees Celsius.
func FToC(f float64) float64 { return (f - 32) * KelvinPerRankine }

// CToF converts degrees Celsius to degrees Fahrenheit.
func CToF(c float64) float64 { return c/KelvinPerRankine + 32 }

// DeltaFToK converts a temperature difference in °F to kelvin.
func DeltaFToK(df float64) float64 { return df * KelvinPerRankine }

// DeltaKToF converts a temperature difference in kelvin to °F.
func DeltaKToF(dk float64) float64 { return dk / KelvinPerRankine }

// CFMToM3s converts cubic feet per minute to cubic metres per second.
func CFMToM3s(cfm float64) float64 { return cfm * math.Pow(MetrePerFoot, 3) / SecondsPerMinute }

// M3sToCFM converts cubic metres per second to cubic feet per minute.
func M3sToCFM(m3s float64) float64 { return m3s * SecondsPerMinute / math.Pow(MetrePerFoot, 3) }

// LsToM3s converts litres per second to cubic metres per second.
func LsToM3s(ls float64) float64 { return ls / 1000 }

// M3sToLs converts cubic metres per second to litres per second.
func M3sToLs(m3s float64) float64 { return m3s * 1000 }

// GPMToM3s converts US gallons per minute to cubic metres per second.
func GPMToM3s(gpm float64) float64 { return gpm * CubicMetrePerUSGal / SecondsPerMinute }

// M3sToGPM converts cubic metres per second to US gallons per minute.
func M3sToGPM(m3s float64) float64 { return m3s * SecondsPerMinute / CubicMetrePerUSGal }

// MBHToW converts thousands of Btu (IT) per hour to watts.
func MBHToW(mbh float64) float64 { return mbh * 1000 * JoulePerBtuIT / SecondsPerHour }

// WToMBH converts watts to thousands of Btu (IT) per hour.
func WToMBH(w float64) float64 { return w * SecondsPerHour / JoulePerBtuIT / 1000 }

// BtuhToW converts Btu (IT) per hour to watts.
func BtuhToW(btuh float64) float64 { return btuh * JoulePerBtuIT / SecondsPerHour }

// WToBtuh converts watts to Btu (IT) per hour.
func WToBtuh(w float64) float64 { return w * SecondsPerHour / JoulePerBtuIT }

// InWCToPa converts inches of water column to pascals.
func InWCToPa(in float64) float64 { return in * PascalPerInchWater }

// PaToInWC converts pascals to inches of water column.
func PaToInWC(pa float64) float64 { return pa / PascalPerInchWater }

// FtWCToPa converts feet of water column (head) to pascals.
func FtWCToPa(ft float64) float64 { return ft * PascalPerFootWater }

// PaToFtWC converts pascals to feet of water column (head).
func PaToFtWC(pa float64) float64 { return pa / PascalPerFootWater }

// PSIToPa converts pounds-force per square inch to pascals.
func PSIToPa(psi float64) float64 { return psi * PascalPerPSI }

// PaToPSI converts pascals to pounds-force per square inch.
func PaToPSI(pa float64) float64 { return pa / PascalPerPSI }

// InToM converts inches to metres.
func InToM(in float64) float64 { return in * MetrePerInch }

// MToIn converts metres to inches.
func MToIn(m float64) float64 { return m / MetrePerInch }

// FtToM converts feet to metres.
func FtToM(ft float64) float64 { return ft * MetrePerFoot }

// MToFt converts metres to feet.
func MToFt(m float64) float64 { return m / MetrePerFoot }

// FPIToPerM converts fins per inch to fins per metre.
func FPIToPerM(fpi float64) float64 { return fpi / MetrePerInch }

// PerMToFPI converts fins per metre to fins per inch.
func PerMToFPI(perM float64) float64 { return perM * MetrePerInch }

// FPMToMs converts feet per minute to metres per second.
func FPMToMs(fpm float64) float64 { return fpm * MetrePerFoot / SecondsPerMinute }

// MsToFPM converts metres per second to feet per minute.
func MsToFPM(ms float64) float64 { return ms * SecondsPerMinute / MetrePerFoot }

// CvToKv converts a US valve flow coefficient Cv (gpm at 1 psi, 60 °F water)
// to the metric Kv (m³/h at 1 bar): Kv = 0.865·Cv (IEC 60534-1 / ISA-75.01.01).
func CvToKv(cv float64) float64 {
	return cv * GPMToM3s(1) * SecondsPerHour * math.Sqrt(1e5/PascalPerPSI)
}

// KvToCv converts the metric Kv (m³/h at 1 bar) to the US Cv.
func KvToCv(kv float64) float64 { return kv / CvToKv(1) }

// KWhPerTherm is 100,000 Btu (IT) in kilowatt-hours.
const KWhPerTherm = 1e5 * JoulePerBtuIT / 3.6e6

// KWhPerTonHour is one ton of refrigeration (12,000 Btu/h, NIST SP 811,
// B.8) for an hour, in kilowatt-hours (3.5169).
const KWhPerTonHour = 12000 * JoulePerBtuIT / 3.6e6
