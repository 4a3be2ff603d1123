package fdd

import (
	"errors"
	"fmt"
	"math"
	"time"

	"risewatch/coilmodel"
)

// Baseline is a terminal's fitted healthy behaviour: multipliers on the
// rated-point calibrated coil's UA and on the installed water flow, fitted by
// least squares over steady heating points of a fault-free learning period.
// Plain values so the store can persist it.
type Baseline struct {
	Terminal        string    // terminal ID
	Source          string    // "rated" (no history fit) or "learned"
	UAFactor        float64   // UA multiplier relative to the rated calibration
	UAFactorSigma   float64   // 1-sigma
	FlowFactor      float64   // water-flow multiplier relative to the valve/branch hydraulics
	FlowFactorSigma float64   // 1-sigma
	Correlation     float64   // correlation of the two estimates
	ResidualSigmaK  float64   // RMS residual of the fit, K
	Points          int       // steady points used
	From, To        time.Time // learning period
	Rejected        string    // why a learned fit was not adopted ("" if adopted or never fitted)
	// RejectedUAFactor is the learned UA factor that was not adopted (0 if
	// none; with Rejected set, the baseline is the rated model).
	RejectedUAFactor float64
	// PerfHighRef and PerfHighRefN are the coil's demonstrated healthy
	// high-command performance against this baseline (Evidence.PerfHighRef)
	// and the number of values behind it (0: not seen healthy yet), so a
	// restart keeps the coil's own level.
	PerfHighRef  float64
	PerfHighRefN int
}

// CI95 returns the approximate 95 % confidence intervals (±1.96σ, normal
// approximation of the least-squares estimate) of the two factors.
func (b Baseline) CI95() (uaLo, uaHi, flowLo, flowHi float64) {
	return b.UAFactor - 1.96*b.UAFactorSigma, b.UAFactor + 1.96*b.UAFactorSigma,
		b.FlowFactor - 1.96*b.FlowFactorSigma, b.FlowFactor + 1.96*b.FlowFactorSigma
}

func ratedBaseline(id string) Baseline {
	return Baseline{Terminal: id, Source: "rated", UAFactor: 1, FlowFactor: 1}
}

// learnSlot is one steady heating observation kept for the baseline fit,
// compact because every learning terminal holds a reservoir of them: the
// time as seconds after the learner's first point (int32 spans 68 years),
// the values as float32. The fit inputs are BACnet REAL (IEEE 754 single)
// sensor readings converted to SI - airflow, entering air, command, hot
// water and the observed rise - with about four significant digits and
// accuracies of 0.1-0.5 K and a few percent of airflow; float32 keeps 24
// bits (about 7 digits, relative rounding 6e-8, i.e. under 1e-5 K on an
// 80 °C reading), three orders below the sensor accuracy, so the fitted
// factors differ from a float64 fit only far below their confidence
// intervals.
type learnSlot struct {
	atS                     int32 // seconds after learner.first
	v, eat, u, thw, obsRise float32
}

// learnPoint is one observation as offered to the learner (full precision).
type learnPoint struct {
	at                      time.Time
	v, eat, u, thw, obsRise float64
}

// Learning reservoir: points are kept per command bucket so the fit sees the
// whole command range (flow and UA are only separable across commands).
const (
	learnBuckets   = 8
	learnPerBucket = 8
)

// learnReservoir holds the kept points of one terminal.
type learnReservoir struct {
	pts  [learnBuckets][learnPerBucket]learnSlot
	n    [learnBuckets]uint8 // points held per bucket
	next [learnBuckets]uint8 // next slot to overwrite
}

// learner is one terminal's learning state. The reservoir is allocated at
// the first point and released when learning ends (release), so terminals
// that never heat steadily, have finished learning or restored a stored
// baseline hold none.
type learner struct {
	res   *learnReservoir
	total int // points offered
	first time.Time
	done  bool
}

func (l *learner) add(p learnPoint) {
	if l.done {
		return
	}
	b := int(p.u * learnBuckets)
	if b >= learnBuckets {
		b = learnBuckets - 1
	}
	if b < 0 {
		b = 0
	}
	if l.total == 0 {
		l.first = p.at
	}
	if l.res == nil {
		l.res = new(learnReservoir)
	}
	r := l.res
	r.pts[b][r.next[b]] = learnSlot{
		atS: int32(min(max(p.at.Sub(l.first)/time.Second, 0), math.MaxInt32)),
		v:   float32(p.v), eat: float32(p.eat), u: float32(p.u), thw: float32(p.thw), obsRise: float32(p.obsRise),
	}
	r.next[b] = (r.next[b] + 1) % learnPerBucket
	if r.n[b] < learnPerBucket {
		r.n[b]++
	}
	l.total++
}

// release ends learning and frees the reservoir.
func (l *learner) release() {
	l.done = true
	l.res = nil
}

func (l *learner) held() int {
	if l.res == nil {
		return 0
	}
	s := 0
	for _, n := range l.res.n {
		s += int(n)
	}
	return s
}

// ready reports whether enough points over enough time have been seen.
func (l *learner) ready(minPoints int, minSpan time.Duration, now time.Time) bool {
	return !l.done && minPoints > 0 && l.total >= minPoints && now.Sub(l.first) >= minSpan && l.held() >= 8
}

// Prior on the log factors: a healthy installed coil is within about ±50 %
// of its rated calibration [I]; the prior only matters when the points do not
// separate UA from flow (e.g. all at full command).
const priorSigmaLog = 0.5

// errFit is returned when the Gauss-Newton fit does not converge.
var errFit = errors.New("baseline fit did not converge")

// fitBaseline fits θ = (ln UA-factor, ln flow-factor) by Gauss-Newton least
// squares on rise_obs = f(V, EAT, F·ṁ(u), T_hw; UA-factor) with a weak
// Gaussian prior (Levenberg-style regularisation toward the rated model). The
// covariance is s²·(JᵀJ + s²/σ_p²·I)⁻¹ with s² the residual variance
// (Bard, Nonlinear Parameter Estimation, 1974, ch. 7; the usual linearised
// least-squares confidence region).
func fitBaseline(phys coilPhysics, fc *flowCurve, l *learner) (Baseline, error) {
	var pts []learnPoint
	if r := l.res; r != nil {
		pts = make([]learnPoint, 0, l.held())
		for b := 0; b < learnBuckets; b++ {
			for _, p := range r.pts[b][:r.n[b]] {
				pts = append(pts, learnPoint{
					at: l.first.Add(time.Duration(p.atS) * time.Second),
					v:  float64(p.v), eat: float64(p.eat), u: float64(p.u), thw: float64(p.thw), obsRise: float64(p.obsRise),
				})
			}
		}
	}
	n := len(pts)
	if n < 4 {
		return Baseline{}, fmt.Errorf("%w: only %d points", errFit, n)
	}
	a, f := 0.0, 0.0 // ln UA factor, ln flow factor
	var jtj [2][2]float64
	var s2 float64
	const hF = 0.02
	for iter := 0; iter < 10; iter++ {
		r0, err := phys.withUA(math.Exp(a))
		if err != nil {
			return Baseline{}, err
		}
		r1, err := phys.withUA(math.Exp(a) * uaStep)
		if err != nil {
			return Baseline{}, err
		}
		jtj = [2][2]float64{}
		var jtr [2]float64
		ss := 0.0
		for _, p := range pts {
			op := coilmodel.Operating{AirflowM3s: p.v, EnteringAirC: p.eat, WaterFlowM3s: fc.at(p.u) * math.Exp(f), EnteringWaterC: p.thw}
			y := r0.ExpectedRise(op)
			gU := (r1.ExpectedRise(op) - y) / math.Log(uaStep)
			op.WaterFlowM3s *= 1 + hF
			gF := (r0.ExpectedRise(op) - y) / math.Log(1+hF)
			res := p.obsRise - y
			ss += res * res
			jtj[0][0] += gU * gU
			jtj[0][1] += gU * gF
			jtj[1][1] += gF * gF
			jtr[0] += gU * res
			jtr[1] += gF * res
		}
		s2 = ss / float64(max(n-2, 1))
		lam := math.Max(s2, 0.01) / (priorSigmaLog * priorSigmaLog)
		m00, m01, m11 := jtj[0][0]+lam, jtj[0][1], jtj[1][1]+lam
		det := m00*m11 - m01*m01
		if !(det > 0) {
			return Baseline{}, fmt.Errorf("%w: singular normal equations", errFit)
		}
		// Prior pulls θ toward 0: right-hand side Jᵀr − λ·θ.
		g0, g1 := jtr[0]-lam*a, jtr[1]-lam*f
		da := (m11*g0 - m01*g1) / det
		df := (m00*g1 - m01*g0) / det
		da = math.Max(-0.5, math.Min(0.5, da))
		df = math.Max(-0.5, math.Min(0.5, df))
		a += da
		f += df
		if !finite(a) || !finite(f) {
			return Baseline{}, fmt.Errorf("%w: diverged", errFit)
		}
		if math.Abs(da) < 1e-4 && math.Abs(df) < 1e-4 {
			break
		}
	}
	lam := math.Max(s2, 0.01) / (priorSigmaLog * priorSigmaLog)
	m00, m01, m11 := jtj[0][0]+lam, jtj[0][1], jtj[1][1]+lam
	det := m00*m11 - m01*m01
	caa, cff, caf := s2*m11/det, s2*m00/det, -s2*m01/det
	ua, fl := math.Exp(a), math.Exp(f)
	b := Baseline{
		Source:          "learned",
		UAFactor:        ua,
		UAFactorSigma:   ua * math.Sqrt(math.Max(caa, 0)),
		FlowFactor:      fl,
		FlowFactorSigma: fl * math.Sqrt(math.Max(cff, 0)),
		ResidualSigmaK:  math.Sqrt(s2),
		Points:          n,
		From:            l.first,
	}
	if caa > 0 && cff > 0 {
		b.Correlation = caf / math.Sqrt(caa*cff)
	}
	for _, p := range pts {
		if p.at.After(b.To) {
			b.To = p.at
		}
	}
	return b, nil
}
