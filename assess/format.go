package assess

import (
	"fmt"
	"math"

	"risewatch/units"
)

// unitSys formats quantities in IP (°F, MBH, gpm, ft of water, in. w.c.,
// cfm) or SI (°C, kW, L/s, kPa, Pa, L/s) through package units.
type unitSys struct{ ip bool }

func (u unitSys) temp(c float64) string {
	if math.IsNaN(c) {
		return "—"
	}
	if u.ip {
		return fmt.Sprintf("%.1f", units.CToF(c))
	}
	return fmt.Sprintf("%.1f", c)
}

func (u unitSys) tempUnit() string {
	if u.ip {
		return "°F"
	}
	return "°C"
}

func (u unitSys) delta(k float64) string {
	if math.IsNaN(k) {
		return "—"
	}
	if u.ip {
		return fmt.Sprintf("%.1f", units.DeltaKToF(k))
	}
	return fmt.Sprintf("%.1f", k)
}

func (u unitSys) deltaUnit() string {
	if u.ip {
		return "°F"
	}
	return "K"
}

func (u unitSys) heat(w float64) string {
	if math.IsNaN(w) {
		return "—"
	}
	if u.ip {
		return fmt.Sprintf("%.1f", units.WToMBH(w))
	}
	return fmt.Sprintf("%.2f", w/1000)
}

func (u unitSys) heatUnit() string {
	if u.ip {
		return "MBH"
	}
	return "kW"
}

func (u unitSys) water(m3s float64) string {
	if math.IsNaN(m3s) {
		return "—"
	}
	if u.ip {
		return fmt.Sprintf("%.2f", units.M3sToGPM(m3s))
	}
	return fmt.Sprintf("%.3f", units.M3sToLs(m3s))
}

func (u unitSys) waterUnit() string {
	if u.ip {
		return "gpm"
	}
	return "L/s"
}

func (u unitSys) air(m3s float64) string {
	if u.ip {
		return fmt.Sprintf("%.0f", units.M3sToCFM(m3s))
	}
	return fmt.Sprintf("%.0f", units.M3sToLs(m3s))
}

func (u unitSys) airUnit() string {
	if u.ip {
		return "cfm"
	}
	return "L/s"
}

func (u unitSys) waterDP(pa float64) string {
	if math.IsNaN(pa) {
		return "—"
	}
	if u.ip {
		return fmt.Sprintf("%.1f", units.PaToFtWC(pa))
	}
	return fmt.Sprintf("%.1f", pa/1000)
}

func (u unitSys) waterDPUnit() string {
	if u.ip {
		return "ft w.c."
	}
	return "kPa"
}

func (u unitSys) airDP(pa float64) string {
	if u.ip {
		return fmt.Sprintf("%.3f", units.PaToInWC(pa))
	}
	return fmt.Sprintf("%.0f", pa)
}

func (u unitSys) airDPUnit() string {
	if u.ip {
		return "in. w.c."
	}
	return "Pa"
}

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
