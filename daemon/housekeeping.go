package daemon

import (
	"context"
	"errors"
	"time"

	"risewatch/fdd"

	"risewatch/publish/notify"
	"risewatch/rules"
	"risewatch/store"
)

// Housekeeping on the pipeline's timers: acknowledgements, e-mail rounds
// and the outbox purge.

// purgeSent deletes sent outbox rows older than outbox_keep (wall clock:
// the outbox stamps sending with it). Pending rows are never touched.
func (pl *pipeline) purgeSent(ctx context.Context) {
	n, err := pl.st.PurgeSent(ctx, "", time.Now().Add(-pl.p.cfg.OutboxKeep))
	switch {
	case err != nil && ctx.Err() == nil:
		pl.d.log.Warn("outbox: sent rows not purged", "err", err)
	case n > 0:
		pl.d.log.Info("outbox: sent rows purged", "rows", n, "older_than", pl.p.cfg.OutboxKeep)
	}
}

// applyAcks applies acknowledgements and snoozes recorded in the store
// (by the dashboard or `risewatch ack`) that the evaluator has not seen.
func (pl *pipeline) applyAcks(ctx context.Context) error {
	acks, err := pl.st.AcksSince(ctx, time.Time{})
	if err != nil {
		return err
	}
	var trs []rules.Transition
	cursor := pl.prog.AckCursor
	for _, a := range acks {
		if a.ID <= cursor {
			continue
		}
		cursor = max(cursor, a.ID)
		var tr *rules.Transition
		var err error
		switch a.Action {
		case store.ActionAck:
			tr, err = pl.ev.Ack(a.FaultID, a.Who, a.At)
		case store.ActionSnooze:
			tr, err = pl.ev.Suppress(a.FaultID, a.Until)
		case store.ActionUnsnooze:
			tr, err = pl.ev.Suppress(a.FaultID, time.Time{})
		case store.ActionRelearn:
			if !pl.relearn(ctx, a) {
				continue
			}
		}
		if err != nil {
			pl.d.log.Warn("acknowledgement not applied", "fault", a.FaultID, "action", a.Action, "by", a.Who, "err", err)
			continue
		}
		if tr != nil {
			trs = append(trs, *tr)
		}
	}
	if cursor == pl.prog.AckCursor {
		return nil
	}
	pl.mu.Lock()
	pl.prog.AckCursor = cursor
	pl.mu.Unlock()
	for i := range trs {
		pl.sink.AddTransition(&trs[i])
	}
	err = pl.commit(ctx, trs)
	if len(trs) == 0 && err == nil {
		return nil
	}
	open := pl.ev.Open()
	pl.mu.Lock()
	pl.open = open
	pl.mu.Unlock()
	return err
}

// relearn applies a relearn request: the terminal's baseline is learned
// again from the samples that follow, and its stored baseline is deleted
// so a restart does not bring the old one back. A terminal of another
// shard (or no longer in the site) is left to its owner. It reports
// whether the request was for this pipeline.
func (pl *pipeline) relearn(ctx context.Context, a store.Ack) bool {
	term, _ := store.BaselineTerminal(a.FaultID)
	pl.mu.Lock()
	err := pl.eng.Relearn(term)
	pl.mu.Unlock()
	if errors.Is(err, fdd.ErrUnknownTerminal) {
		return false
	}
	if err != nil {
		pl.d.log.Warn("baseline relearn: the rated model could not be built", "terminal", term, "err", err)
	}
	if err := pl.st.DeleteTerminalBlob(ctx, term, store.BlobBaseline); err != nil {
		pl.d.log.Warn("baseline relearn: the stored baseline was not deleted; a restart before learning ends brings it back", "terminal", term, "err", err)
	}
	pl.d.log.Info("baseline relearn: learning again", "terminal", term, "by", a.Who, "note", a.Note)
	return true
}

// notifyLoop groups, reminds, digests and delivers e-mail on a timer.
func (pl *pipeline) notifyLoop(ctx context.Context) {
	t := time.NewTicker(pl.d.opts.NotifyEvery)
	defer t.Stop()
	for {
		open := pl.Faults0()
		if err := pl.ntf.Remind(ctx, open, pl.Now()); err != nil && ctx.Err() == nil {
			pl.d.log.Warn("notify: reminders", "err", err)
		}
		if err := pl.ntf.Digest(ctx, open); err != nil && ctx.Err() == nil {
			pl.d.log.Warn("notify: digest", "err", err)
		}
		if err := pl.ntf.Flush(ctx); err != nil && ctx.Err() == nil {
			pl.d.log.Warn("notify: grouping", "err", err)
		}
		if _, err := pl.ntf.Deliver(ctx); err != nil && ctx.Err() == nil {
			pl.d.log.Warn("notify: delivery", "err", err)
		}
		for _, ch := range []string{notify.ChannelMail, notify.ChannelEvent} {
			if n, _, err := pl.st.Pending(ctx, ch); err == nil {
				pl.met.SetOutboxPending(ch, n)
			}
		}
		select {
		case <-ctx.Done():
			return
		case <-t.C:
		}
	}
}

// Faults0 is the current open list (copy-free read; do not modify).
func (pl *pipeline) Faults0() []rules.Transition {
	pl.mu.RLock()
	defer pl.mu.RUnlock()
	return pl.open
}
