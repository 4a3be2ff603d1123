package daemon

import (
	"context"
	"fmt"
	"strings"
	"time"

	"risewatch/fdd"
	"risewatch/publish/web"
	"risewatch/rules"
	"risewatch/site"
	"risewatch/store"
)

// The pipeline is the dashboard's web.Backend.
var _ web.Backend = (*pipeline)(nil)

// Site is the site (or shard) the pipeline analyses.
func (pl *pipeline) Site() *site.Site { return pl.p.site }

// Faults returns the raised faults: open, acknowledged or suppressed.
func (pl *pipeline) Faults(ctx context.Context) ([]rules.Transition, error) {
	return append([]rules.Transition(nil), pl.Faults0()...), nil
}

// History returns an entity's newest transitions from the store.
func (pl *pipeline) History(ctx context.Context, entity string, limit int) ([]rules.Transition, error) {
	if pl.st == nil {
		return nil, nil
	}
	return pl.st.History(ctx, store.HistoryQuery{Entity: entity, Limit: limit, Newest: true})
}

// viewIndex finds a terminal's newest evidence in the engine's own records
// (fdd.Engine.StepView), which the pipeline swaps and the engine rewrites
// only under pl.mu: no copy of every terminal's evidence (about 580 octets
// each) beside the engine's.
type viewIndex struct {
	evs []fdd.Evidence // the newest step's records
	at  []int32        // terminal → its record in evs; -1 before its first step
}

func newViewIndex(terminals int) viewIndex {
	x := viewIndex{at: make([]int32, terminals)}
	for i := range x.at {
		x.at[i] = -1
	}
	return x
}

// set records a step's evidence. A terminal absent from it keeps its
// position; get checks that the record there is still the terminal's.
func (x *viewIndex) set(evs []fdd.Evidence) {
	x.evs = evs
	for i := range evs {
		if t := evs[i].Terminal; t >= 0 && t < len(x.at) {
			x.at[t] = int32(i)
		}
	}
}

func (x *viewIndex) get(terminal int) (fdd.Evidence, bool) {
	if terminal < 0 || terminal >= len(x.at) {
		return fdd.Evidence{}, false
	}
	i := x.at[terminal]
	if i < 0 || int(i) >= len(x.evs) || x.evs[i].Terminal != terminal {
		return fdd.Evidence{}, false
	}
	return x.evs[i], true
}

// Latest is a terminal's newest evidence.
func (pl *pipeline) Latest(terminal int) (fdd.Evidence, bool) {
	pl.mu.RLock()
	defer pl.mu.RUnlock()
	return pl.view.get(terminal)
}

// Baseline is a terminal's current baseline and whether it is still
// learning (read under the lock the step holds).
func (pl *pipeline) Baseline(terminal int) (fdd.Baseline, bool) {
	pl.mu.RLock()
	defer pl.mu.RUnlock()
	return pl.eng.Baseline(terminal)
}

// Series returns a terminal's hourly plot points in [from, to).
func (pl *pipeline) Series(ctx context.Context, terminal int, from, to time.Time) ([]web.Point, error) {
	pts, err := pl.ring.points(ctx, terminal, from, to)
	if err != nil {
		return nil, err
	}
	out := make([]web.Point, len(pts))
	for i, p := range pts {
		out[i] = web.Point{At: p.At, ObservedRiseK: p.ObservedRiseK, ExpectedRiseK: p.ExpectedRiseK, ValveFrac: p.ValveFrac, AirflowM3s: p.AirflowM3s}
	}
	return out, nil
}

// Sources returns every collector's health.
func (pl *pipeline) Sources() []web.SourceHealth {
	out := make([]web.SourceHealth, len(pl.hs))
	for i, h := range pl.hs {
		out[i] = h.snapshot()
	}
	return out
}

// Ack records an acknowledgement and waits until the evaluator has it.
func (pl *pipeline) Ack(ctx context.Context, faultID, by, note string) error {
	return pl.acknowledge(ctx, store.Ack{FaultID: faultID, Action: store.ActionAck, Who: by, At: pl.Now(), Note: note})
}

// Snooze records a snooze until the given time and waits until applied.
func (pl *pipeline) Snooze(ctx context.Context, faultID, by string, until time.Time, note string) error {
	return pl.acknowledge(ctx, store.Ack{FaultID: faultID, Action: store.ActionSnooze, Who: by, At: pl.Now(), Until: until, Note: note})
}

func (pl *pipeline) acknowledge(ctx context.Context, a store.Ack) error {
	if strings.TrimSpace(a.Who) == "" {
		return fmt.Errorf("acknowledge %s: a name is required", a.FaultID)
	}
	known := false
	for _, f := range pl.Faults0() {
		if f.FaultID == a.FaultID {
			known = true
		}
	}
	if !known && a.Action == store.ActionAck {
		return fmt.Errorf("acknowledge %s: %w", a.FaultID, rules.ErrUnknownFault)
	}
	if err := pl.st.Acknowledge(ctx, a); err != nil {
		return err
	}
	reply := make(chan error, 1)
	select {
	case pl.applyReq <- reply:
	case <-ctx.Done():
		return ctx.Err()
	}
	select {
	case err := <-reply:
		return err
	case <-ctx.Done():
		return ctx.Err()
	}
}

// Now is the wall clock, or with DataClock the newest analysed step plus
// the wall time since it (simulated time keeps moving between steps).
func (pl *pipeline) Now() time.Time {
	if !pl.d.opts.DataClock {
		return time.Now()
	}
	pl.mu.RLock()
	defer pl.mu.RUnlock()
	if pl.prog.LastStep.IsZero() {
		return time.Now()
	}
	return pl.prog.LastStep
}
