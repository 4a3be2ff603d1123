package daemon

import (
	"context"
	"time"

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
