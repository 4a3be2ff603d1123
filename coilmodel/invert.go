package coilmodel

import (
	"errors"
	"fmt"
	"math"
)

// Inversions for the detector: from an observed leaving air temperature at
// known flows, the apparent UA multiplier or, separately, the apparent water
// flow. Both are bracketed (Brent's method on the logarithm of the unknown),
// so they always terminate, and both return an error wrapping
// ErrNotIdentifiable when the observation is outside what the coil can do.

// minDrivingK is the smallest EWT − EAT for which a rise carries information.
const minDrivingK = 0.5

// maxInvertWaterM3s bounds the water-flow search (about 16 000 gpm).
const maxInvertWaterM3s = 1.0

// InvertUA finds the UA multiplier (absolute, in the sense of
// Coil.UAMultiplier) that makes coil c produce observedLeavingAirC at op.
// Divide by c.UAMultiplier for the fraction of the calibrated UA.
func InvertUA(c Coil, op Operating, observedLeavingAirC float64) (float64, error) {
	k, err := NewCalibrated(c)
	if err != nil {
		return 0, err
	}
	return k.InvertUA(op, observedLeavingAirC)
}

// InvertWaterFlow finds the water flow (m³/s) that makes coil c, with its UA
// multiplier, produce observedLeavingAirC at op (op.WaterFlowM3s is ignored
// except as a starting scale).
func InvertWaterFlow(c Coil, op Operating, observedLeavingAirC float64) (float64, error) {
	k, err := NewCalibrated(c)
	if err != nil {
		return 0, err
	}
	return k.InvertWaterFlow(op, observedLeavingAirC)
}

func checkObservation(op Operating, observedLeavingAirC float64) (rise, dt float64, err error) {
	if err := op.Validate(); err != nil {
		return 0, 0, fmt.Errorf("operating point: %w", err)
	}
	if math.IsNaN(observedLeavingAirC) || math.IsInf(observedLeavingAirC, 0) {
		return 0, 0, fmt.Errorf("observed leaving air %g °C is not a number", observedLeavingAirC)
	}
	dt = op.EnteringWaterC - op.EnteringAirC
	rise = observedLeavingAirC - op.EnteringAirC
	if dt < minDrivingK {
		return 0, 0, fmt.Errorf("%w: entering water %.2f °C is not above entering air %.2f °C by %.1f K",
			ErrNotIdentifiable, op.EnteringWaterC, op.EnteringAirC, minDrivingK)
	}
	if !(op.AirflowM3s > 0) {
		return 0, 0, fmt.Errorf("%w: no airflow", ErrNotIdentifiable)
	}
	if rise <= 0 {
		return 0, 0, fmt.Errorf("%w: observed rise %.2f K is not positive", ErrNotIdentifiable, rise)
	}
	if rise >= dt {
		return 0, 0, fmt.Errorf("%w: observed leaving air %.2f °C is at or above the entering water %.2f °C",
			ErrNotIdentifiable, observedLeavingAirC, op.EnteringWaterC)
	}
	return rise, dt, nil
}

// InvertUA is InvertUA on the precomputed coil.
func (k *Calibrated) InvertUA(op Operating, observedLeavingAirC float64) (float64, error) {
	rise, _, err := checkObservation(op, observedLeavingAirC)
	if err != nil {
		return 0, err
	}
	if !(op.WaterFlowM3s > 0) {
		return 0, fmt.Errorf("%w: no water flow", ErrNotIdentifiable)
	}
	f := toFlows(op, 1)
	riseAt := func(mult float64) float64 {
		var st state
		k.m.eval(f, mult, &st)
		return st.rise
	}
	mult, err := solveLogMonotone(func(x float64) float64 { return riseAt(x)/rise - 1 }, minUAMult, maxUAMult)
	switch {
	case errors.Is(err, errAbove):
		return 0, fmt.Errorf("%w: observed rise %.2f K exceeds the %.2f K this coil gives even with unlimited UA at %.3g m³/s water (water-limited maximum)",
			ErrNotIdentifiable, rise, riseAt(maxUAMult), op.WaterFlowM3s)
	case errors.Is(err, errBelow):
		return 0, fmt.Errorf("%w: observed rise %.3f K is below what %.0e of the UA gives", ErrNotIdentifiable, rise, minUAMult)
	case err != nil:
		return 0, err
	}
	return mult, nil
}

// InvertWaterFlow is InvertWaterFlow on the precomputed coil.
func (k *Calibrated) InvertWaterFlow(op Operating, observedLeavingAirC float64) (float64, error) {
	rise, _, err := checkObservation(op, observedLeavingAirC)
	if err != nil {
		return 0, err
	}
	riseAt := func(q float64) float64 {
		o := op
		o.WaterFlowM3s = q
		var st state
		k.m.eval(toFlows(o, 1), k.m.uaMult, &st)
		return st.rise
	}
	g := func(q float64) float64 { return riseAt(q)/rise - 1 }
	lo := 1e-9
	hi := math.Max(op.WaterFlowM3s, 1e-5) * 4
	for g(hi) < 0 && hi < maxInvertWaterM3s {
		hi = math.Min(hi*8, maxInvertWaterM3s)
	}
	q, err := solveLogMonotone(g, lo, hi)
	switch {
	case errors.Is(err, errAbove):
		return 0, fmt.Errorf("%w: observed rise %.2f K exceeds the %.2f K this coil gives at any water flow (air-side limited)",
			ErrNotIdentifiable, rise, riseAt(hi))
	case errors.Is(err, errBelow):
		return 0, fmt.Errorf("%w: observed rise %.3f K is below what %.0e m³/s of water gives", ErrNotIdentifiable, rise, lo)
	case err != nil:
		return 0, err
	}
	return q, nil
}
