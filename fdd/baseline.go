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

// learnPoint is one steady heating observation kept for the baseline fit.
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

type learner struct {
	pts   [learnBuckets][learnPerBucket]learnPoint
	n     [learnBuckets]int // points held per bucket
	next  [learnBuckets]int // next slot to overwrite
	total int               // points offered
	first time.Time
	done  bool
}

func (l *learner) add(p learnPoint) {
	b := int(p.u * learnBuckets)
	if b >= learnBuckets {
		b = learnBuckets - 1
	}
	if b < 0 {
		b = 0
	}
	l.pts[b][l.next[b]] = p
	l.next[b] = (l.next[b] + 1) % learnPerBucket
	if l.n[b] < learnPerBucket {
		l.n[b]++
	}
	if l.total == 0 {
		l.first = p.at
	}
	l.total++
}

func (l *learner) held() int {
	s := 0
	for _, n := range l.n {
		s += n
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
	for b := 0; b < learnBuckets; b++ {
		pts = append(pts, l.pts[b][:l.n[b]]...)
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
