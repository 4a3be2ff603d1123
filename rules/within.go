package rules

import (
	"sort"
	"time"
	"unsafe"
)

// heldBins is the number of bins a within window is kept in: the held time
// of the window is resolved to Within/heldBins (an hour for 24 h).
const heldBins = 24

// heldTime is the condition-true time of one pending tracker of a rule with
// a within window, by bin of Within/heldBins: bin[k] is the bin number
// (Unix ns / bin length) whose time ns[k] holds, so a slot is reused once
// its bin has left the window.
type heldTime struct {
	bin  [heldBins]int64
	ns   [heldBins]int64
	prev bool // the last judged record was true (at tracker.last)
}

// heldBinNs is the bin length of c's within window (Within/heldBins).
func (c *compiled) heldBinNs() int64 { return max(c.withinNs/heldBins, 1) }

// add credits dt of condition-true time to the bin of at.
func (h *heldTime) add(at, dt, binNs int64) {
	b := at / binNs
	k := b % heldBins
	if h.bin[k] != b {
		h.bin[k], h.ns[k] = b, 0
	}
	h.ns[k] += dt
}

// total is the held time in the window that ends with the bin of at: the
// bins numbered within heldBins−1 of it.
func (h *heldTime) total(at, binNs int64) int64 {
	cur := at / binNs
	var s int64
	for k := range h.bin {
		if b := h.bin[k]; b <= cur && b > cur-heldBins {
			s += h.ns[k]
		}
	}
	return s
}

// pendWithin is pend for a rule with a within window: For is the total
// time the condition held within the last Within, not one run. Time
// between two consecutive true records (at most the engine's gap apart,
// as for a run) is credited to the bin of the later one; a false record
// ends the credit but keeps what is held; records whose gates fail are not
// judged. The tracker stays pending (since ≠ 0, so it sees every record)
// while the window holds any time, and goes idle when it has emptied.
func (e *Evaluator) pendWithin(tk *tracker, c *compiled, gatesOK bool, p unsafe.Pointer, at int64) bool {
	binNs := c.heldBinNs()
	h := e.held[tk]
	if h != nil && tk.since == 0 {
		// The tracker was reset elsewhere (a fault opened and
		// cleared, or an explaining fault): start afresh.
		*h = heldTime{}
	}
	if gatesOK {
		switch c.when.eval(p) {
		case triTrue:
			if h == nil {
				h = &heldTime{}
				e.held[tk] = h
			}
			if tk.since == 0 {
				tk.since = at
			}
			if dt := at - tk.last; h.prev && dt > 0 && dt <= e.maxGapNs {
				h.add(at, dt, binNs)
			}
			h.prev, tk.last = true, at
			if len(c.showWhen) > 0 {
				e.keepShown(tk, c, p)
			}
		case triFalse:
			if h != nil {
				h.prev = false
			}
		}
	}
	if h == nil {
		tk.since = 0
		return false
	}
	if h.prev && at-tk.last > e.maxGapNs {
		h.prev = false
	}
	held := h.total(at, binNs)
	if held >= c.forNs {
		delete(e.held, tk)
		return true
	}
	if held == 0 && !h.prev {
		delete(e.held, tk)
		tk.since = 0
	}
	return false
}

// exportHeld is tracker tk's held time as snapshot records (nil without).
func (e *Evaluator) exportHeld(tk *tracker, c *compiled) []HeldRecord {
	h := e.held[tk]
	if h == nil || c.withinNs <= 0 || tk.f != nil {
		return nil
	}
	binNs := c.heldBinNs()
	var out []HeldRecord
	for k := range h.bin {
		if h.ns[k] > 0 {
			out = append(out, HeldRecord{Start: time.Unix(0, h.bin[k]*binNs).UTC(), Sec: float64(h.ns[k]) / 1e9})
		}
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Start.Before(out[j].Start) })
	return out
}

// importHeld restores a pending tracker's held time (records of rules
// without a within window, or non-positive ones, are ignored). The credit
// of a run in progress restarts with the next true record.
func (e *Evaluator) importHeld(tk *tracker, c *compiled, rs []HeldRecord) {
	if c.withinNs <= 0 || len(rs) == 0 || tk.since == 0 {
		return
	}
	binNs := c.heldBinNs()
	h := &heldTime{}
	for _, r := range rs {
		if r.Sec > 0 && !r.Start.IsZero() {
			at := r.Start.UnixNano()
			h.add(at, int64(r.Sec*1e9), binNs)
		}
	}
	e.held[tk] = h
}
