package fdd

import "math"

// chart holds the control-chart statistics of the standardised residual
// z = (observed − expected rise) / σ, fed with batch means of ChartBlock
// steady heating samples (batch means reduce the autocorrelation of 1-min
// samples; common practice in SPC on process data).
//
// Following the NIST VAV-box control-chart method (J. Schein, J.M. House,
// "Application of control charts for detecting faults in variable-air-volume
// boxes", ASHRAE Transactions 109(2), 2003) the charts watch a performance
// variable for a persistent shift, here the coil's heat delivery:
//
//   - lower one-sided tabular CUSUM (Page 1954; Montgomery, Introduction to
//     Statistical Quality Control, §9.1): C⁻ₙ = max(0, C⁻ₙ₋₁ − zₙ − k), in
//     sigma units; a slow loss of capacity accumulates until C⁻ exceeds h
//     (h = 4–5 is the usual design value for k = 0.5);
//   - EWMA (Roberts 1959; Lucas & Saccucci, Technometrics 32(1), 1990):
//     Eₙ = λ·zₙ + (1−λ)·Eₙ₋₁ with the asymptotic limit ±L·√(λ/(2−λ)).
type chart struct {
	blockSum float64
	blockN   int
	cusumLow float64
	ewma     float64
	started  bool
}

// add feeds one standardised residual; a block mean goes to the charts
// every block samples.
func (c *chart) add(z float64, block int, k, lambda float64) {
	c.blockSum += z
	c.blockN++
	if c.blockN < block {
		return
	}
	m := c.blockSum / float64(c.blockN)
	c.blockSum, c.blockN = 0, 0
	c.cusumLow = math.Max(0, c.cusumLow-m-k)
	if !c.started {
		c.ewma = m
		c.started = true
		return
	}
	c.ewma = lambda*m + (1-lambda)*c.ewma
}

// ewmaLimit is the asymptotic EWMA control limit L·√(λ/(2−λ)) (Lucas &
// Saccucci 1990).
func ewmaLimit(lambda, l float64) float64 { return l * math.Sqrt(lambda/(2-lambda)) }

// ewma is a plain exponentially weighted mean with a validity flag; v is
// NaN until the first value (newEWMA), so it is the published value as is.
type ewma struct {
	v  float64
	ok bool
}

func newEWMA() ewma { return ewma{v: math.NaN()} }

func (e *ewma) add(x, a float64) {
	if !e.ok {
		e.v, e.ok = x, true
		return
	}
	e.v += a * (x - e.v)
}

func (e *ewma) value() float64 {
	if !e.ok {
		return math.NaN()
	}
	return e.v
}

// alphaFor is the EWMA weight for a time constant of tauSteps steps:
// α = 1 − exp(−1/τ).
func alphaFor(tauSteps float64) float64 {
	if tauSteps <= 1 {
		return 1
	}
	return -math.Expm1(-1 / tauSteps)
}

// reversals counts direction changes of a signal that exceed a deadband
// (hunting), as an exponentially weighted rate per step.
type reversals struct {
	extreme float64 // last turning value
	dir     int8    // +1 rising, −1 falling, 0 unknown
	started bool
	rate    float64 // EW mean of reversal events per step
}

func (r *reversals) add(x, deadband, a float64) {
	ev := 0.0
	switch {
	case !r.started:
		r.extreme, r.started = x, true
	case r.dir >= 0 && x > r.extreme:
		r.extreme, r.dir = x, 1
	case r.dir <= 0 && x < r.extreme:
		r.extreme, r.dir = x, -1
	case r.dir >= 0 && x < r.extreme-deadband:
		if r.dir == 1 {
			ev = 1
		}
		r.extreme, r.dir = x, -1
	case r.dir <= 0 && x > r.extreme+deadband:
		if r.dir == -1 {
			ev = 1
		}
		r.extreme, r.dir = x, 1
	}
	r.rate += a * (ev - r.rate)
}

func (r *reversals) reset() { *r = reversals{} }
