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

// hourAgg is one hour of one terminal: sums and counts of the plotted
// evidence (NaN values are not counted). 28 bytes.
type hourAgg struct {
	hour                   int32 // Unix hours; 0 = empty slot
	nObs, nExp, nVlv, nAir uint16
	obs, exp, vlv, air     float32
}

// seriesRing holds every terminal's hourly aggregates in one flat slice
// (SeriesHours slots per terminal, indexed by hour modulo SeriesHours), so
// memory is fixed: terminals × 192 × 28 bytes ≈ 5.4 KB per terminal.
type seriesRing struct {
	mu    sync.RWMutex
	slots []hourAgg
	dirty []bool
}

func newSeriesRing(terminals int) *seriesRing {
	return &seriesRing{slots: make([]hourAgg, terminals*SeriesHours), dirty: make([]bool, terminals)}
}

func unixHour(t time.Time) int32 { return int32(t.Unix() / 3600) }

func (r *seriesRing) slot(ti int, h int32) *hourAgg {
	i := int(h) % SeriesHours
	if i < 0 {
		i += SeriesHours
	}
	return &r.slots[ti*SeriesHours+i]
}

// add folds one step of evidence in.
func (r *seriesRing) add(evs []fdd.Evidence) {
	r.mu.Lock()
	defer r.mu.Unlock()
	for i := range evs {
		ev := &evs[i]
		if ev.Terminal < 0 || ev.Terminal >= len(r.dirty) {
			continue
		}
		h := unixHour(ev.At)
		a := r.slot(ev.Terminal, h)
		if a.hour != h {
			if a.hour > h {
				continue // older than what the slot holds now
			}
			*a = hourAgg{hour: h}
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
		r.dirty[ev.Terminal] = true
	}
}

// SeriesPoint is one hour of a terminal's plotted evidence (means; NaN when
// the hour had no value).
type SeriesPoint struct {
	At                           time.Time // start of the hour
	ObservedRiseK, ExpectedRiseK float64
	ValveFrac, AirflowM3s        float64
}

func mean(s float32, n uint16) float64 {
	if n == 0 {
		return math.NaN()
	}
	return float64(s) / float64(n)
}

// points returns terminal ti's hours in [from, to), oldest first.
func (r *seriesRing) points(ti int, from, to time.Time) []SeriesPoint {
	r.mu.RLock()
	defer r.mu.RUnlock()
	if ti < 0 || ti >= len(r.dirty) {
		return nil
	}
	base := r.slots[ti*SeriesHours : (ti+1)*SeriesHours]
	var out []SeriesPoint
	lo, hi := unixHour(from), unixHour(to.Add(-time.Nanosecond))
	if hi-lo >= SeriesHours {
		lo = hi - SeriesHours + 1
	}
	for h := lo; h <= hi; h++ {
		i := int(h) % SeriesHours
		if i < 0 {
			i += SeriesHours
		}
		a := base[i]
		if a.hour != h {
			continue
		}
		out = append(out, SeriesPoint{At: time.Unix(int64(h)*3600, 0), ObservedRiseK: mean(a.obs, a.nObs),
			ExpectedRiseK: mean(a.exp, a.nExp), ValveFrac: mean(a.vlv, a.nVlv), AirflowM3s: mean(a.air, a.nAir)})
	}
	return out
}

const seriesBlobVersion = 1

// marshal encodes terminal ti's slots (little-endian, fixed layout).
func (r *seriesRing) marshal(ti int) []byte {
	r.mu.RLock()
	defer r.mu.RUnlock()
	b := make([]byte, 0, 1+SeriesHours*28)
	b = append(b, seriesBlobVersion)
	for _, a := range r.slots[ti*SeriesHours : (ti+1)*SeriesHours] {
		if a.hour == 0 {
			continue
		}
		b = binary.LittleEndian.AppendUint32(b, uint32(a.hour))
		for _, n := range []uint16{a.nObs, a.nExp, a.nVlv, a.nAir} {
			b = binary.LittleEndian.AppendUint16(b, n)
		}
		for _, f := range []float32{a.obs, a.exp, a.vlv, a.air} {
			b = binary.LittleEndian.AppendUint32(b, math.Float32bits(f))
		}
	}
	return b
}

// unmarshal restores terminal ti's slots from a blob written by marshal.
func (r *seriesRing) unmarshal(ti int, b []byte) error {
	if len(b) < 1 || b[0] != seriesBlobVersion || (len(b)-1)%28 != 0 {
		return errors.New("series blob: unknown version or truncated")
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	for p := b[1:]; len(p) >= 28; p = p[28:] {
		a := hourAgg{hour: int32(binary.LittleEndian.Uint32(p))}
		a.nObs, a.nExp = binary.LittleEndian.Uint16(p[4:]), binary.LittleEndian.Uint16(p[6:])
		a.nVlv, a.nAir = binary.LittleEndian.Uint16(p[8:]), binary.LittleEndian.Uint16(p[10:])
		a.obs = math.Float32frombits(binary.LittleEndian.Uint32(p[12:]))
		a.exp = math.Float32frombits(binary.LittleEndian.Uint32(p[16:]))
		a.vlv = math.Float32frombits(binary.LittleEndian.Uint32(p[20:]))
		a.air = math.Float32frombits(binary.LittleEndian.Uint32(p[24:]))
		if s := r.slot(ti, a.hour); s.hour <= a.hour {
			*s = a
		}
	}
	return nil
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
