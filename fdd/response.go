package fdd

import "math"

// Command bins for the rise-versus-command response. Edges are fractions of
// full command; bin 0 is "closed" (≤ ClosedValveFrac, set at run time).
var binEdges = [...]float64{0.10, 0.30, 0.50, 0.70, 1.01}

const nBins = len(binEdges) + 1

// Bins used for the starved-versus-fouled shortfall split: low/mid command is
// 10–50 %, high command is above 70 % (Evidence.ShortfallLowK/HighK).
const (
	binLowA = 2 // 10–30 %
	binLowB = 3 // 30–50 %
	binHigh = 5 // 70–100 %
)

// binMinWeight is the decayed sample weight a bin needs to count as seen.
const binMinWeight = 5

// response accumulates, with exponential forgetting, how the observed and
// expected rise vary with valve command on steady samples with the plant on:
// per-bin means (span, shortfall by command) and the moments for the
// rise–command correlation.
type response struct {
	w, cmd, obs, exp, res     [nBins]float64 // decayed Σw, Σw·u, Σw·rise, Σw·expected, Σw·residual
	nExp                      [nBins]float64 // decayed weight of samples with a model value
	sw, su, sr, suu, srr, sur float64
	pending                   int // steps since the last decay
}

// binOf returns the command bin of u.
func binOf(u, closed float64) int {
	if u <= closed {
		return 0
	}
	for i, e := range binEdges {
		if u < e {
			return i + 1
		}
	}
	return nBins - 1
}

// add records one sample; exp and res may be NaN (no model value).
func (r *response) add(u, obs, exp, res, closed float64) {
	b := binOf(u, closed)
	r.w[b]++
	r.cmd[b] += u
	r.obs[b] += obs
	if !math.IsNaN(exp) {
		r.exp[b] += exp
		r.res[b] += res
		r.nExp[b]++
	}
	r.sw++
	r.su += u
	r.sr += obs
	r.suu += u * u
	r.srr += obs * obs
	r.sur += u * obs
}

// decay applies the forgetting factor f to every sum (called every few steps
// with f = λ^steps so the per-step cost stays constant).
func (r *response) decay(f float64) {
	for i := range r.w {
		r.w[i] *= f
		r.cmd[i] *= f
		r.obs[i] *= f
		r.exp[i] *= f
		r.res[i] *= f
		r.nExp[i] *= f
	}
	r.sw *= f
	r.su *= f
	r.sr *= f
	r.suu *= f
	r.srr *= f
	r.sur *= f
}

// responseStats are the numbers derived from the bins.
type responseStats struct {
	corr, riseSpan, expSpan, valveSpan float64
	shortHigh, shortLow                float64
	perfHigh, perfLow                  float64
}

// stats computes the correlation (Pearson, weighted), the observed and
// expected rise span between the lowest and highest seen open bins, the
// command span and the mean residual in the low and high bins. NaN where a
// value is not available.
func (r *response) stats() responseStats {
	nan := math.NaN()
	s := responseStats{corr: nan, riseSpan: nan, expSpan: nan, valveSpan: nan, shortHigh: nan, shortLow: nan, perfHigh: nan, perfLow: nan}
	if r.sw >= 2*binMinWeight {
		mu, mr := r.su/r.sw, r.sr/r.sw
		vu := r.suu/r.sw - mu*mu
		vr := r.srr/r.sw - mr*mr
		if vu > 1e-4 && vr > 1e-6 {
			c := (r.sur/r.sw - mu*mr) / math.Sqrt(vu*vr)
			s.corr = math.Max(-1, math.Min(1, c))
		} else if vu > 1e-2 {
			s.corr = 0 // command moved, rise did not: no response at all
		}
	}
	lo, hi := -1, -1
	for b := 0; b < nBins; b++ {
		if r.w[b] >= binMinWeight {
			if lo < 0 {
				lo = b
			}
			hi = b
		}
	}
	if lo >= 0 && hi > lo {
		s.valveSpan = r.cmd[hi]/r.w[hi] - r.cmd[lo]/r.w[lo]
		s.riseSpan = r.obs[hi]/r.w[hi] - r.obs[lo]/r.w[lo]
		if r.nExp[hi] >= binMinWeight && r.nExp[lo] >= binMinWeight {
			s.expSpan = r.exp[hi]/r.nExp[hi] - r.exp[lo]/r.nExp[lo]
		}
	}
	if r.nExp[binHigh] >= binMinWeight {
		s.shortHigh = r.res[binHigh] / r.nExp[binHigh]
		if ex := r.exp[binHigh]; ex > minExpectedRiseK*r.nExp[binHigh] {
			s.perfHigh = (ex + r.res[binHigh]) / ex
		}
	}
	if n := r.nExp[binLowA] + r.nExp[binLowB]; n >= binMinWeight {
		s.shortLow = (r.res[binLowA] + r.res[binLowB]) / n
		if ex := r.exp[binLowA] + r.exp[binLowB]; ex > minExpectedRiseK*n {
			s.perfLow = (ex + r.res[binLowA] + r.res[binLowB]) / ex
		}
	}
	return s
}
