package coilmodel

import (
	"fmt"
	"math"

	"risewatch/units"
)

// Control-valve hydraulics: inherent characteristics, the liquid sizing
// equation and the installed flow of a valve in series with the coil.

const (
	// DefaultRangeability is Cv,max/Cv,min when Valve.Rangeability is 0
	// (a typical assumption for characterised HVAC valves; common practice).
	DefaultRangeability = 50.0
	// eqPctLinearBelow is the lift below which the equal-percentage curve is
	// closed linearly to the leakage value, as the Modelica Standard Library
	// and IBPSA valve models do.
	eqPctLinearBelow = 0.02
)

// refWaterDensity is the density of 60 °F water that defines Cv (Kell 1975 at 15.56 °C).
func refWaterDensity() float64 { return WaterDensity(units.FToC(60)) }

// String names the characteristic.
func (ch Characteristic) String() string {
	switch ch {
	case EqualPercentage:
		return "equal-percentage"
	case Linear:
		return "linear"
	}
	return fmt.Sprintf("Characteristic(%d)", int(ch))
}

// Validate checks the valve data.
func (v Valve) Validate() error {
	if !inRange(v.Cv, 1e-3, 1e4) {
		return fmt.Errorf("valve Cv %g: must be between 0.001 and 10000", v.Cv)
	}
	if v.Rangeability != 0 && !inRange(v.Rangeability, 2, 1e4) {
		return fmt.Errorf("valve rangeability %g: must be 0 (default %g) or 2 to 10000", v.Rangeability, DefaultRangeability)
	}
	if !inRange(v.LeakageFrac, 0, 0.2) {
		return fmt.Errorf("valve leakage %g of full-open Cv: must be 0 to 0.2", v.LeakageFrac)
	}
	if v.Characteristic != EqualPercentage && v.Characteristic != Linear {
		return fmt.Errorf("valve characteristic %d unknown", int(v.Characteristic))
	}
	return nil
}

func (v Valve) rangeability() float64 {
	if v.Rangeability > 0 {
		return v.Rangeability
	}
	return DefaultRangeability
}

// RelativeCv is the inherent characteristic φ(y) = Cv(y)/Cv,max at lift
// cmdFrac (clamped to 0..1), ISA-75.11.01 / IEC 60534-2-4:
// linear φ = l + (1 − l)·y; equal percentage φ = R^(y − 1) above y = 0.02,
// closed linearly from there to the seat leakage l at y = 0.
func (v Valve) RelativeCv(cmdFrac float64) float64 {
	y := math.Min(math.Max(cmdFrac, 0), 1)
	if math.IsNaN(cmdFrac) {
		y = 0
	}
	l := math.Min(math.Max(v.LeakageFrac, 0), 1)
	if v.Characteristic == Linear {
		return l + (1-l)*y
	}
	r := v.rangeability()
	if y >= eqPctLinearBelow {
		return math.Pow(r, y-1)
	}
	edge := math.Pow(r, eqPctLinearBelow-1)
	return l + (edge-l)*y/eqPctLinearBelow
}

// FlowM3s is the water flow through the valve at command cmdFrac (0..1) and
// valve differential pressure dpPa, from the ANSI/ISA-75.01.01 / IEC 60534-2-1
// incompressible sizing equation Q[gpm] = Cv·φ·√(ΔP[psi]/SG), SG = ρ/ρ(60 °F)
// (non-choked flow, piping factor F_P = 1). densityKgM3 ≤ 0 means 60 °F water.
func (v Valve) FlowM3s(cmdFrac, dpPa, densityKgM3 float64) float64 {
	if !(dpPa > 0) || !(v.Cv > 0) {
		return 0
	}
	sg := 1.0
	if densityKgM3 > 0 {
		sg = densityKgM3 / refWaterDensity()
	}
	return v.Cv * v.RelativeCv(cmdFrac) * units.GPMToM3s(1) * math.Sqrt(units.PaToPSI(dpPa)/sg)
}

// DropPa is the valve differential pressure (Pa) that passes flowM3s at
// command cmdFrac: the sizing equation solved for ΔP.
func (v Valve) DropPa(cmdFrac, flowM3s, densityKgM3 float64) float64 {
	phi := v.Cv * v.RelativeCv(cmdFrac)
	if !(phi > 0) {
		return math.Inf(1)
	}
	sg := 1.0
	if densityKgM3 > 0 {
		sg = densityKgM3 / refWaterDensity()
	}
	gpm := units.M3sToGPM(flowM3s) / phi
	return units.PSIToPa(gpm * gpm * sg)
}

// InstalledFraction is the installed relative flow of a valve of authority a
// (0 < a ≤ 1) at command cmdFrac, for a constant branch differential pressure
// and a square-law rest of circuit: q = 1/√[(1 − a) + a/φ²] (Wade, Basic and
// Advanced Regulatory Control, 2nd ed., ISA, Appendix B).
func (v Valve) InstalledFraction(cmdFrac, authority float64) float64 {
	phi := v.RelativeCv(cmdFrac)
	if phi <= 0 {
		return 0
	}
	a := math.Min(math.Max(authority, 1e-6), 1)
	return 1 / math.Sqrt((1-a)+a/(phi*phi))
}

// Authority is the valve authority a = ΔP_valve/(ΔP_valve + ΔP_coil) at full
// open and the design flow designFlowM3s through coil c at water temperature
// waterC (°C). Headers and piping beyond the coil are not included.
func Authority(v Valve, c Coil, designFlowM3s, waterC float64) (float64, error) {
	if err := v.Validate(); err != nil {
		return 0, err
	}
	dpc, err := WaterDropPa(c, designFlowM3s, waterC)
	if err != nil {
		return 0, err
	}
	rho := WaterDensity(waterC)
	dpv := v.DropPa(1, designFlowM3s, rho)
	if dpv+dpc <= 0 {
		return 0, fmt.Errorf("valve authority: design flow %g m³/s gives no pressure drop", designFlowM3s)
	}
	return dpv / (dpv + dpc), nil
}

// InstalledFlowM3s is the water flow at command cmdFrac with the valve and coil
// in series across a branch differential pressure branchDPPa, water at waterC
// (°C): it solves ΔP_valve(Q) + ΔP_coil(Q) = ΔP_branch by Brent's method. The
// coil drop uses the full Darcy/Churchill model, so the rest of the circuit
// is not assumed square-law.
func InstalledFlowM3s(v Valve, c Coil, cmdFrac, branchDPPa, waterC float64) (float64, error) {
	if err := v.Validate(); err != nil {
		return 0, err
	}
	if err := c.Validate(); err != nil {
		return 0, err
	}
	if !inRange(waterC, 0.5, 120) {
		return 0, fmt.Errorf("installed flow: water %g °C: must be 0.5 to 120 °C", waterC)
	}
	if !inRange(branchDPPa, 0, 1e7) {
		return 0, fmt.Errorf("installed flow: branch differential pressure %g Pa: must be 0 to 10 MPa", branchDPPa)
	}
	w := waterAt(waterC)
	hi := v.FlowM3s(cmdFrac, branchDPPa, w.rho)
	if hi <= 0 {
		return 0, nil
	}
	p := c.path()
	g := func(q float64) float64 {
		dpc, _, _ := c.waterDrop(p, q, w)
		return v.DropPa(cmdFrac, q, w.rho) + dpc - branchDPPa
	}
	q, ok := brentRoot(g, 0, hi, -branchDPPa, g(hi), 1e-10, 0, 200)
	if !ok {
		return 0, fmt.Errorf("installed flow: no solution between 0 and %g m³/s", hi)
	}
	return q, nil
}
