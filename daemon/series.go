package daemon

import (
	"encoding/binary"
	"errors"
	"math"
	"sync"
	"time"

	"risewatch/fdd"
)

// SeriesHours is how many hourly aggregates each terminal keeps: eight days,
// so the weekly report always has its whole week and the dashboard a week
// of plots.
const SeriesHours = 8 * 24

// BlobSeries is the store blob kind of a terminal's plot series.
const BlobSeries = "series"

// hourAcc is the hour in progress of one terminal: sums and counts of the
// plotted evidence (NaN values are not counted). 28 octets.
type hourAcc struct {
	hour                   int32 // Unix hours; 0 = nothing yet
	nObs, nExp, nVlv, nAir uint16
	obs, exp, vlv, air     float32
}

// hourMean is one closed hour: the four means in fixed point (8 octets),
// seriesEmpty where the hour had no value.
type hourMean [4]int16

// Fixed-point steps of the closed hours' means: rises 0.01 K (range
// ±327 K), valve fraction 0.0001, airflow 0.001 m³/s (2.1 cfm; range
// ±32 m³/s). Finer than any BAS sensor reports (common practice: 0.1 °F,
// 1 %, 1 cfm).
var seriesScale = [4]float64{100, 100, 1e4, 1e3}

const seriesEmpty = math.MinInt16

func quantize(v float64, scale float64) int16 {
	if math.IsNaN(v) {
		return seriesEmpty
	}
	return int16(max(-math.MaxInt16, min(math.MaxInt16, math.Round(v*scale))))
}

func unquantize(q int16, scale float64) float64 {
	if q == seriesEmpty {
		return math.NaN()
	}
	return float64(q) / scale
}

// seriesRing holds every terminal's hourly aggregates: the open hour as
// sums (so it can go on after a restart) and the closed hours as fixed-point
// means in one flat slice (SeriesHours slots per terminal, indexed by hour
// modulo SeriesHours). Memory is fixed: 28 + 4 + 192 × 8 ≈ 1.6 KB per
// terminal.
type seriesRing struct {
	mu     sync.RWMutex
	acc    []hourAcc
	newest []int32 // newest closed hour per terminal (0: none)
	closed []hourMean
	dirty  []bool
}

func newSeriesRing(terminals int) *seriesRing {
	return &seriesRing{acc: make([]hourAcc, terminals), newest: make([]int32, terminals),
		closed: make([]hourMean, terminals*SeriesHours), dirty: make([]bool, terminals)}
}

func unixHour(t time.Time) int32 { return int32(t.Unix() / 3600) }

func (r *seriesRing) slot(ti int, h int32) *hourMean {
	i := int(h) % SeriesHours
	if i < 0 {
		i += SeriesHours
	}
	return &r.closed[ti*SeriesHours+i]
}

func mean(s float32, n uint16) float64 {
	if n == 0 {
		return math.NaN()
	}
	return float64(s) / float64(n)
}

func (a *hourAcc) means() [4]float64 {
	return [4]float64{mean(a.obs, a.nObs), mean(a.exp, a.nExp), mean(a.vlv, a.nVlv), mean(a.air, a.nAir)}
}

// putClosed stores closed hour h of terminal ti. Hours between the newest
// closed hour and h become empty; an hour older than the window is dropped.
func (r *seriesRing) putClosed(ti int, h int32, m hourMean) {
	nw := r.newest[ti]
	switch {
	case h > nw:
		for x := max(nw+1, h-SeriesHours+1); x < h; x++ {
			*r.slot(ti, x) = hourMean{seriesEmpty, seriesEmpty, seriesEmpty, seriesEmpty}
		}
		r.newest[ti] = h
	case h <= nw-SeriesHours:
		return
	}
	*r.slot(ti, h) = m
}

func (a *hourAcc) closeMean() hourMean {
	var m hourMean
	for i, v := range a.means() {
		m[i] = quantize(v, seriesScale[i])
	}
	return m
}

// add folds one step of evidence in.
func (r *seriesRing) add(evs []fdd.Evidence) {
	r.mu.Lock()
	defer r.mu.Unlock()
	for i := range evs {
		ev := &evs[i]
		ti := ev.Terminal
		if ti < 0 || ti >= len(r.dirty) {
			continue
		}
		h := unixHour(ev.At)
		a := &r.acc[ti]
		if a.hour != h {
			if a.hour > h || h <= r.newest[ti] {
				continue // older than what the ring holds now
			}
			if a.hour != 0 {
				r.putClosed(ti, a.hour, a.closeMean())
			}
			*a = hourAcc{hour: h}
		}
		acc := func(n *uint16, s *float32, v float64) {
			if !math.IsNaN(v) && !math.IsInf(v, 0) && *n < math.MaxUint16 {
				*n++
				*s += float32(v)
			}
		}
		acc(&a.nObs, &a.obs, ev.ObservedRiseK)
		acc(&a.nExp, &a.exp, ev.ExpectedRiseK)
		acc(&a.nVlv, &a.vlv, ev.ValveFrac)
		acc(&a.nAir, &a.air, ev.AirflowM3s)
		r.dirty[ti] = true
	}
}

// SeriesPoint is one hour of a terminal's plotted evidence (means; NaN when
// the hour had no value).
type SeriesPoint struct {
	At                           time.Time // start of the hour
	ObservedRiseK, ExpectedRiseK float64
	ValveFrac, AirflowM3s        float64
}

// points returns terminal ti's hours in [from, to), oldest first (the hour
// in progress with its means so far).
func (r *seriesRing) points(ti int, from, to time.Time) []SeriesPoint {
	r.mu.RLock()
	defer r.mu.RUnlock()
	if ti < 0 || ti >= len(r.dirty) {
		return nil
	}
	var out []SeriesPoint
	lo, hi := unixHour(from), unixHour(to.Add(-time.Nanosecond))
	if hi-lo >= SeriesHours {
		lo = hi - SeriesHours + 1
	}
	a, nw := &r.acc[ti], r.newest[ti]
	for h := lo; h <= hi; h++ {
		var v [4]float64
		switch {
		case a.hour != 0 && h == a.hour:
			v = a.means()
		case nw != 0 && h <= nw && h > nw-SeriesHours:
			m := r.slot(ti, h)
			if m[0] == seriesEmpty && m[1] == seriesEmpty && m[2] == seriesEmpty && m[3] == seriesEmpty {
				continue
			}
			for i := range v {
				v[i] = unquantize(m[i], seriesScale[i])
			}
		default:
			continue
		}
		out = append(out, SeriesPoint{At: time.Unix(int64(h)*3600, 0), ObservedRiseK: v[0], ExpectedRiseK: v[1], ValveFrac: v[2], AirflowM3s: v[3]})
	}
	return out
}

// Store blob layouts (little-endian). Version 1: 28-octet hours (hour,
// four counts, four float32 sums). Version 2: the open hour as in version
// 1, then 12-octet closed hours (hour, four fixed-point means).
const (
	seriesBlobV1 = 1
	seriesBlobV2 = 2
)

func appendAcc(b []byte, a hourAcc) []byte {
	b = binary.LittleEndian.AppendUint32(b, uint32(a.hour))
	for _, n := range []uint16{a.nObs, a.nExp, a.nVlv, a.nAir} {
		b = binary.LittleEndian.AppendUint16(b, n)
	}
	for _, f := range []float32{a.obs, a.exp, a.vlv, a.air} {
		b = binary.LittleEndian.AppendUint32(b, math.Float32bits(f))
	}
	return b
}

func readAcc(p []byte) hourAcc {
	a := hourAcc{hour: int32(binary.LittleEndian.Uint32(p))}
	a.nObs, a.nExp = binary.LittleEndian.Uint16(p[4:]), binary.LittleEndian.Uint16(p[6:])
	a.nVlv, a.nAir = binary.LittleEndian.Uint16(p[8:]), binary.LittleEndian.Uint16(p[10:])
	a.obs = math.Float32frombits(binary.LittleEndian.Uint32(p[12:]))
	a.exp = math.Float32frombits(binary.LittleEndian.Uint32(p[16:]))
	a.vlv = math.Float32frombits(binary.LittleEndian.Uint32(p[20:]))
	a.air = math.Float32frombits(binary.LittleEndian.Uint32(p[24:]))
	return a
}

// marshal encodes terminal ti's series (version 2).
func (r *seriesRing) marshal(ti int) []byte {
	r.mu.RLock()
	defer r.mu.RUnlock()
	b := make([]byte, 0, 1+28+SeriesHours*12)
	b = append(b, seriesBlobV2)
	b = appendAcc(b, r.acc[ti])
	if nw := r.newest[ti]; nw != 0 {
		for h := nw - SeriesHours + 1; h <= nw; h++ {
			m := r.slot(ti, h)
			if m[0] == seriesEmpty && m[1] == seriesEmpty && m[2] == seriesEmpty && m[3] == seriesEmpty {
				continue
			}
			b = binary.LittleEndian.AppendUint32(b, uint32(h))
			for _, q := range m {
				b = binary.LittleEndian.AppendUint16(b, uint16(q))
			}
		}
	}
	return b
}

// unmarshal restores terminal ti's series from a blob of either version
// (restoring never replaces newer hours the ring already has).
func (r *seriesRing) unmarshal(ti int, b []byte) error {
	r.mu.Lock()
	defer r.mu.Unlock()
	switch {
	case len(b) >= 1 && b[0] == seriesBlobV1 && (len(b)-1)%28 == 0:
		var open hourAcc // the newest hour goes on accumulating
		for p := b[1:]; len(p) >= 28; p = p[28:] {
			if a := readAcc(p); a.hour > open.hour {
				if open.hour != 0 {
					r.putClosed(ti, open.hour, open.closeMean())
				}
				open = a
			} else if a.hour != 0 {
				r.putClosed(ti, a.hour, a.closeMean())
			}
		}
		r.restoreAcc(ti, open)
	case len(b) >= 29 && b[0] == seriesBlobV2 && (len(b)-29)%12 == 0:
		for p := b[29:]; len(p) >= 12; p = p[12:] {
			h := int32(binary.LittleEndian.Uint32(p))
			var m hourMean
			for i := range m {
				m[i] = int16(binary.LittleEndian.Uint16(p[4+2*i:]))
			}
			r.putClosed(ti, h, m)
		}
		r.restoreAcc(ti, readAcc(b[1:29]))
	default:
		return errors.New("series blob: unknown version or truncated")
	}
	return nil
}

func (r *seriesRing) restoreAcc(ti int, a hourAcc) {
	cur := &r.acc[ti]
	if a.hour == 0 || a.hour <= r.newest[ti] || a.hour < cur.hour {
		return
	}
	if cur.hour != 0 && cur.hour < a.hour {
		r.putClosed(ti, cur.hour, cur.closeMean())
	}
	*cur = a
}

// takeDirty returns the terminals changed since the last call and clears the marks.
func (r *seriesRing) takeDirty() []int {
	r.mu.Lock()
	defer r.mu.Unlock()
	var out []int
	for i, d := range r.dirty {
		if d {
			out = append(out, i)
			r.dirty[i] = false
		}
	}
	return out
}
