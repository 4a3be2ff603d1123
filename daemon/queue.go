package daemon

import (
	"context"
	"time"

	"risewatch/store"
)

// txKey carries the step's store transaction in a context.
type txKey struct{}

// withTx returns ctx carrying tx: outbox writes made through a txQueue with
// this context join the transaction.
func withTx(ctx context.Context, tx *store.Tx) context.Context {
	return context.WithValue(ctx, txKey{}, tx)
}

// txQueue is the store's outbox as notify.Queue (and influx.Outbox). An
// Enqueue whose context carries a transaction (withTx) is part of it, so a
// step's transitions, lifecycle state and the e-mail events they cause
// commit together; everything else goes to the store directly. It is safe
// for concurrent use: the transaction travels with the call, not in a field.
type txQueue struct{ st *store.Store }

func (q txQueue) Enqueue(ctx context.Context, key, channel string, payload []byte) error {
	if tx, ok := ctx.Value(txKey{}).(*store.Tx); ok && tx != nil {
		return tx.Enqueue(ctx, key, channel, payload)
	}
	return q.st.Enqueue(ctx, key, channel, payload)
}

func (q txQueue) DueOn(ctx context.Context, channel string, now time.Time, limit int) ([]store.OutboxItem, error) {
	return q.st.DueOn(ctx, channel, now, limit)
}

func (q txQueue) MarkSent(ctx context.Context, key string, at time.Time) error {
	return q.st.MarkSent(ctx, key, at)
}

func (q txQueue) MarkFailed(ctx context.Context, key string, cause error, retryAt time.Time) error {
	return q.st.MarkFailed(ctx, key, cause, retryAt)
}

func (q txQueue) Pending(ctx context.Context, channel string) (int, int64, error) {
	return q.st.Pending(ctx, channel)
}

// Notifications says what was sent about a fault, so the notifier tells a
// fault opening again from one opening for the first time ("re-opened").
// The store runs in WAL mode: this read does not wait for a write
// transaction in progress.
func (q txQueue) Notifications(ctx context.Context, faultID string) ([]store.Notification, error) {
	return q.st.Notifications(ctx, faultID)
}

// RecordNotification keeps "what was sent to whom" (the notifier looks for it).
func (q txQueue) RecordNotification(ctx context.Context, n store.Notification) error {
	return q.st.RecordNotification(ctx, n)
}
