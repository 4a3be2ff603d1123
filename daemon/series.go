package daemon

import (
	"context"
	"encoding/binary"
	"errors"
	"math"
	"slices"
	"sort"
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

// closedHour is one closed hour of a terminal.
type closedHour struct {
	hour int32
	m    hourMean
}

// seriesRing holds every terminal's hourly aggregates. In memory: the open
// hour as sums (so it can go on after a restart), the newest closed hour,
// and the hours closed since they were last stored (pend). The closed
// hours of the eight-day window live in the store's series blob (load
// reads it; persist merges pend into it), so a terminal costs about 60
// octets here instead of 192 × 8 for the whole window. Without a store
// (load nil) the closed hours stay in pend, up to the window.
type seriesRing struct {
	mu     sync.RWMutex
	acc    []hourAcc
	newest []int32        // newest closed hour per terminal (0: none)
	pend   [][]closedHour // closed hours not yet stored, oldest first
	dirty  []bool
	// load returns terminal ti's stored series blob (nil when none).
	load func(ctx context.Context, ti int) ([]byte, error)
}

func newSeriesRing(terminals int) *seriesRing {
	return &seriesRing{acc: make([]hourAcc, terminals), newest: make([]int32, terminals),
		pend: make([][]closedHour, terminals), dirty: make([]bool, terminals)}
}

func unixHour(t time.Time) int32 { return int32(t.Unix() / 3600) }

func mean(s float32, n uint16) float64 {
	if n == 0 {
		return math.NaN()
	}
	return float64(s) / float64(n)
}

func (a *hourAcc) means() [4]float64 {
	return [4]float64{mean(a.obs, a.nObs), mean(a.exp, a.nExp), mean(a.vlv, a.nVlv), mean(a.air, a.nAir)}
}

// putClosed records closed hour h of terminal ti. An hour older than the
// window is dropped; hours that fall out of the window as the newest moves
// on leave pend (and are not read back from the store).
func (r *seriesRing) putClosed(ti int, h int32, m hourMean) {
	nw := r.newest[ti]
	if nw != 0 && h <= nw-SeriesHours {
		return
	}
	if h > nw {
		r.newest[ti] = h
	}
	p := r.pend[ti]
	i := sort.Search(len(p), func(i int) bool { return p[i].hour >= h })
	if i < len(p) && p[i].hour == h {
		p[i].m = m
	} else {
		p = slices.Insert(p, i, closedHour{h, m})
	}
	lo, k := r.newest[ti]-SeriesHours, 0
	for k < len(p) && p[k].hour <= lo {
		k++
	}
	if k > 0 {
		p = append(p[:0], p[k:]...)
	}
	r.pend[ti] = p
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
// in progress with its means so far): the stored hours, the hours closed
// since, and the open hour.
func (r *seriesRing) points(ctx context.Context, ti int, from, to time.Time) ([]SeriesPoint, error) {
	r.mu.RLock()
	if ti < 0 || ti >= len(r.dirty) {
		r.mu.RUnlock()
		return nil, nil
	}
	// pend before the store: a persist in between moves hours from pend to
	// the store, never the other way.
	a, nw, pend, load := r.acc[ti], r.newest[ti], slices.Clone(r.pend[ti]), r.load
	r.mu.RUnlock()
	var stored []closedHour
	if load != nil {
		raw, err := load(ctx, ti)
		if err != nil {
			return nil, err
		}
		if stored, _, err = decodeSeries(raw); err != nil {
			return nil, err
		}
	}
	lo, hi := unixHour(from), unixHour(to.Add(-time.Nanosecond))
	if hi-lo >= SeriesHours {
		lo = hi - SeriesHours + 1
	}
	var out []SeriesPoint
	for _, c := range mergeHours(stored, pend, nw) {
		if c.hour < lo || c.hour > hi || c.hour == a.hour || c.m.empty() {
			continue
		}
		var v [4]float64
		for i := range v {
			v[i] = unquantize(c.m[i], seriesScale[i])
		}
		out = append(out, seriesPoint(c.hour, v))
	}
	if a.hour != 0 && a.hour >= lo && a.hour <= hi {
		out = append(out, seriesPoint(a.hour, a.means()))
	}
	return out, nil
}

func seriesPoint(h int32, v [4]float64) SeriesPoint {
	return SeriesPoint{At: time.Unix(int64(h)*3600, 0), ObservedRiseK: v[0], ExpectedRiseK: v[1], ValveFrac: v[2], AirflowM3s: v[3]}
}

func (m hourMean) empty() bool {
	return m[0] == seriesEmpty && m[1] == seriesEmpty && m[2] == seriesEmpty && m[3] == seriesEmpty
}

// mergeHours is the window ending at newest of stored and pend hours (both
// sorted), pend winning where both have an hour.
func mergeHours(stored, pend []closedHour, newest int32) []closedHour {
	out := make([]closedHour, 0, len(stored)+len(pend))
	i, j := 0, 0
	for i < len(stored) || j < len(pend) {
		var c closedHour
		switch {
		case j == len(pend) || (i < len(stored) && stored[i].hour < pend[j].hour):
			c = stored[i]
			i++
		case i == len(stored) || pend[j].hour < stored[i].hour:
			c = pend[j]
			j++
		default: // same hour
			c = pend[j]
			i++
			j++
		}
		if c.hour > newest-SeriesHours && c.hour <= newest {
			out = append(out, c)
		}
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

// decodeSeries reads a stored blob of either version: its closed hours
// (sorted) and its open hour. A version 1 blob's newest hour is its open
// one. An empty blob has neither.
func decodeSeries(b []byte) (closed []closedHour, open hourAcc, err error) {
	switch {
	case len(b) == 0:
		return nil, hourAcc{}, nil
	case b[0] == seriesBlobV1 && (len(b)-1)%28 == 0:
		for p := b[1:]; len(p) >= 28; p = p[28:] {
			if a := readAcc(p); a.hour > open.hour {
				if open.hour != 0 {
					closed = append(closed, closedHour{open.hour, open.closeMean()})
				}
				open = a
			} else if a.hour != 0 {
				closed = append(closed, closedHour{a.hour, a.closeMean()})
			}
		}
	case len(b) >= 29 && b[0] == seriesBlobV2 && (len(b)-29)%12 == 0:
		for p := b[29:]; len(p) >= 12; p = p[12:] {
			c := closedHour{hour: int32(binary.LittleEndian.Uint32(p))}
			for i := range c.m {
				c.m[i] = int16(binary.LittleEndian.Uint16(p[4+2*i:]))
			}
			closed = append(closed, c)
		}
		open = readAcc(b[1:29])
	default:
		return nil, hourAcc{}, errors.New("series blob: unknown version or truncated")
	}
	slices.SortStableFunc(closed, func(x, y closedHour) int { return int(x.hour) - int(y.hour) })
	return closed, open, nil
}

// merged encodes terminal ti's series (version 2) from its stored blob and
// what is in memory, and returns the newest pend hour it includes (for
// dropStored once the blob is stored). An undecodable stored blob is
// replaced by what memory has.
func (r *seriesRing) merged(ti int, stored []byte) (blob []byte, upto int32) {
	old, _, err := decodeSeries(stored)
	if err != nil {
		old = nil
	}
	r.mu.RLock()
	defer r.mu.RUnlock()
	hours := mergeHours(old, r.pend[ti], r.newest[ti])
	if p := r.pend[ti]; len(p) > 0 {
		upto = p[len(p)-1].hour
	}
	return encodeSeries(r.acc[ti], hours), upto
}

// dropStored forgets terminal ti's pend hours up to upto: they are in the
// store now.
func (r *seriesRing) dropStored(ti int, upto int32) {
	r.mu.Lock()
	defer r.mu.Unlock()
	p, k := r.pend[ti], 0
	for k < len(p) && p[k].hour <= upto {
		k++
	}
	if k == len(p) {
		r.pend[ti] = nil
	} else {
		r.pend[ti] = append(p[:0], p[k:]...)
	}
}

func encodeSeries(open hourAcc, hours []closedHour) []byte {
	b := make([]byte, 0, 1+28+len(hours)*12)
	b = append(b, seriesBlobV2)
	b = appendAcc(b, open)
	for _, c := range hours {
		if c.m.empty() {
			continue
		}
		b = binary.LittleEndian.AppendUint32(b, uint32(c.hour))
		for _, q := range c.m {
			b = binary.LittleEndian.AppendUint16(b, uint16(q))
		}
	}
	return b
}

// marshal encodes terminal ti's series (version 2) from memory alone (a
// ring without a store).
func (r *seriesRing) marshal(ti int) []byte {
	b, _ := r.merged(ti, nil)
	return b
}

// unmarshal restores terminal ti's series from a stored blob of either
// version (restoring never replaces newer hours the ring already has).
// With a store behind the ring only the newest closed hour and the open
// hour are taken: the closed hours stay in the store.
func (r *seriesRing) unmarshal(ti int, b []byte) error {
	if len(b) == 0 {
		return errors.New("series blob: empty")
	}
	closed, open, err := decodeSeries(b)
	if err != nil {
		return err
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	for _, c := range closed {
		if r.load == nil {
			r.putClosed(ti, c.hour, c.m)
		} else if c.hour > r.newest[ti] {
			r.newest[ti] = c.hour
		}
	}
	r.restoreAcc(ti, open)
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
