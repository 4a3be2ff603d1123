package assess

import (
	"fmt"
	"math"

	"risewatch/units"
)

// unitSys formats quantities in IP (°F, MBH, gpm, ft of water, in. w.c.,
// cfm) or SI (°C, kW, L/s, kPa, Pa, L/s) through package units. Values are
// numbers only; the unit goes in the column header.
type unitSys struct{ ip bool }

func ident(v float64) float64 { return v }

// num formats v converted by ip or si with the matching precision; a NaN
// prints as a dash when dashNaN is set.
func (u unitSys) num(v float64, dashNaN bool, ip func(float64) float64, ipPrec int, si func(float64) float64, siPrec int) string {
	if dashNaN && math.IsNaN(v) {
		return "—"
	}
	if u.ip {
		return fmt.Sprintf("%.*f", ipPrec, ip(v))
	}
	return fmt.Sprintf("%.*f", siPrec, si(v))
}

func (u unitSys) unit(ip, si string) string {
	if u.ip {
		return ip
	}
	return si
}

func kilo(v float64) float64 { return v / 1000 }

func (u unitSys) temp(c float64) string  { return u.num(c, true, units.CToF, 1, ident, 1) }
func (u unitSys) delta(k float64) string { return u.num(k, true, units.DeltaKToF, 1, ident, 1) }
func (u unitSys) heat(w float64) string  { return u.num(w, true, units.WToMBH, 1, kilo, 2) }
func (u unitSys) water(m3s float64) string {
	return u.num(m3s, true, units.M3sToGPM, 2, units.M3sToLs, 3)
}
func (u unitSys) air(m3s float64) string {
	return u.num(m3s, false, units.M3sToCFM, 0, units.M3sToLs, 0)
}
func (u unitSys) waterDP(pa float64) string { return u.num(pa, true, units.PaToFtWC, 1, kilo, 1) }
func (u unitSys) airDP(pa float64) string   { return u.num(pa, false, units.PaToInWC, 3, ident, 0) }

func (u unitSys) tempUnit() string    { return u.unit("°F", "°C") }
func (u unitSys) deltaUnit() string   { return u.unit("°F", "K") }
func (u unitSys) heatUnit() string    { return u.unit("MBH", "kW") }
func (u unitSys) waterUnit() string   { return u.unit("gpm", "L/s") }
func (u unitSys) airUnit() string     { return u.unit("cfm", "L/s") }
func (u unitSys) waterDPUnit() string { return u.unit("ft w.c.", "kPa") }
func (u unitSys) airDPUnit() string   { return u.unit("in. w.c.", "Pa") }

func pct(f float64) string {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "—"
	}
	return fmt.Sprintf("%+.0f %%", 100*f)
}

// remedyOrder ranks the options from least to most work for "best option":
// a controls change first, then coil changes in the same box, then a new
// box or coil.
var remedyOrder = []string{RemedyAirflow, RemedyFins, RemedyCircuits, RemedyRows, RemedyFace, RemedyRedesign}

// BestRemedy returns the least intrusive option that meets the load, or nil.
func (r *Result) BestRemedy() *Remedy {
	for _, k := range remedyOrder {
		for i := range r.Remedies {
			if m := &r.Remedies[i]; m.Kind == k && m.Met && m.CapacityW > 0 {
				return m
			}
		}
	}
	return nil
}
