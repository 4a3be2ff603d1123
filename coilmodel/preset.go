package coilmodel

import (
	"fmt"
	"math"

	"risewatch/units"
)

// Common-practice reheat-coil geometry for single-duct VAV terminals. The
// discharge sizes are typical of the trade (a 12 in inlet box has a discharge
// of about 15 × 15 in; the next, "oversized" cabinet about 17 × 16 in), not
// any one maker's catalogue. Use the submittal geometry when it is known.

// presetFace is the discharge (coil face) of one inlet size, inches.
type presetFace struct {
	inletIn        float64
	widthIn        float64 // finned length
	tubesPerRow    int     // face height = tubes × 1.25 in
	circuits       int
	maxAirflowCFM  float64 // typical box maximum at about 1 in. w.g. inlet ΔP (common practice)
	oversizeWidth  float64
	oversizeTubes  int
	oversizeCircts int
}

// presetTable: common practice (typical single-duct VAV discharge sizes).
var presetTable = [...]presetFace{
	{6, 10, 6, 1, 400, 12, 7, 1},
	{7, 12, 6, 1, 550, 14, 7, 1},
	{8, 12, 8, 1, 700, 14, 9, 1},
	{9, 14, 8, 1, 900, 16, 9, 1},
	{10, 14, 10, 1, 1100, 16, 11, 1},
	{12, 15, 12, 1, 1600, 17, 13, 1},
	{14, 20, 12, 2, 2100, 22, 14, 2},
	{16, 24, 14, 2, 2800, 26, 16, 2},
}

// Common-practice tube and fin data used by Preset: 1/2 in OD copper tube with
// 0.016 in wall on 1.25 in × 1.083 in staggered pitches, 0.0045 in aluminium
// plate fins.
const (
	presetTubeOD   = 0.5 * units.MetrePerInch
	presetTubeWall = 0.016 * units.MetrePerInch
	presetPt       = 1.25 * units.MetrePerInch
	presetPl       = 0.0275 // 1.083 in
	presetFinThk   = 0.0045 * units.MetrePerInch
)

// PresetInlets lists the inlet diameters (in) Preset knows.
func PresetInlets() []float64 {
	out := make([]float64, len(presetTable))
	for i, p := range presetTable {
		out[i] = p.inletIn
	}
	return out
}

func presetFor(inletIn float64) (presetFace, error) {
	for _, p := range presetTable {
		if math.Abs(p.inletIn-inletIn) < 0.01 {
			return p, nil
		}
	}
	return presetFace{}, fmt.Errorf("%w: no preset for a %g in inlet (have %v in)", ErrBadGeometry, inletIn, PresetInlets())
}

// Preset returns common-practice coil geometry for a VAV box by inlet diameter
// (6, 7, 8, 9, 10, 12, 14 or 16 in), with rows (1-4) and fins per inch
// (0 → 10). oversized selects the next larger cabinet (about 2 in wider and
// one tube taller, e.g. 17 × 16.25 in for a 12 in inlet instead of 15 × 15 in).
// Geometry is common practice, not a maker's data.
func Preset(inletIn float64, rows int, fpi float64, oversized bool) (Coil, error) {
	p, err := presetFor(inletIn)
	if err != nil {
		return Coil{}, err
	}
	if fpi == 0 {
		fpi = 10
	}
	w, tubes, circuits := p.widthIn, p.tubesPerRow, p.circuits
	if oversized {
		w, tubes, circuits = p.oversizeWidth, p.oversizeTubes, p.oversizeCircts
	}
	c := Coil{
		FaceWidthM:         w * units.MetrePerInch,
		FaceHeightM:        float64(tubes) * presetPt,
		Rows:               rows,
		Circuits:           circuits,
		TubesPerRow:        tubes,
		Tube:               Tube{OuterDiaM: presetTubeOD, WallM: presetTubeWall, ConductivityWmK: DefaultTubeConductivity},
		Fin:                Fin{PerM: units.FPIToPerM(fpi), ThicknessM: presetFinThk, ConductivityWmK: DefaultAluminiumFinConductivity, Material: "aluminum"},
		TransversePitchM:   presetPt,
		LongitudinalPitchM: presetPl,
		Layout:             Staggered,
	}
	if err := c.Validate(); err != nil {
		return Coil{}, fmt.Errorf("preset %g in, %d rows, %g FPI: %w", inletIn, rows, fpi, err)
	}
	return c, nil
}

// PresetMaxAirflowM3s is the typical maximum airflow of a box with this inlet
// (common practice, about 1 in. w.g. inlet pressure), in m³/s.
func PresetMaxAirflowM3s(inletIn float64) (float64, error) {
	p, err := presetFor(inletIn)
	if err != nil {
		return 0, err
	}
	return units.CFMToM3s(p.maxAirflowCFM), nil
}
