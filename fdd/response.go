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
// rise–command correlation. One bin's sums sit together (one cache line per
// sample).
type response struct {
	bin                       [nBins]respBin
	sw, su, sr, suu, srr, sur float64
}

// respBin holds one command bin's decayed sums: Σw, Σw·u, Σw·rise,
// Σw·expected, Σw·residual, and the weight of samples with a model value.
type respBin struct{ w, cmd, obs, exp, res, nExp float64 }

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
	b := &r.bin[binOf(u, closed)]
	b.w++
	b.cmd += u
	b.obs += obs
	if !math.IsNaN(exp) {
		b.exp += exp
		b.res += res
		b.nExp++
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
	for i := range r.bin {
		b := &r.bin[i]
		b.w *= f
		b.cmd *= f
		b.obs *= f
		b.exp *= f
		b.res *= f
		b.nExp *= f
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
		if r.bin[b].w >= binMinWeight {
			if lo < 0 {
				lo = b
			}
			hi = b
		}
	}
	if lo >= 0 && hi > lo {
		s.valveSpan = r.bin[hi].cmd/r.bin[hi].w - r.bin[lo].cmd/r.bin[lo].w
		s.riseSpan = r.bin[hi].obs/r.bin[hi].w - r.bin[lo].obs/r.bin[lo].w
		if r.bin[hi].nExp >= binMinWeight && r.bin[lo].nExp >= binMinWeight {
			s.expSpan = r.bin[hi].exp/r.bin[hi].nExp - r.bin[lo].exp/r.bin[lo].nExp
		}
	}
	if r.bin[binHigh].nExp >= binMinWeight {
		s.shortHigh = r.bin[binHigh].res / r.bin[binHigh].nExp
		if ex := r.bin[binHigh].exp; ex > minExpectedRiseK*r.bin[binHigh].nExp {
			s.perfHigh = (ex + r.bin[binHigh].res) / ex
		}
	}
	if n := r.bin[binLowA].nExp + r.bin[binLowB].nExp; n >= binMinWeight {
		s.shortLow = (r.bin[binLowA].res + r.bin[binLowB].res) / n
		if ex := r.bin[binLowA].exp + r.bin[binLowB].exp; ex > minExpectedRiseK*n {
			s.perfLow = (ex + r.bin[binLowA].res + r.bin[binLowB].res) / ex
		}
	}
	return s
}
