package collector

import (
	"math"
	"time"
)

// Resampling defaults.
const (
	// DefaultInterval is the analysis grid step.
	DefaultInterval = time.Minute
	// DefaultMaxGap is how long a reading's value is held before the point
	// counts as missing. 20 min covers the common 15-min trend-log interval
	// with margin for a late sample (common practice).
	DefaultMaxGap = 20 * time.Minute
	// DefaultMinCoverage is the fraction of a step that good data must cover
	// for an analog step to be usable (common practice: half the step).
	DefaultMinCoverage = 0.5
)

// ResampleConfig sets the analysis grid and the gap limit.
type ResampleConfig struct {
	Interval    time.Duration // grid step; steps are aligned to multiples of Interval since the Unix epoch
	MaxGap      time.Duration // a reading's value is held at most this long; beyond it the point is missing
	MinCoverage float64       // analog: fraction of the step good data must cover (0..1)
}

// WithDefaults fills zero fields with the package defaults.
func (c ResampleConfig) WithDefaults() ResampleConfig {
	if c.Interval <= 0 {
		c.Interval = DefaultInterval
	}
	if c.MaxGap <= 0 {
		c.MaxGap = DefaultMaxGap
	}
	if c.MinCoverage <= 0 || c.MinCoverage > 1 {
		c.MinCoverage = DefaultMinCoverage
	}
	return c
}

// Bin is one point on one grid step [Start, Start+Interval).
type Bin struct {
	Start    time.Time
	Value    float64 // SI; NaN when Quality is not Good
	Quality  Quality
	Coverage float64 // fraction of the step covered by good data
}

// binFunc receives a closed step: its start (Unix ns), value, quality and
// good coverage. It is the internal, allocation-free form of Bin.
type binFunc func(startNs int64, v float64, q Quality, cov float64)

// Resampler turns one point's readings, arriving in time order, into steps
// on the analysis grid. It is the project's one resampling algorithm; the
// assembler runs one per point and Resample wraps it for slices.
//
// Readings are taken as samples of a piecewise-constant signal: each value
// holds from its time until the next reading (zero-order hold, which is how
// change-of-value and interval trend logs record a BAS point), but for at
// most MaxGap. Past that the point is missing, so a gap longer than the
// limit is marked, not bridged. A Missing or Bad reading ends the previous
// value's hold.
//
// Analog points: the step value is the time-weighted mean of the good
// values over the step, ∑vᵢ·Δtᵢ / ∑Δtᵢ, usable when good data cover at
// least MinCoverage of the step. Binary points: the step value is the last
// value, the state in effect at the end of the step (or the last good state
// seen in the step when the end is unknown).
type Resampler struct {
	g grid
	s resState
}

// grid is the resampling settings shared by every point of an assembler
// (one copy, not one per point: a campus has tens of thousands of points).
type grid struct {
	interval, maxGap int64
	minCov           float64
}

func newGrid(cfg ResampleConfig) grid {
	cfg = cfg.WithDefaults()
	return grid{interval: int64(cfg.Interval), maxGap: int64(cfg.MaxGap), minCov: cfg.MinCoverage}
}

// resState is one point's resampling state (56 octets). The open step is
// not stored: it is always the step containing pos (floorStep(pos)),
// because pos only ever stops inside a step or at the start of the next.
type resState struct {
	pos     int64 // time accounted up to, ns
	holdEnd int64 // the held state is valid before this time
	good    int64 // ns of good data in the open step
	bad     int64 // ns of bad data in the open step

	holdV float64
	// acc is, for an analog point, ∑ v·Δt over the good data in the open
	// step; for a binary point, the last good value in it.
	acc float64

	holdQ    Quality
	binary   bool
	started  bool
	seenGood bool
}

// NewResampler returns a resampler for one point.
func NewResampler(cfg ResampleConfig, binary bool) *Resampler {
	return &Resampler{g: newGrid(cfg), s: resState{binary: binary}}
}

// floorStep returns the start of the grid step containing t (ns).
func floorStep(t, interval int64) int64 {
	s := t - t%interval
	if t%interval < 0 {
		s -= interval
	}
	return s
}

// Add feeds one reading; emit receives every step the reading closes.
// It reports false, and ignores the reading, when it is older than what
// the resampler has already accounted for (out of order).
func (r *Resampler) Add(rd Reading, emit func(Bin)) bool {
	return r.s.add(&r.g, rd.At.UnixNano(), rd.Value, rd.Quality, wrapEmit(emit))
}

// Advance closes every step that ends at or before to, holding the last
// value (within MaxGap). Later readings must not be older than to.
func (r *Resampler) Advance(to time.Time, emit func(Bin)) {
	r.s.advance(&r.g, to.UnixNano(), wrapEmit(emit))
}

// Finish closes the open step as it stands (end of data).
func (r *Resampler) Finish(emit func(Bin)) { r.s.finish(&r.g, wrapEmit(emit)) }

func wrapEmit(emit func(Bin)) binFunc {
	return func(s int64, v float64, q Quality, cov float64) {
		emit(Bin{Start: time.Unix(0, s).UTC(), Value: v, Quality: q, Coverage: cov})
	}
}

// pending reports whether the open step has data not yet emitted.
func (r *resState) pending() bool { return r.good > 0 || r.bad > 0 || r.seenGood }

func (r *resState) finish(g *grid, emit binFunc) {
	if r.started && r.pending() {
		r.close(g, floorStep(r.pos, g.interval), emit)
	}
}

func (r *resState) add(g *grid, at int64, v float64, q Quality, emit binFunc) bool {
	if q == Good && (math.IsNaN(v) || math.IsInf(v, 0)) {
		q = Missing
	}
	if !r.started {
		r.started = true
		r.pos = at
	} else if at < r.pos {
		return false
	} else {
		r.advance(g, at, emit)
	}
	r.holdV, r.holdQ, r.holdEnd = v, q, at+g.maxGap
	return true
}

func (r *resState) advance(g *grid, to int64, emit binFunc) {
	if !r.started || to <= r.pos {
		return
	}
	for r.pos < to {
		if r.pos >= r.holdEnd && !r.pending() {
			// Nothing held and nothing pending: skip empty steps (they are missing).
			r.pos = to
			return
		}
		bin := floorStep(r.pos, g.interval)
		binEnd := bin + g.interval
		segEnd := min(to, binEnd)
		if h := min(segEnd, r.holdEnd); h > r.pos {
			d := h - r.pos
			switch r.holdQ {
			case Good:
				if r.binary {
					r.acc = r.holdV
				} else {
					r.acc += r.holdV * float64(d)
				}
				r.good += d
				r.seenGood = true
			case Bad:
				r.bad += d
			}
		}
		r.pos = segEnd
		if r.pos == binEnd {
			r.close(g, bin, emit)
		}
	}
}

// close emits the open step, which starts at bin, and resets the
// accumulators.
func (r *resState) close(g *grid, bin int64, emit binFunc) {
	cov := float64(r.good) / float64(g.interval)
	v, q := math.NaN(), Missing
	if r.binary {
		end := bin + g.interval
		switch {
		case r.holdEnd >= end && r.pos >= end && r.holdQ == Good:
			v, q = r.holdV, Good
		case r.seenGood:
			v, q = r.acc, Good
		case r.bad > 0:
			q = Bad
		}
	} else {
		switch {
		case r.good > 0 && cov >= g.minCov:
			v, q = r.acc/float64(r.good), Good
		case r.bad > 0:
			q = Bad
		}
	}
	emit(bin, v, q, cov)
	r.acc, r.good, r.bad, r.seenGood = 0, 0, 0, false
}

// Resample resamples one point's readings (in time order) to the grid and
// returns every step from the first reading's step to the last one's, with
// steps in gaps marked Missing. Out-of-order readings are dropped; the
// count of dropped readings is returned.
func Resample(readings []Reading, binary bool, cfg ResampleConfig) ([]Bin, int) {
	g := newGrid(cfg)
	r := resState{binary: binary}
	var out []Bin
	interval := g.interval
	var next int64 // next step start expected, for gap filling
	emit := func(s int64, v float64, q Quality, cov float64) {
		for len(out) > 0 && next < s {
			out = append(out, Bin{Start: time.Unix(0, next).UTC(), Value: math.NaN(), Quality: Missing})
			next += interval
		}
		out = append(out, Bin{Start: time.Unix(0, s).UTC(), Value: v, Quality: q, Coverage: cov})
		next = s + interval
	}
	dropped := 0
	for _, rd := range readings {
		if !r.add(&g, rd.At.UnixNano(), rd.Value, rd.Quality, emit) {
			dropped++
		}
	}
	if r.started {
		// Close the last reading's step: hold to its end (within MaxGap).
		r.advance(&g, floorStep(r.pos, interval)+interval, emit)
		r.finish(&g, emit)
	}
	return out, dropped
}
