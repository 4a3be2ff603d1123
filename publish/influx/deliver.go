package influx

import (
	"context"
	"errors"
	"fmt"
	"time"

	"risewatch/store"
)

// Run delivers the outbox until ctx is cancelled, then closes the client. A
// disabled sink returns nil at once.
func (k *Sink) Run(ctx context.Context) error {
	if !k.Enabled() {
		return nil
	}
	defer k.client.Close() // flushes and stops the write API
	for {
		n, err := k.Deliver(ctx)
		k.reportBuffer(ctx)
		wait := k.cfg.PollInterval
		kick := k.kick
		switch {
		case err != nil && ctx.Err() == nil:
			wait = store.Backoff(k.failures-1, k.cfg.RetryBase, k.cfg.RetryMax)
			kick = nil // new points do not cut a back-off short
			if k.failures == 1 || k.failures%10 == 0 {
				k.cfg.Logger.Warn("influx sink: write failed; points stay in the outbox",
					"url", k.cfg.URL, "failures", k.failures, "retry_in", wait, "err", err)
			}
		case n == k.cfg.RoundItems:
			wait = 0 // more are due
		}
		t := time.NewTimer(wait)
		select {
		case <-ctx.Done():
			t.Stop()
			return nil
		case <-kick:
			t.Stop()
		case <-t.C:
		}
	}
}

// Deliver runs one delivery round: up to RoundItems due outbox items, each
// written as one batch and flushed, then marked sent. It stops at the first
// failure, which it records on the item with its retry time. It must not run
// concurrently with itself (Run calls it).
func (k *Sink) Deliver(ctx context.Context) (sent int, err error) {
	if !k.Enabled() {
		return 0, nil
	}
	items, err := k.ob.DueOn(ctx, k.cfg.Channel, time.Now(), k.cfg.RoundItems)
	if err != nil {
		return 0, err
	}
	for _, it := range items {
		if ctx.Err() != nil {
			return sent, ctx.Err()
		}
		raw, err := decodePayload(it.Payload)
		if err != nil {
			// A corrupt item can never succeed; park it at the longest delay
			// so it neither blocks the queue nor disappears silently.
			k.cfg.Logger.Error("influx sink: undecodable outbox item", "key", it.Key, "err", err)
			k.count1(func(s *Stats) { s.Discarded++ })
			_ = k.ob.MarkFailed(ctx, it.Key, err, time.Now().Add(k.cfg.RetryMax))
			continue
		}
		// One request per item (its lines as they are); a write under way
		// finishes on shutdown, bounded by the HTTP timeout.
		if werr := k.api.WriteRecord(context.WithoutCancel(ctx), string(raw)); werr != nil {
			k.failures++
			k.count1(func(s *Stats) { s.Failed++ })
			retry := time.Now().Add(store.Backoff(it.Attempts, k.cfg.RetryBase, k.cfg.RetryMax))
			if merr := k.ob.MarkFailed(ctx, it.Key, werr, retry); merr != nil {
				return sent, errors.Join(werr, merr)
			}
			return sent, fmt.Errorf("influx sink: %s: %w", k.cfg.URL, werr)
		}
		// A crash right here re-sends the item after restart with the same
		// points, which InfluxDB overwrites in place.
		if err := k.ob.MarkSent(ctx, it.Key, time.Now()); err != nil {
			return sent, err
		}
		k.failures = 0
		sent++
		k.count1(func(s *Stats) { s.Sent++ })
	}
	return sent, nil
}

func (k *Sink) reportBuffer(ctx context.Context) {
	if k.cfg.OnBuffer == nil {
		return
	}
	items, bytes, err := k.ob.Pending(ctx, k.cfg.Channel)
	if err == nil {
		k.cfg.OnBuffer(items, bytes)
	}
}

func (k *Sink) count1(f func(*Stats)) {
	k.statsMu.Lock()
	f(&k.stats)
	k.statsMu.Unlock()
}
