package rules

import (
	"encoding/binary"
	"math/bits"
	"time"
	"unsafe"

	"risewatch/fdd"
)

// This file holds the per-sample path of Evaluator.Step for terminal
// evidence; BenchmarkStep measures it.

// stepTerminals evaluates the terminal rules over ev. This is the hot
// path: per record a gate mask, the operating-time sum and, when a rule
// could be affected at all, the prefilter; rules are looked at one by one
// only when the prefilter lets them through or their tracker is busy.
//
// The record's time in Unix nanoseconds and the heating-season bit are
// computed once per run of records stamped with the same instant (an
// assembler stamps every record of a step with one time; see stampOf).
// stepTerminalsWide, the plain per-record path, is what the tests compare
// this with.
func (e *Evaluator) stepTerminals(ev []fdd.Evidence, out []Transition) []Transition {
	if e.nW != 1 || e.noPrefilter {
		return e.stepTerminalsWide(ev, out)
	}
	if len(ev) == 0 {
		return out
	}
	// One prefilter word (up to rulesPerWord terminal rules): no word loop.
	// The loop keeps few values live across its one call (stepRecord
	// appends to e.out): the fewer there are, the fewer the compiler
	// spills and reloads per record.
	e.out = out
	hot := e.hot[:e.nT]
	gateOK := e.gateOK[:gateMaskMax+1]
	gap := opGap(e.maxGapNs)
	wall, ext := stampOf(&ev[0].At)
	at := ev[0].At.UnixNano()
	season := e.seasonMask(at)
	for i := range ev {
		x := &ev[i]
		t := x.Terminal
		if uint(t) >= uint(len(hot)) {
			continue
		}
		if w, xt := stampOf(&x.At); w != wall || xt != ext {
			wall, ext = w, xt
			at = x.At.UnixNano()
			season = e.seasonMask(at)
		}
		mask := flagMask(x) | season // gateMaskOf, by hand: the compiler does not inline it
		h := &hot[t]
		addOp(&h.op, at, gap, mask)
		if m, set := gateOK[mask&gateMaskMax]&h.en, h.busy; m|set != 0 {
			e.stepRecord(x, m, set, at, mask)
		}
	}
	out, e.out = e.out, nil
	return out
}

// stepRecord is the rest of stepTerminals for record x when some rule may
// see it (m: the rules the gates let through, set: the busy ones): the
// prefilter, then the rules, appending to e.out.
func (e *Evaluator) stepRecord(x *fdd.Evidence, m, set uint64, at int64, mask gateMask) {
	if m&^set != 0 {
		set |= m & e.pf.words[0].pass(unsafe.Pointer(x))
	}
	if set != 0 {
		e.out = e.stepRules(x.Terminal, 0, set, x, unsafe.Pointer(x), at, mask, e.out)
	}
}

// stampOf returns the two words of a time.Time that name its instant (wall
// and ext; the third is the location). Two times with both equal have the
// same UnixNano, which is computed from these two alone (time.go: sec from
// wall's monotonic flag and seconds or from ext, nsec from wall's low
// bits), so the hot path compares them instead of converting every
// record's time. Times of one instant with other words (a monotonic
// reading, say) are merely converted afresh.
func stampOf(t *time.Time) (uint64, int64) {
	w := (*timeWords)(unsafe.Pointer(t))
	return w.wall, w.ext
}

// timeWords is time.Time's layout (Go 1 to date): wall, ext, loc; the
// assertions below fail to compile if its size changes.
type timeWords struct {
	wall uint64
	ext  int64
	loc  unsafe.Pointer
}

var (
	_ [unsafe.Sizeof(time.Time{}) - unsafe.Sizeof(timeWords{})]struct{}
	_ [unsafe.Sizeof(timeWords{}) - unsafe.Sizeof(time.Time{})]struct{}
)

// seasonMask is gSeason when ns lies in the heating season, else 0.
func (e *Evaluator) seasonMask(ns int64) gateMask {
	if e.heatingSeason(ns) {
		return gSeason
	}
	return 0
}

// opGap is the maximum gap g as an unsigned bound for addOp: a gap dt
// counts when 0 < dt ≤ g, that is when uint64(dt−1) < uint64(g) for g ≥ 0
// (dt−1 wraps to a huge value for dt ≤ 0, and dt = MinInt64 wraps to
// MaxInt64, which is not below any uint64(g) ≤ MaxInt64); no gap counts
// for g ≤ 0, hence 0.
func opGap(g int64) uint64 { return uint64(max(g, 0)) }

// addOp is addOperating for the hot path with the gap bound from opGap:
// the same sums, one range compare for dt, and lastAt moved on with max
// (lastAt = at exactly when at > lastAt).
func addOp(o *operating, at int64, gap uint64, mask gateMask) {
	last := o.lastAt
	if dt := at - last; last != 0 && uint64(dt-1) < gap {
		o.totalNs += dt
		if mask&(gFan|gPlant) == gFan|gPlant {
			o.opNs += dt
		}
	}
	o.lastAt = max(at, last)
}

// stepTerminalsWide is stepTerminals for more than one prefilter word (or
// with the prefilter off, in tests).
func (e *Evaluator) stepTerminalsWide(ev []fdd.Evidence, out []Transition) []Transition {
	nW, nT := e.nW, e.nT
	gateOK, words := e.gateOK, e.pf.words
	for i := range ev {
		x := &ev[i]
		t := x.Terminal
		if t < 0 || t >= nT {
			continue
		}
		at := x.At.UnixNano()
		mask := e.gateMaskOf(x, at)
		e.accumulateOperating(t, at, mask)
		p := unsafe.Pointer(x)
		for w := 0; w < nW; w++ {
			set := *e.busyAt(t, w)
			if m := gateOK[int(mask)*nW+w] & *e.enAt(t, w); m&^set != 0 {
				if e.noPrefilter {
					set |= m
				} else {
					set |= m & words[w].pass(p)
				}
			}
			if set != 0 {
				out = e.stepRules(t, w, set, x, p, at, mask, out)
			}
		}
	}
	return out
}

// gateMaskOf is the gate mask of one evidence record (inlined on the hot
// path).
func (e *Evaluator) gateMaskOf(x *fdd.Evidence, at int64) gateMask {
	mask := flagMask(x)
	if e.heatingSeason(at) {
		mask |= gSeason
	}
	return mask
}

// flagMask is the gate mask of the record's own truth values: Usable,
// Steady, PlantOn, FanOn and Occupied are consecutive bytes of the record
// (asserted below), each 0 or 1, read as one little-endian word w (byte i
// is bit 8i; the three bytes after them are whatever follows in the
// record). The product w·flagGather has bit 8i·2^(56−7i) = bit 56+i for
// byte i at i = 0..4: bits 56..60 are the five flags in gate-bit order
// (gUsable … gOccupied). Every other pair (byte i, term j) lands at bit
// 56+8i−7j, below 53 for i < j and at or above 64 for i > j (and for the
// bytes after the flags, i ≥ 5), all at distinct bits, so there are no
// carries into bits 56..63 and bits 61..63 are clear.
func flagMask(x *fdd.Evidence) gateMask {
	w := binary.LittleEndian.Uint64((*[8]byte)(unsafe.Pointer(&x.Usable))[:])
	return gateMask(w * flagGather >> 56)
}

// flagGather moves bit 8i of a word to bit 56+i for i = 0..4 (flagMask).
const flagGather = 1<<56 | 1<<49 | 1<<42 | 1<<35 | 1<<28

// flagMask's layout: the five truth values in gate-bit order, one byte
// apart, with a whole word from the first inside the record.
const flagsOff = unsafe.Offsetof(fdd.Evidence{}.Usable)

var (
	_ [unsafe.Offsetof(fdd.Evidence{}.Steady) - flagsOff - 1]struct{}
	_ [flagsOff + 1 - unsafe.Offsetof(fdd.Evidence{}.Steady)]struct{}
	_ [unsafe.Offsetof(fdd.Evidence{}.PlantOn) - flagsOff - 2]struct{}
	_ [flagsOff + 2 - unsafe.Offsetof(fdd.Evidence{}.PlantOn)]struct{}
	_ [unsafe.Offsetof(fdd.Evidence{}.FanOn) - flagsOff - 3]struct{}
	_ [flagsOff + 3 - unsafe.Offsetof(fdd.Evidence{}.FanOn)]struct{}
	_ [unsafe.Offsetof(fdd.Evidence{}.Occupied) - flagsOff - 4]struct{}
	_ [flagsOff + 4 - unsafe.Offsetof(fdd.Evidence{}.Occupied)]struct{}
	_ [unsafe.Sizeof(fdd.Evidence{}) - flagsOff - 8]struct{}
	_ [gUsable - 1<<0]struct{}
	_ [1<<0 - gUsable]struct{}
	_ [gSteady - 1<<1]struct{}
	_ [1<<1 - gSteady]struct{}
	_ [gPlant - 1<<2]struct{}
	_ [1<<2 - gPlant]struct{}
	_ [gFan - 1<<3]struct{}
	_ [1<<3 - gFan]struct{}
	_ [gOccupied - 1<<4]struct{}
	_ [1<<4 - gOccupied]struct{}
)

// stepRules runs the rules of prefilter word w whose bits are in set on
// terminal t, in rule order. Rules outside set are idle and cannot change
// at this step (gates or a necessary clause fail).
func (e *Evaluator) stepRules(t, w int, set uint64, ev *fdd.Evidence, p unsafe.Pointer, at int64, mask gateMask, out []Transition) []Transition {
	n := len(e.term)
	trks := e.trk[t*n : t*n+n]
	busy := e.busyAt(t, w)
	for ; set != 0; set &= set - 1 {
		k := bits.TrailingZeros64(set) &^ 1
		r := w*rulesPerWord + k/2
		tk := &trks[r]
		if !tk.off {
			out = e.stepRule(t, e.term[r], tk, ev, p, at, mask, out)
		}
		if tk.since != 0 || tk.f != nil {
			*busy |= 1 << uint(k)
		} else {
			*busy &^= 1 << uint(k)
		}
	}
	return out
}

// stepRule advances rule c on terminal t.
func (e *Evaluator) stepRule(t int, c *compiled, tk *tracker, ev *fdd.Evidence, p unsafe.Pointer, at int64, mask gateMask, out []Transition) []Transition {
	gatesOK := mask&c.need == c.need && mask&c.forbid == 0 && c.gates.eval(p) == triTrue
	if tk.f == nil {
		l := e.termLoop[t]
		if l < 0 {
			l = e.nL
		}
		if gatesOK && (e.explain[t]|e.loopExplain[l])&(1<<uint(c.kind)) != 0 {
			tk.since = 0
			return out
		}
		if e.pend(tk, c, gatesOK, p, at) {
			out = e.activate(EntityTerminal, t, c, tk, p, ev.At, out)
		}
		return out
	}
	f := tk.f
	if f.lastEnergyAt != at {
		f.observe(ev, at, mask)
	}
	if e.release(tk, c, gatesOK, p, at) {
		out = e.deactivate(EntityTerminal, t, c, tk, ev.At, out)
	} else if gatesOK && f.lastTrueAt != at && c.when.eval(p) == triTrue {
		f.lastTrueAt = at
		if len(c.showWhen) == 0 {
			f.lastTerm = *ev
		} else if c.showWhen.eval(p) == triTrue {
			f.lastTerm, f.lastShown = *ev, true
		} else if !f.lastShown {
			f.lastTerm = *ev
		}
		f.hasLast = true
		f.confidence = c.confidenceAt(p)
	}
	return out
}

// rebuildBusy marks every terminal tracker that is not idle (after Import).
func (e *Evaluator) rebuildBusy() {
	n := len(e.term)
	for t := 0; t < e.nT; t++ {
		for r := 0; r < n; r++ {
			tk := &e.trk[t*n+r]
			if tk.since != 0 || tk.f != nil {
				*e.busyAt(t, r/rulesPerWord) |= 1 << (2 * uint(r%rulesPerWord))
			}
		}
	}
}
