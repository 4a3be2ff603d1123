package assess

import (
	"fmt"
	"math"

	"risewatch/coilmodel"
)

// Performance is one coil's performance at one candidate condition.
type Performance struct {
	AirflowM3s   float64
	EnteringAirC float64
	SupplyC      float64
	BranchDPPa   float64
	// AvailFlowM3s is the water flow with the valve fully open across the
	// branch differential pressure (coilmodel.InstalledFlowM3s).
	AvailFlowM3s  float64
	CapacityW     float64 // at AvailFlowM3s
	LeavingAirC   float64
	LeavingWaterC float64
	WaterDropPa   float64 // coil only, at AvailFlowM3s
	AirDropPa     float64
	LoadW         float64
	MarginW       float64 // CapacityW − LoadW
	MarginFrac    float64 // MarginW / LoadW
	Met           bool
	// What meeting the load exactly would take. NeedReachable is false when
	// no water flow up to a 3 m/s tube velocity carries the load (the coil
	// is air-side limited); the Need values are then those at that flow.
	NeedReachable     bool
	NeedFlowM3s       float64
	NeedLeavingWaterC float64
	NeedDeltaK        float64 // water ΔT at the needed flow
	NeedWaterDropPa   float64 // coil
	NeedBranchDPPa    float64 // valve (full open) + coil at the needed flow
	Regime            coilmodel.Regime
	Extrapolated      coilmodel.Extrapolation
}

// coilCase is a coil with its valve at one airflow and entering air.
type coilCase struct {
	k      *coilmodel.Calibrated
	valve  coilmodel.Valve
	airM3s float64
	eatC   float64
	w      float64
	baroPa float64
}

func (cc *coilCase) op(ewtC, q float64) coilmodel.Operating {
	return coilmodel.Operating{AirflowM3s: cc.airM3s, EnteringAirC: cc.eatC, WaterFlowM3s: q,
		EnteringWaterC: ewtC, HumidityRatio: cc.w, BarometricPa: cc.baroPa}
}

// maxTubeVelocityMs bounds the needed-flow search: above about 3 m/s (10
// ft/s) tube erosion and noise rule a flow out (common practice).
const maxTubeVelocityMs = 3.0

// available is the full-open installed flow across branchDP at ewtC.
func (cc *coilCase) available(ewtC, branchDP float64) (float64, error) {
	q, err := coilmodel.InstalledFlowM3s(cc.valve, cc.k.Coil(), 1, branchDP, ewtC)
	if err != nil {
		return 0, fmt.Errorf("full-open water flow: %w", err)
	}
	return q, nil
}

// capacity rates the coil at ewtC and flow q.
func (cc *coilCase) capacity(ewtC, q float64) (coilmodel.Rating, error) {
	r, err := cc.k.Rate(cc.op(ewtC, q))
	if err != nil {
		return r, fmt.Errorf("rate at %.4g m³/s, %.1f °C: %w", q, ewtC, err)
	}
	return r, nil
}

// perform rates the coil with the flow the branch delivers and finds the
// flow that would meet loadW exactly.
func (cc *coilCase) perform(ewtC, branchDP, loadW float64) (Performance, error) {
	p := Performance{AirflowM3s: cc.airM3s, EnteringAirC: cc.eatC, SupplyC: ewtC, BranchDPPa: branchDP, LoadW: loadW}
	q, err := cc.available(ewtC, branchDP)
	if err != nil {
		return p, err
	}
	p.AvailFlowM3s = q
	r, err := cc.capacity(ewtC, q)
	if err != nil {
		return p, err
	}
	p.CapacityW, p.LeavingAirC, p.LeavingWaterC = r.CapacityW, r.LeavingAirC, r.LeavingWaterC
	p.WaterDropPa, p.AirDropPa, p.Regime, p.Extrapolated = r.WaterDropPa, r.AirDropPa, r.Regime, r.Extrapolated
	p.MarginW = p.CapacityW - loadW
	if loadW > 0 {
		p.MarginFrac = p.MarginW / loadW
	}
	p.Met = p.MarginW >= 0
	if loadW <= 0 {
		return p, nil
	}
	return p, cc.need(&p, ewtC, r)
}

// need inverts capacity on water flow: capacity(q) = load, q in a bracket
// grown from the available flow up to the tube-velocity bound.
func (cc *coilCase) need(p *Performance, ewtC float64, atAvail coilmodel.Rating) error {
	load := p.LoadW
	f := func(q float64) float64 {
		r, err := cc.capacity(ewtC, q)
		if err != nil {
			return math.NaN()
		}
		return r.CapacityW - load
	}
	hi, fhi := p.AvailFlowM3s, atAvail.CapacityW-load
	velHi := atAvail.WaterVelMs
	if !(hi > 0) {
		hi, fhi, velHi = 1e-6, f(1e-6), 0
	}
	for fhi < 0 && velHi < maxTubeVelocityMs {
		hi *= 2
		r, err := cc.capacity(ewtC, hi)
		if err != nil {
			return err
		}
		fhi, velHi = r.CapacityW-load, r.WaterVelMs
	}
	q := hi
	if fhi >= 0 {
		lo := hi / 2
		flo := f(lo)
		for flo > 0 && lo > 1e-9 {
			hi, fhi = lo, flo
			lo /= 2
			flo = f(lo)
		}
		var ok bool
		q, ok = rootBracketed(f, lo, hi, flo, fhi, 1e-6*hi, 1e-4*load, 60)
		if !ok {
			return fmt.Errorf("needed water flow: no solution between %.3g and %.3g m³/s", lo, hi)
		}
		p.NeedReachable = true
	}
	r, err := cc.capacity(ewtC, q)
	if err != nil {
		return err
	}
	p.NeedFlowM3s = q
	p.NeedLeavingWaterC = r.LeavingWaterC
	p.NeedDeltaK = ewtC - r.LeavingWaterC
	p.NeedWaterDropPa = r.WaterDropPa
	p.NeedBranchDPPa = r.WaterDropPa + cc.valve.DropPa(1, q, coilmodel.WaterDensity(ewtC))
	return nil
}

// meets reports whether the coil carries loadW at supply ewtC across
// branchDP (full-open valve).
func (cc *coilCase) meets(ewtC, branchDP, loadW float64) bool {
	q, err := cc.available(ewtC, branchDP)
	if err != nil {
		return false
	}
	r, err := cc.capacity(ewtC, q)
	return err == nil && r.CapacityW >= loadW
}

// Supply temperatures searched for the minimum (°C): from a few kelvin above
// the entering air to the top of coilmodel's water range less a margin.
const (
	minSearchAboveAirK = 2.0
	maxSearchSupplyC   = 110.0
	supplyTolK         = 0.05
)

// minSupply is the lowest supply temperature at which the coil carries
// loadW, by bisection (capacity rises with supply temperature); ok is false
// when even maxSearchSupplyC is not enough.
func (cc *coilCase) minSupply(branchDP, loadW float64) (float64, bool) {
	lo := cc.eatC + minSearchAboveAirK
	if !cc.meets(maxSearchSupplyC, branchDP, loadW) {
		return math.NaN(), false
	}
	if cc.meets(lo, branchDP, loadW) {
		return lo, true
	}
	return bisect(func(t float64) bool { return cc.meets(t, branchDP, loadW) }, lo, maxSearchSupplyC, supplyTolK), true
}

// unitCase is the unit's existing coil at its heating airflow.
func (u *Unit) unitCase() *coilCase {
	return &coilCase{k: u.k, valve: u.Valve, airM3s: u.HeatingAirflowM3s, eatC: u.EnteringAirC, w: u.HumidityRatio, baroPa: u.BarometricPa}
}

// conditionsFor resolves the candidate conditions for this unit's loop.
func (u *Unit) conditionsFor(c Conditions) (supplyC, deltaK, branchDP float64) {
	supplyC, deltaK, branchDP = c.SupplyC, c.DeltaK, c.BranchDPPa
	if deltaK <= 0 {
		deltaK = u.LoopDeltaK
	}
	if branchDP <= 0 {
		branchDP = u.LoopBranchDPa
	}
	return
}
