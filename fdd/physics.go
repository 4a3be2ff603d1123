package fdd

import (
	"fmt"
	"math"

	"risewatch/coilmodel"
	"risewatch/site"
)

// riser evaluates the expected air temperature rise (K) of one coil at an
// operating point. *coilmodel.Calibrated satisfies it.
type riser interface {
	ExpectedRise(op coilmodel.Operating) float64
	// ExpectedRiseWith is the rise at an absolute UA multiplier and a
	// water-flow scale.
	ExpectedRiseWith(op coilmodel.Operating, uaMult, flowMult float64) float64
	UAMultiplier() float64
}

// coilPhysics gives risers for a terminal's coil with UA scaled relative to
// its calibrated (rated-point) value.
type coilPhysics interface {
	withUA(scale float64) (riser, error)
}

// physicsFactory builds the model of one terminal: its coil and its installed
// flow curve (water flow versus command). Tests substitute their own.
type physicsFactory func(t *site.Terminal, l *site.Loop) (coilPhysics, flowCurve, error)

// calibratedPhysics is the production physics: the coilmodel coil, calibrated
// to the submittal rated point when one is given.
type calibratedPhysics struct{ k *coilmodel.Calibrated }

func (p calibratedPhysics) withUA(scale float64) (riser, error) {
	if !(scale > 0) || !finite(scale) {
		return nil, fmt.Errorf("UA scale %g must be positive", scale)
	}
	return scaledRiser{k: p.k, ua: math.Max(p.k.UAMultiplier()*scale, 0)}, nil
}

// scaledRiser is a terminal's coil at an absolute UA multiplier: the shared,
// immutable calibrated coil and the multiplier, applied at evaluation
// (Calibrated.ExpectedRiseWith). It gives bit for bit the rises of
// Calibrated.WithUAMultiplier(ua), whose ExpectedRise is ExpectedRiseWith at
// its multiplier, without a per-terminal copy of the coil's precomputed
// geometry (two per terminal: the baseline and the UA-perturbed model).
type scaledRiser struct {
	k  *coilmodel.Calibrated
	ua float64 // absolute UA multiplier, ≥ 0
}

func (r scaledRiser) ExpectedRise(op coilmodel.Operating) float64 {
	return r.k.ExpectedRiseWith(op, r.ua, 1)
}

func (r scaledRiser) ExpectedRiseWith(op coilmodel.Operating, uaMult, flowMult float64) float64 {
	return r.k.ExpectedRiseWith(op, uaMult, flowMult)
}

func (r scaledRiser) UAMultiplier() float64 { return r.ua }

// flowPoints is the resolution of the installed flow table.
const flowPoints = 41

// flowCurve is the installed water flow (m³/s) at commands 0, 1/40, …, 1,
// with the valve and coil in series across the loop's design branch
// differential pressure (coilmodel.InstalledFlowM3s). Linear interpolation.
type flowCurve struct {
	m [flowPoints]float64
}

// at returns the flow at command u (clamped to 0..1).
func (f *flowCurve) at(u float64) float64 {
	if !(u > 0) {
		return f.m[0]
	}
	if u >= 1 {
		return f.m[flowPoints-1]
	}
	x := u * (flowPoints - 1)
	i := int(x)
	fr := x - float64(i)
	return f.m[i] + fr*(f.m[i+1]-f.m[i])
}

// design is the full-open flow.
func (f *flowCurve) design() float64 { return f.m[flowPoints-1] }

// coilShare maps coil data (geometry and calibration multiplier) to its
// calibrated model, so terminals with identical coils - one schedule line,
// one rated point - share one immutable coilmodel.Calibrated instead of a
// copy each. The model is a pure function of the coil data, so sharing
// changes no result.
type coilShare map[coilmodel.Coil]*coilmodel.Calibrated

// sharedPhysics is the production physics factory (buildPhysics) with one
// engine's coil models shared (the map lives as long as the factory: one
// NewEngine call).
func sharedPhysics() physicsFactory {
	share := coilShare{}
	return func(t *site.Terminal, l *site.Loop) (coilPhysics, flowCurve, error) {
		return buildPhysics(t, l, share)
	}
}

// buildPhysics builds a terminal's model from coilmodel. The coil is
// calibrated to Terminal.Rated (coilmodel.Calibrate) unless the site loader
// already set a UA multiplier. The flow curve comes from the valve and coil
// hydraulics at the loop's design branch differential pressure; without
// hydraulic data but with a rated water flow, the installed characteristic is
// taken as linear through the rated flow at full command (an equal-percentage
// valve with moderate authority installs close to linear; ISA/Wade, common
// practice) and the wider flow uncertainty is the user's to configure.
// Models are reused from share when non-nil.
func buildPhysics(t *site.Terminal, l *site.Loop, share coilShare) (coilPhysics, flowCurve, error) {
	var fc flowCurve
	c := t.Coil
	if t.Rated != nil && c.UAMultiplier == 0 {
		cal, _, err := coilmodel.Calibrate(c, *t.Rated)
		if err != nil {
			return nil, fc, fmt.Errorf("terminal %s: calibrate to rated point: %w", t.ID, err)
		}
		c = cal
	}
	waterC := 80.0
	dp := 0.0
	if l != nil {
		if l.DesignSupplyC > 0 {
			waterC = l.DesignSupplyC
		}
		dp = l.BranchDPPa
	}
	switch {
	case t.Valve.Cv > 0 && dp > 0:
		for i := range fc.m {
			u := float64(i) / (flowPoints - 1)
			q, err := coilmodel.InstalledFlowM3s(t.Valve, c, u, dp, waterC)
			if err != nil {
				return nil, fc, fmt.Errorf("terminal %s: installed flow at %.0f %% command: %w", t.ID, 100*u, err)
			}
			fc.m[i] = q
		}
	case t.Rated != nil && t.Rated.WaterFlowM3s > 0:
		for i := range fc.m {
			fc.m[i] = t.Rated.WaterFlowM3s * float64(i) / (flowPoints - 1)
		}
	default:
		return nil, fc, fmt.Errorf("terminal %s: no valve Cv with branch pressure and no rated water flow: water flow unknown", t.ID)
	}
	if !(fc.design() > 0) || math.IsInf(fc.design(), 0) {
		return nil, fc, fmt.Errorf("terminal %s: full-open water flow %g m³/s is not positive", t.ID, fc.design())
	}
	k := share[c]
	if k == nil {
		var err error
		if k, err = coilmodel.NewCalibrated(c); err != nil {
			return nil, fc, fmt.Errorf("terminal %s: coil model: %w", t.ID, err)
		}
		if share != nil {
			share[c] = k
		}
	}
	return calibratedPhysics{k: k}, fc, nil
}

// evaluation is one full model evaluation with its first-order sensitivities,
// reused as a Taylor expansion while the inputs stay near it.
type evaluation struct {
	ok                  bool
	v, eat, mw, thw     float64 // inputs it was evaluated at
	f                   float64 // expected rise, K
	dV, dE, dM, dT, dLU float64 // ∂f/∂V (K per m³/s), ∂f/∂EAT, ∂f/∂ṁ (K per m³/s), ∂f/∂T_hw, ∂f/∂ln UA (K)
}

// Trust region of the Taylor reuse: inside it the second-order error is far
// below the sensor uncertainty [I]. The rise is close to linear in EAT and
// HW temperature (ΔT_air = P·(T_hw − EAT) with P nearly independent of
// them) and varies about as V^−0.6 with airflow, whose second-order term at
// 8 % is under 0.3 % of the rise.
const (
	trustAirFrac   = 0.08
	trustEATK      = 2.0
	trustWaterFrac = 0.10
	trustHWK       = 3.0
)

// near reports whether inputs are inside the trust region of e. The water
// flow is tested first: it is the input that leaves the region most often.
func (e *evaluation) near(v, eat, mw, thw float64) bool {
	return e.ok && within(mw-e.mw, trustWaterFrac*e.mw+1e-9) && within(v-e.v, trustAirFrac*e.v) &&
		within(eat-e.eat, trustEATK) && within(thw-e.thw, trustHWK)
}

// within reports |d| ≤ tol (false for a NaN d or tol), as math.Abs(d) <= tol.
func within(d, tol float64) bool { return d <= tol && -d <= tol }

// taylor is the first-order expansion of f around e.
func (e *evaluation) taylor(v, eat, mw, thw float64) float64 {
	return e.f + e.dV*(v-e.v) + e.dE*(eat-e.eat) + e.dM*(mw-e.mw) + e.dT*(thw-e.thw)
}

// evaluate runs the model at the inputs with forward differences for the
// sensitivities: airflow + 2 %, water flow + 2 % (+ 1e−8 m³/s) and UA ×
// uaStep, where rUA is r at UA × uaStep (how the engine builds them). A
// calibrated coil (scaledRiser, *coilmodel.Calibrated) gives all three from
// one model evaluation (Calibrated.RiseSensitivities: the perturbed points
// re-compute only what their input changes, with the base evaluation's
// fluid properties); any other riser takes four evaluations, the UA one
// with rUA.
func evaluate(r, rUA riser, v, eat, mw, thw float64) evaluation {
	op := coilmodel.Operating{AirflowM3s: v, EnteringAirC: eat, WaterFlowM3s: mw, EnteringWaterC: thw}
	hv := 0.02 * v
	hm := 0.02*mw + 1e-8
	var s coilmodel.Sensitivities
	steps := coilmodel.SensitivitySteps{AirflowM3s: hv, WaterFlowM3s: hm, UAFactor: uaStep}
	switch k := r.(type) {
	case scaledRiser:
		s = k.k.RiseSensitivities(op, k.ua, steps)
	case *coilmodel.Calibrated:
		s = k.RiseSensitivities(op, k.UAMultiplier(), steps)
	default:
		s.RiseK = r.ExpectedRise(op)
		o := op
		o.AirflowM3s = v + hv
		s.DAirflow = (r.ExpectedRise(o) - s.RiseK) / hv
		o = op
		o.WaterFlowM3s = mw + hm
		s.DWaterFlow = (r.ExpectedRise(o) - s.RiseK) / hm
		s.DLnUA = (rUA.ExpectedRise(op) - s.RiseK) / math.Log(uaStep)
	}
	f := s.RiseK
	e := evaluation{ok: true, v: v, eat: eat, mw: mw, thw: thw, f: f, dV: s.DAirflow, dM: s.DWaterFlow, dLU: s.DLnUA}
	// Temperatures: ΔT_air = P·(T_hw − EAT) with the effectiveness P nearly
	// independent of the inlet temperatures (properties vary little over the
	// trust region), so ∂f/∂T_hw = f/(T_hw − EAT) = −∂f/∂EAT.
	if d := thw - eat; math.Abs(d) > 1e-3 {
		e.dT, e.dE = f/d, -f/d
	}
	if !finite(f) || !finite(e.dV) || !finite(e.dE) || !finite(e.dM) || !finite(e.dT) || !finite(e.dLU) {
		return evaluation{}
	}
	return e
}

// uaStep is the UA multiplier of the perturbed riser used for ∂f/∂ln UA.
const uaStep = 1.05

// invertFlow finds the water flow in [0, mMax] at which the coil gives the
// rise target at the other inputs. The rise increases monotonically with
// water flow, so a bracketing method converges: the Illinois variant of
// regula falsi (Dowell & Jarratt, BIT 11, 1971), which keeps the bracket and
// halves the weight of a retained end point, converging superlinearly where
// plain false position stalls on the concave rise curve. It stops when the
// rise is within invertTolK of the target. It returns NaN when the target is
// not reachable even at mMax (e.g. a sensor offset rather than a leak).
func invertFlow(r riser, v, eat, thw, target, mMax float64) float64 {
	op := coilmodel.Operating{AirflowM3s: v, EnteringAirC: eat, EnteringWaterC: thw}
	if !(target > 0) {
		return 0
	}
	op.WaterFlowM3s = mMax
	fb := r.ExpectedRise(op) - target
	if fb < 0 {
		return math.NaN()
	}
	a, b := 0.0, mMax
	fa := -target // rise at zero flow is zero
	side := 0
	for i := 0; i < invertMaxIter; i++ {
		m := (a*fb - b*fa) / (fb - fa)
		if !(m > a && m < b) {
			m = 0.5 * (a + b)
		}
		op.WaterFlowM3s = m
		fm := r.ExpectedRise(op) - target
		if math.Abs(fm) < invertTolK {
			return m
		}
		if fm < 0 {
			a, fa = m, fm
			if side == -1 {
				fb *= 0.5
			}
			side = -1
		} else {
			b, fb = m, fm
			if side == 1 {
				fa *= 0.5
			}
			side = 1
		}
	}
	return 0.5 * (a + b)
}

// Leak inversion tolerance and iteration bound: 0.01 K is far below the DAT
// sensor's accuracy [I].
const (
	invertTolK    = 0.01
	invertMaxIter = 30
)

// coilOp is the model operating point at BAS airflow (standard air).
func coilOp(v, eat, mw, thw float64) coilmodel.Operating {
	return coilmodel.Operating{AirflowM3s: v, EnteringAirC: eat, WaterFlowM3s: mw, EnteringWaterC: thw}
}

// finite reports whether x is neither NaN nor ±Inf: x − x is 0 exactly
// for finite x and NaN otherwise (IEEE 754).
func finite(x float64) bool { return x-x == 0 }

// fmax and fmin are math.Max/Min for operands known not to be NaN or
// signed zeros that matter (the hot path's ramps and clamps): plain compares.
func fmax(a, b float64) float64 {
	if a > b {
		return a
	}
	return b
}

func fmin(a, b float64) float64 {
	if a < b {
		return a
	}
	return b
}

// nanMin and nanMax are math.Min and math.Max for the hot path (inlined;
// math's are assembly calls on amd64): a NaN operand gives NaN, as there.
// Unlike math's they do not order −0 below +0, which no caller tells apart
// (spans and threshold comparisons).
func nanMin(a, b float64) float64 {
	if a < b || a != a {
		return a
	}
	return b
}

func nanMax(a, b float64) float64 {
	if a > b || a != a {
		return a
	}
	return b
}
