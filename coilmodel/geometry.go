package coilmodel

import (
	"errors"
	"fmt"
	"math"
)

// Defaults applied when a field is zero (see Coil).
const (
	// DefaultReturnBendK is the minor-loss coefficient of one 180° return bend:
	// Crane TP-410 K90 = 14·fT at r/d = 1.5, K = (n − 1)(0.25·π·fT·r/d + 0.5·K90) + K90
	// with n = 2 and fT ≈ 0.027 gives ≈ 0.6.
	DefaultReturnBendK = 0.6
	// DefaultTubeConductivity is copper (W/(m·K)).
	DefaultTubeConductivity = 390.0
	// DefaultAluminiumFinConductivity is aluminium 1100-O (W/(m·K)).
	DefaultAluminiumFinConductivity = 220.0
	// DefaultCopperFinConductivity is copper fin stock (W/(m·K)).
	DefaultCopperFinConductivity = 390.0
	// MaxRows is the largest row count the closed-form effectiveness relations cover.
	MaxRows = 4
)

// String names the layout.
func (l TubeLayout) String() string {
	switch l {
	case Staggered:
		return "staggered"
	case Inline:
		return "inline"
	}
	return fmt.Sprintf("TubeLayout(%d)", int(l))
}

// String names the flow regime.
func (r Regime) String() string {
	switch r {
	case Laminar:
		return "laminar"
	case Transitional:
		return "transitional"
	case Turbulent:
		return "turbulent"
	}
	return fmt.Sprintf("Regime(%d)", int(r))
}

// TubesPerRowEff is TubesPerRow, or FaceHeightM/TransversePitchM rounded when
// TubesPerRow is 0.
func (c Coil) TubesPerRowEff() int {
	if c.TubesPerRow > 0 {
		return c.TubesPerRow
	}
	if !(c.TransversePitchM > 0) || !(c.FaceHeightM > 0) {
		return 0
	}
	n := math.Round(c.FaceHeightM / c.TransversePitchM)
	if n > 1e6 {
		return 0
	}
	return int(n)
}

// FaceAreaM2 is the coil face area, width × height.
func (c Coil) FaceAreaM2() float64 { return c.FaceWidthM * c.FaceHeightM }

// CollarDiaM is the fin-collar outside diameter Dc = Do + 2·δf (Wang et al. 2000).
func (c Coil) CollarDiaM() float64 { return c.Tube.OuterDiaM + 2*c.Fin.ThicknessM }

// InnerDiaM is the tube inside diameter.
func (c Coil) InnerDiaM() float64 { return c.Tube.OuterDiaM - 2*c.Tube.WallM }

func (c Coil) returnBendK() float64 {
	if c.ReturnBendK > 0 {
		return c.ReturnBendK
	}
	return DefaultReturnBendK
}

func (c Coil) tubeK() float64 {
	if c.Tube.ConductivityWmK > 0 {
		return c.Tube.ConductivityWmK
	}
	return DefaultTubeConductivity
}

func (c Coil) finK() float64 {
	if c.Fin.ConductivityWmK > 0 {
		return c.Fin.ConductivityWmK
	}
	if c.Fin.Material == "copper" {
		return DefaultCopperFinConductivity
	}
	return DefaultAluminiumFinConductivity
}

func (c Coil) uaMult() float64 {
	if c.UAMultiplier > 0 {
		return c.UAMultiplier
	}
	return 1
}

// inRange reports whether x is a finite number in [lo, hi].
func inRange(x, lo, hi float64) bool { return x >= lo && x <= hi }

// Validate checks the geometry and returns every problem found, each wrapping
// ErrBadGeometry. Zero ReturnBendK, tube and fin conductivities and
// UAMultiplier take their documented defaults; everything else must be given.
func (c Coil) Validate() error {
	var errs []error
	bad := func(format string, a ...any) {
		errs = append(errs, fmt.Errorf("%w: "+format, append([]any{ErrBadGeometry}, a...)...))
	}
	if !inRange(c.FaceWidthM, 0.02, 5) || c.FaceWidthM == 0 {
		bad("face width %g m: must be between 0.02 and 5 m", c.FaceWidthM)
	}
	if !inRange(c.FaceHeightM, 0.005, 5) {
		bad("face height %g m: must be between 0.005 and 5 m", c.FaceHeightM)
	}
	if c.Rows < 1 || c.Rows > MaxRows {
		bad("rows %d: must be 1 to %d", c.Rows, MaxRows)
	}
	if !inRange(c.Tube.OuterDiaM, 0.003, 0.04) {
		bad("tube outside diameter %g m: must be between 3 and 40 mm", c.Tube.OuterDiaM)
	}
	if !(c.Tube.WallM > 0) || !(c.Tube.WallM < 0.3*c.Tube.OuterDiaM) {
		bad("tube wall %g m: must be positive and less than 30 %% of the outside diameter", c.Tube.WallM)
	}
	if !inRange(c.Fin.PerM, 1, 2000) {
		bad("fin density %g fins/m (%.3g FPI): must be between 1 and 2000 fins/m", c.Fin.PerM, c.Fin.PerM*0.0254)
	}
	if !inRange(c.Fin.ThicknessM, 1e-5, 2e-3) {
		bad("fin thickness %g m: must be between 0.01 and 2 mm", c.Fin.ThicknessM)
	} else if c.Fin.PerM > 0 && c.Fin.ThicknessM >= 0.9/c.Fin.PerM {
		bad("fin thickness %g m leaves no gap at %g fins/m", c.Fin.ThicknessM, c.Fin.PerM)
	}
	if c.Tube.ConductivityWmK != 0 && !inRange(c.Tube.ConductivityWmK, 1, 1000) {
		bad("tube conductivity %g W/(m·K): must be between 1 and 1000", c.Tube.ConductivityWmK)
	}
	if c.Fin.ConductivityWmK != 0 && !inRange(c.Fin.ConductivityWmK, 1, 1000) {
		bad("fin conductivity %g W/(m·K): must be between 1 and 1000", c.Fin.ConductivityWmK)
	}
	dc := c.CollarDiaM()
	if !inRange(c.TransversePitchM, 0.003, 0.2) || !(c.TransversePitchM > dc) {
		bad("transverse pitch %g m: must exceed the fin-collar diameter %g m (and be under 0.2 m)", c.TransversePitchM, dc)
	}
	if !inRange(c.LongitudinalPitchM, 0.002, 0.2) {
		bad("longitudinal pitch %g m: must be between 2 mm and 0.2 m", c.LongitudinalPitchM)
	} else if c.Layout == Inline && !(c.LongitudinalPitchM > dc) {
		bad("longitudinal pitch %g m: inline tubes overlap (collar diameter %g m)", c.LongitudinalPitchM, dc)
	} else if c.Layout == Staggered && !(diagonalPitch(c) > dc) {
		bad("longitudinal pitch %g m: staggered tubes overlap on the diagonal (collar diameter %g m)", c.LongitudinalPitchM, dc)
	}
	if c.Layout != Staggered && c.Layout != Inline {
		bad("tube layout %d unknown", int(c.Layout))
	}
	tpr := c.TubesPerRowEff()
	if c.TubesPerRow < 0 {
		bad("tubes per row %d: must not be negative", c.TubesPerRow)
	} else if tpr < 1 || tpr > 500 {
		bad("tubes per row %d (face height / transverse pitch): must be 1 to 500", tpr)
	}
	if c.Circuits < 1 || (tpr >= 1 && c.Circuits > tpr) {
		bad("circuits %d: must be 1 to the tubes per row (%d)", c.Circuits, tpr)
	}
	if !inRange(c.ReturnBendK, 0, 50) {
		bad("return-bend loss coefficient %g: must be 0 (default) to 50", c.ReturnBendK)
	}
	if !inRange(c.FoulingAirM2KW, 0, 0.1) {
		bad("air-side fouling %g m²·K/W: must be 0 to 0.1", c.FoulingAirM2KW)
	}
	if !inRange(c.FoulingWaterM2KW, 0, 0.1) {
		bad("water-side fouling %g m²·K/W: must be 0 to 0.1", c.FoulingWaterM2KW)
	}
	if !inRange(c.UAMultiplier, 0, 1000) {
		bad("UA multiplier %g: must be 0 (meaning 1) to 1000", c.UAMultiplier)
	}
	return errors.Join(errs...)
}

// Validate checks an operating point: flows finite and not negative, air
// −60 to 100 °C, water 0.5 to 120 °C (the range of the property correlations).
func (op Operating) Validate() error {
	var errs []error
	bad := func(format string, a ...any) { errs = append(errs, fmt.Errorf(format, a...)) }
	if !inRange(op.AirflowM3s, 0, 100) {
		bad("airflow %g m³/s: must be 0 to 100", op.AirflowM3s)
	}
	if op.AirDensityKgM3 != 0 && !inRange(op.AirDensityKgM3, 0.3, 2) {
		bad("air density %g kg/m³: must be 0 (standard air) or 0.3 to 2", op.AirDensityKgM3)
	}
	if !inRange(op.HumidityRatio, 0, 0.05) {
		bad("humidity ratio %g: must be 0 to 0.05", op.HumidityRatio)
	}
	if !inRange(op.EnteringAirC, -60, 100) {
		bad("entering air %g °C: must be −60 to 100 °C", op.EnteringAirC)
	}
	if !inRange(op.WaterFlowM3s, 0, 1) {
		bad("water flow %g m³/s: must be 0 to 1", op.WaterFlowM3s)
	}
	if !inRange(op.EnteringWaterC, 0.5, 120) {
		bad("entering water %g °C: must be 0.5 to 120 °C", op.EnteringWaterC)
	}
	return errors.Join(errs...)
}

func (op Operating) airDensity() float64 {
	if op.AirDensityKgM3 > 0 {
		return op.AirDensityKgM3
	}
	return StandardAirDensity
}

func badGeometry(format string, a ...any) error {
	return fmt.Errorf("%w: "+format, append([]any{ErrBadGeometry}, a...)...)
}

// MarshalText writes the regime name (JSON output).
func (r Regime) MarshalText() ([]byte, error) { return []byte(r.String()), nil }

// MarshalText writes the extrapolation flags (JSON output).
func (e Extrapolation) MarshalText() ([]byte, error) { return []byte(e.String()), nil }
