package assess

import (
	"fmt"
	"strings"

	"risewatch/units"
)

// LoadBasis says which heating load a terminal is checked against.
type LoadBasis int

// Load bases.
const (
	// LoadAuto uses the design load from the site file when it is given and
	// the history estimate at the design outdoor temperature otherwise.
	LoadAuto LoadBasis = iota
	// LoadDesign uses only the site file's design load.
	LoadDesign
	// LoadHistory uses only the history estimate.
	LoadHistory
	// LoadLarger uses the larger of the two (the history estimate's upper
	// 95 % bound counts, so an uncertain estimate errs on the safe side).
	LoadLarger
)

// String returns the basis name used by the command line and JSON.
func (b LoadBasis) String() string {
	switch b {
	case LoadDesign:
		return "design"
	case LoadHistory:
		return "history"
	case LoadLarger:
		return "larger"
	}
	return "auto"
}

// MarshalText writes the basis name.
func (b LoadBasis) MarshalText() ([]byte, error) { return []byte(b.String()), nil }

// ParseLoadBasis reads "auto", "design", "history" or "larger".
func ParseLoadBasis(s string) (LoadBasis, error) {
	for _, b := range []LoadBasis{LoadAuto, LoadDesign, LoadHistory, LoadLarger} {
		if strings.EqualFold(s, b.String()) {
			return b, nil
		}
	}
	return 0, fmt.Errorf("load basis %q: want auto, design, history or larger", s)
}

// Conditions is one candidate operating state of the loops.
type Conditions struct {
	SupplyC float64 // candidate hot-water supply temperature, °C
	// DeltaK is the loop supply–return difference the plant plans for; 0
	// keeps each loop's design value. It sets the "plan" flow a terminal is
	// entitled to (load / (ρ·cp·ΔT)); a coil that needs more runs the loop
	// at a lower ΔT than planned.
	DeltaK float64
	// BranchDPPa is the differential pressure available across valve and
	// coil; 0 keeps each loop's design value.
	BranchDPPa float64
}

// Options tune the assessment. The zero value uses the defaults noted.
type Options struct {
	// EnteringAirC is the design air temperature entering the coil when the
	// history gives none; nil → 55 °F supply air plus the AHU's duct gain
	// (a common cold-weather supply-air setpoint; common practice).
	EnteringAirC *float64
	// ZoneC is the zone heating setpoint the airflow option heats extra air
	// to when history gives none; nil → 70 °F (common practice).
	ZoneC *float64
	// HumidityRatio of the supply air, kg/kg; 0 → 0.003 (winter supply air,
	// common practice). It changes cp by under 1 %.
	HumidityRatio float64
	// Load selects the load a terminal is checked against.
	Load LoadBasis
	// RedesignDeltaK is the water ΔT of the low-temperature redesign option;
	// 0 → 30 °F (a low return temperature keeps condensing boilers
	// condensing; common practice).
	RedesignDeltaK float64
	// SummaryC are the supply temperatures of the loop summary; nil → 140,
	// 130, 120 and 110 °F.
	SummaryC []float64
	// CurveC are the supply temperatures of the plot curve; nil → 90 °F to
	// 180 °F in 2 °F steps.
	CurveC []float64
	// NoRemedies skips the options for coils that fall short (faster).
	NoRemedies bool
}

func (o Options) withDefaults() Options {
	if o.HumidityRatio == 0 {
		o.HumidityRatio = 0.003
	}
	if o.RedesignDeltaK == 0 {
		o.RedesignDeltaK = units.DeltaFToK(30)
	}
	if o.SummaryC == nil {
		for _, f := range []float64{140, 130, 120, 110} {
			o.SummaryC = append(o.SummaryC, units.FToC(f))
		}
	}
	if o.CurveC == nil {
		for f := 90.0; f <= 180; f += 2 {
			o.CurveC = append(o.CurveC, units.FToC(f))
		}
	}
	return o
}

// defaultSupplyAirF is the cold-weather supply-air temperature assumed
// without history (common practice).
const defaultSupplyAirF = 55.0

// defaultZoneF is the zone heating setpoint assumed without history (common
// practice).
const defaultZoneF = 70.0
