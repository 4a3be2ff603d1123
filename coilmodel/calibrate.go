package coilmodel

import (
	"fmt"
	"math"
)

// Calibration bounds on the UA multiplier.
const (
	minUAMult = 1e-4
	maxUAMult = 1e4
)

// CalibrationReport says how far the geometry model was from the rating.
type CalibrationReport struct {
	ModelCapacityW   float64 // geometry model (UA multiplier 1) at the rated point
	RatedCapacityW   float64
	UAMultiplier     float64 // fitted multiplier that reproduces RatedCapacityW
	DeviationFrac    float64 // ModelCapacityW/RatedCapacityW − 1
	ModelUAWK        float64 // geometry UA at the rated point (multiplier 1)
	RatedLeavingAirC float64 // leaving air implied by the rated capacity
}

// Validate checks a rated point.
func (rp RatedPoint) Validate() error {
	op := rp.operating()
	if err := op.Validate(); err != nil {
		return fmt.Errorf("rated point: %w", err)
	}
	if !(rp.CapacityW > 0) || math.IsInf(rp.CapacityW, 0) {
		return fmt.Errorf("rated point: capacity %g W must be positive", rp.CapacityW)
	}
	if !(rp.AirflowM3s > 0) || !(rp.WaterFlowM3s > 0) {
		return fmt.Errorf("rated point: airflow %g m³/s and water flow %g m³/s must be positive", rp.AirflowM3s, rp.WaterFlowM3s)
	}
	if !(rp.EnteringWaterC > rp.EnteringAirC+1) {
		return fmt.Errorf("rated point: entering water %g °C must exceed entering air %g °C", rp.EnteringWaterC, rp.EnteringAirC)
	}
	return nil
}

func (rp RatedPoint) operating() Operating {
	return Operating{
		AirflowM3s: rp.AirflowM3s, AirDensityKgM3: StandardAirDensity, EnteringAirC: rp.EnteringAirC,
		WaterFlowM3s: rp.WaterFlowM3s, EnteringWaterC: rp.EnteringWaterC,
	}
}

// Calibrate fits c.UAMultiplier so Rate reproduces the rated capacity at the
// rated flows and temperatures (standard air), by Brent's method on the
// logarithm of the multiplier in [1e−4, 1e4]. A rated capacity beyond what
// the coil could give with unlimited UA returns an error wrapping
// ErrNotIdentifiable. The returned coil carries the fitted multiplier.
func Calibrate(c Coil, rp RatedPoint) (Coil, CalibrationReport, error) {
	m, err := newModel(c)
	if err != nil {
		return c, CalibrationReport{}, err
	}
	if err := rp.Validate(); err != nil {
		return c, CalibrationReport{}, err
	}
	f := toFlows(rp.operating(), 1)
	capAt := func(mult float64) float64 {
		var st state
		m.eval(f, mult, &st)
		return st.capW
	}
	var st state
	m.eval(f, 1, &st)
	rep := CalibrationReport{
		ModelCapacityW: st.capW, RatedCapacityW: rp.CapacityW,
		DeviationFrac: st.capW/rp.CapacityW - 1, ModelUAWK: st.ua,
		RatedLeavingAirC: rp.EnteringAirC + rp.CapacityW/st.cAir,
	}
	mult, err := solveLogMonotone(func(x float64) float64 { return capAt(x)/rp.CapacityW - 1 }, minUAMult, maxUAMult)
	if err != nil {
		return c, rep, fmt.Errorf("calibrate: rated %.0f W against model %.0f W: %w", rp.CapacityW, st.capW, err)
	}
	rep.UAMultiplier = mult
	c.UAMultiplier = mult
	return c, rep, nil
}

// errBelow and errAbove tell solveLogMonotone's caller which side the target fell.
var (
	errBelow = fmt.Errorf("%w: below the lower bound", ErrNotIdentifiable)
	errAbove = fmt.Errorf("%w: above the upper bound", ErrNotIdentifiable)
)

// solveLogMonotone finds x in [lo, hi] with g(x) = 0 for g increasing in x,
// working on ln x with Brent's method to a relative tolerance on x of about
// 1e−13 (an absolute one on ln x, so that a root at x = 1 converges as fast
// as any other).
func solveLogMonotone(g func(float64) float64, lo, hi float64) (float64, error) {
	glo, ghi := g(lo), g(hi)
	if glo > 0 {
		return lo, errBelow
	}
	if ghi < 0 {
		return hi, errAbove
	}
	h := func(y float64) float64 { return g(math.Exp(y)) }
	y, ok := brentRoot(h, math.Log(lo), math.Log(hi), glo, ghi, 0, 1e-13, 200)
	if !ok {
		return 0, fmt.Errorf("%w: solver found no bracket", ErrNotIdentifiable)
	}
	return math.Exp(y), nil
}
