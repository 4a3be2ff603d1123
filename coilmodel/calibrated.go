package coilmodel

import "math"

// Calibrated holds a coil with its geometry-only parts precomputed (areas,
// correlation constants, fin parameter, wall and fouling resistances);
// ExpectedRise is the detector's hot path. A Calibrated is immutable and safe
// for concurrent use.
type Calibrated struct {
	m model
}

// NewCalibrated validates c and precomputes what ExpectedRise needs.
func NewCalibrated(c Coil) (*Calibrated, error) {
	m, err := newModel(c)
	if err != nil {
		return nil, err
	}
	return &Calibrated{m: m}, nil
}

// Coil returns the coil (with its UAMultiplier as given).
func (k *Calibrated) Coil() Coil { return k.m.c }

// UAMultiplier is the multiplier ExpectedRise applies (c.UAMultiplier, 0 → 1).
func (k *Calibrated) UAMultiplier() float64 { return k.m.uaMult }

// ExpectedRise is the air temperature rise LAT − EAT (K) at op, the same
// value Rate gives. Zero or negative water flow gives 0; zero airflow gives
// EWT − EAT. It does not validate op (call op.Validate at the edge); a NaN
// flow or temperature in op gives NaN. No allocations.
func (k *Calibrated) ExpectedRise(op Operating) float64 {
	return k.ExpectedRiseWith(op, k.m.uaMult, 1)
}

// ExpectedRiseWith is ExpectedRise with the UA multiplier uaMult (absolute,
// in the sense of Coil.UAMultiplier; ≤ 0 means no heat transfer) and the
// water flow scaled by flowMult, for least-squares fits of both. No
// allocations.
func (k *Calibrated) ExpectedRiseWith(op Operating, uaMult, flowMult float64) float64 {
	var st state
	k.m.eval(toFlows(op, flowMult), math.Max(uaMult, 0), &st)
	return st.rise
}

// WithUAMultiplier returns a copy that applies UA multiplier m (absolute, in
// the sense of Coil.UAMultiplier; m ≤ 0 means no heat transfer). It copies a
// small struct and recomputes nothing.
func (k *Calibrated) WithUAMultiplier(m float64) *Calibrated {
	cp := *k
	cp.m.uaMult = math.Max(m, 0)
	cp.m.c.UAMultiplier = cp.m.uaMult
	return &cp
}

// Rate is Rate(k.Coil(), op) without rebuilding the geometry.
func (k *Calibrated) Rate(op Operating) (Rating, error) { return k.m.rate(op) }

// RiseAndGrad returns ExpectedRise at op and its partial derivatives with
// respect to airflow (K per m³/s), entering air temperature (K/K), entering
// water temperature (K/K) and water flow (K per m³/s), by central finite
// differences (one-sided at a zero flow). No allocations.
func (k *Calibrated) RiseAndGrad(op Operating) (riseK, dAirflow, dEAT, dEWT, dWaterFlow float64) {
	riseK = k.riseAt(op)
	// flows: relative step, one-sided at zero
	h := 1e-4 * math.Max(math.Abs(op.AirflowM3s), 1e-5)
	up, dn := op, op
	up.AirflowM3s += h
	dn.AirflowM3s -= h
	dAirflow = k.centralOrForward(up, dn, riseK, h, dn.AirflowM3s <= 0)

	h = 1e-4 * math.Max(math.Abs(op.WaterFlowM3s), 1e-8)
	up, dn = op, op
	up.WaterFlowM3s += h
	dn.WaterFlowM3s -= h
	dWaterFlow = k.centralOrForward(up, dn, riseK, h, dn.WaterFlowM3s <= 0)

	const ht = 0.01 // K
	up, dn = op, op
	up.EnteringAirC += ht
	dn.EnteringAirC -= ht
	dEAT = (k.riseAt(up) - k.riseAt(dn)) / (2 * ht)
	up, dn = op, op
	up.EnteringWaterC += ht
	dn.EnteringWaterC -= ht
	dEWT = (k.riseAt(up) - k.riseAt(dn)) / (2 * ht)
	return
}

func (k *Calibrated) riseAt(op Operating) float64 {
	var st state
	k.m.eval(toFlows(op, 1), k.m.uaMult, &st)
	return st.rise
}

func (k *Calibrated) centralOrForward(up, dn Operating, rise0, h float64, forward bool) float64 {
	if forward {
		return (k.riseAt(up) - rise0) / h
	}
	return (k.riseAt(up) - k.riseAt(dn)) / (2 * h)
}
