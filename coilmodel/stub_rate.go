package coilmodel

import "errors"

// STUB (lead): replaced by the coilmodel owner.

var errUnimplemented = errors.New("coilmodel: not implemented yet")

// Rate rates coil c at operating point op.
func Rate(c Coil, op Operating) (Rating, error) { return Rating{}, errUnimplemented }

// Calibrated holds a coil with its UA parts precomputed; ExpectedRise is the
// detector's hot path.
type Calibrated struct{ c Coil }

// NewCalibrated precomputes what ExpectedRise needs.
func NewCalibrated(c Coil) (*Calibrated, error) { return nil, errUnimplemented }

// ExpectedRise is the air temperature rise (K) at op.
func (k *Calibrated) ExpectedRise(op Operating) float64 { return 0 }

// Calibrate fits c.UAMultiplier so Rate reproduces the rated capacity.
func Calibrate(c Coil, rp RatedPoint) (Coil, CalibrationReport, error) {
	return c, CalibrationReport{}, errUnimplemented
}

// CalibrationReport says how far the geometry model was from the rating.
type CalibrationReport struct {
	ModelCapacityW, RatedCapacityW, UAMultiplier float64
}

// InvertUA finds the UA multiplier that makes the coil produce observedLeavingAirC at op.
func InvertUA(c Coil, op Operating, observedLeavingAirC float64) (float64, error) {
	return 0, errUnimplemented
}

// InvertWaterFlow finds the water flow (m³/s) that makes the coil produce observedLeavingAirC at op.
func InvertWaterFlow(c Coil, op Operating, observedLeavingAirC float64) (float64, error) {
	return 0, errUnimplemented
}

// Preset returns common-practice coil geometry for a VAV box by inlet diameter (in).
func Preset(inletIn float64, rows int, fpi float64, oversized bool) (Coil, error) {
	return Coil{}, errUnimplemented
}

// FlowM3s is the water flow through the valve at command cmdFrac (0..1) and
// valve differential pressure dpPa.
func (v Valve) FlowM3s(cmdFrac, dpPa, densityKgM3 float64) float64 { return 0 }

// InstalledFlowM3s is the water flow at command cmdFrac with the valve and coil
// in series across a branch differential pressure branchDPPa.
func InstalledFlowM3s(v Valve, c Coil, cmdFrac, branchDPPa, waterC float64) (float64, error) {
	return 0, errUnimplemented
}

// WaterDensity is liquid water density (kg/m³) at tC.
func WaterDensity(tC float64) float64 { return 0 }

// WaterCp is liquid water isobaric specific heat (J/(kg·K)) at tC.
func WaterCp(tC float64) float64 { return 0 }
