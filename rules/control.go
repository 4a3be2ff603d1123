package rules

import (
	"errors"
	"fmt"
	"strings"
	"time"

	"risewatch/fdd"
)

// ErrUnknownFault is returned for a fault ID that names no raised fault (Ack)
// or no entity and kind of the site (Suppress).
var ErrUnknownFault = errors.New("unknown fault")

// Ack records that a person has seen an open fault. The fault stays open and
// visible in Open(), but outputs stop repeating notifications for it. It
// returns the transition to publish, or nil when the fault was already
// acknowledged.
func (e *Evaluator) Ack(faultID, by string, at time.Time) (*Transition, error) {
	f := e.byID[faultID]
	if f == nil {
		return nil, fmt.Errorf("ack %s: %w (it is not raised)", faultID, ErrUnknownFault)
	}
	if f.ackBy != "" && f.state == StateAcked {
		return nil, nil
	}
	f.ackBy, f.ackAt = strings.TrimSpace(by), at
	if f.ackBy == "" {
		f.ackBy = "unknown"
	}
	from := f.state
	if f.state == StateOpen {
		f.state = StateAcked
	}
	tr := e.transition(f, from, f.state, at)
	return &tr, nil
}

// Suppress hides a fault until the given time: while suppressed it is
// tracked (and may open and clear) but is published with state suppressed so
// outputs do not notify. The fault need not be raised yet. A zero until
// lifts the suppression. It returns the transition to publish, or nil when
// the visible state did not change.
func (e *Evaluator) Suppress(faultID string, until time.Time) (*Transition, error) {
	if _, _, err := e.parseFaultID(faultID); err != nil {
		return nil, fmt.Errorf("suppress %s: %w", faultID, err)
	}
	f := e.byID[faultID]
	if until.IsZero() {
		delete(e.suppress, faultID)
		if f != nil && f.state == StateSuppressed {
			return e.unsuppress(f, e.now), nil
		}
		return nil, nil
	}
	e.suppress[faultID] = until
	if f == nil {
		return nil, nil
	}
	f.suppressTil = until
	if f.state == StateSuppressed {
		return nil, nil
	}
	from := f.state
	f.state = StateSuppressed
	at := e.now
	if at.IsZero() {
		at = time.Now()
	}
	tr := e.transition(f, from, StateSuppressed, at)
	return &tr, nil
}

func (e *Evaluator) unsuppress(f *fault, at time.Time) *Transition {
	f.suppressTil = time.Time{}
	f.state = StateOpen
	if f.ackBy != "" {
		f.state = StateAcked
	}
	tr := e.transition(f, StateSuppressed, f.state, at)
	return &tr
}

// expireSuppressions lifts suppressions whose date has passed; faults still
// raised become visible again.
func (e *Evaluator) expireSuppressions(now time.Time, out []Transition) []Transition {
	for id, until := range e.suppress {
		if now.Before(until) {
			continue
		}
		delete(e.suppress, id)
		if f := e.byID[id]; f != nil && f.state == StateSuppressed {
			out = append(out, *e.unsuppress(f, until))
		}
	}
	return out
}

// parseFaultID splits "<entity>/<kind>" and checks both against the site.
func (e *Evaluator) parseFaultID(id string) (faultKey, string, error) {
	i := strings.LastIndexByte(id, '/')
	if i <= 0 || i == len(id)-1 {
		return faultKey{}, "", fmt.Errorf("%w: want <entity>/<kind>", ErrUnknownFault)
	}
	ent, ks := id[:i], id[i+1:]
	k, ok := fdd.ParseKind(ks)
	if !ok || k == fdd.KindNone {
		return faultKey{}, "", fmt.Errorf("%w: kind %q: want one of %s", ErrUnknownFault, ks, kindList())
	}
	if t, ok := e.termIdx[ent]; ok {
		return faultKey{EntityTerminal, t, k}, ent, nil
	}
	if l, ok := e.loopIdx[ent]; ok {
		return faultKey{EntityLoop, l, k}, ent, nil
	}
	return faultKey{}, "", fmt.Errorf("%w: no terminal or loop %q in site %s", ErrUnknownFault, ent, e.site.Name)
}

// Open returns every raised fault (open, acknowledged or suppressed) as a
// transition record whose From and To are its current state, ordered by
// fault ID.
func (e *Evaluator) Open() []Transition {
	fs := e.sortedFaults()
	out := make([]Transition, 0, len(fs))
	at := e.now
	for _, f := range fs {
		out = append(out, e.transition(f, f.state, f.state, at))
	}
	return out
}

// Pending lists the faults whose condition holds but whose persistence is
// not yet met: fault ID and since when.
func (e *Evaluator) Pending() map[string]time.Time {
	out := map[string]time.Time{}
	add := func(ent string, c *compiled, tk *tracker) {
		if tk.f == nil && tk.since != 0 {
			id := ent + "/" + c.kind.String()
			if e.byID[id] != nil {
				return
			}
			s := time.Unix(0, tk.since).UTC()
			if old, ok := out[id]; !ok || s.Before(old) {
				out[id] = s
			}
		}
	}
	for t := 0; t < e.nT; t++ {
		trks := e.trackers(EntityTerminal, t)
		for r, c := range e.term {
			add(e.site.Terminals[t].ID, c, &trks[r])
		}
	}
	for l := 0; l < e.nL; l++ {
		trks := e.trackers(EntityLoop, l)
		for r, c := range e.loop {
			add(e.site.Loops[l].ID, c, &trks[r])
		}
	}
	return out
}
