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
