package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"
)

// OutboxItem is one pending side effect.
type OutboxItem struct {
	Key       string // idempotency key, chosen by the producer
	Channel   string // "email", "influx", ...
	Payload   []byte
	CreatedAt time.Time
	DueAt     time.Time
	Attempts  int
	LastError string
}

// Enqueue adds a side effect to the outbox, due now. It is idempotent on key:
// enqueueing an existing key (pending or already sent) changes nothing.
func (s *Store) Enqueue(ctx context.Context, key, channel string, payload []byte) error {
	return enqueue(ctx, s.db, key, channel, payload, time.Now())
}

// Enqueue is Store.Enqueue inside a transaction: the side effect becomes
// durable together with the state change that causes it.
func (t *Tx) Enqueue(ctx context.Context, key, channel string, payload []byte) error {
	return enqueue(ctx, t.tx, key, channel, payload, time.Now())
}

func enqueue(ctx context.Context, q execer, key, channel string, payload []byte, now time.Time) error {
	if key == "" || channel == "" {
		return fmt.Errorf("store: outbox: empty key %q or channel %q", key, channel)
	}
	if payload == nil {
		payload = []byte{}
	}
	n := now.UnixNano()
	_, err := q.ExecContext(ctx, `INSERT INTO outbox (key, channel, payload, created_at, due_at)
		VALUES (?, ?, ?, ?, ?) ON CONFLICT (key) DO NOTHING`, key, channel, payload, n, n)
	if err != nil {
		return fmt.Errorf("store: outbox: enqueue %s: %w", key, err)
	}
	return nil
}

// Due returns up to limit unsent items of every channel due at or before now,
// oldest first.
func (s *Store) Due(ctx context.Context, now time.Time, limit int) ([]OutboxItem, error) {
	return s.due(ctx, "", now, limit)
}

// DueOn is Due restricted to one channel; each sink reads only its own.
func (s *Store) DueOn(ctx context.Context, channel string, now time.Time, limit int) ([]OutboxItem, error) {
	if channel == "" {
		return nil, errors.New("store: outbox: empty channel")
	}
	return s.due(ctx, channel, now, limit)
}

func (s *Store) due(ctx context.Context, channel string, now time.Time, limit int) ([]OutboxItem, error) {
	if limit <= 0 {
		limit = 100
	}
	q := `SELECT key, channel, payload, created_at, due_at, attempts, last_error FROM outbox
		WHERE sent_at = 0 AND due_at <= ?`
	args := []any{now.UnixNano()}
	if channel != "" {
		q += " AND channel = ?"
		args = append(args, channel)
	}
	q += " ORDER BY due_at, created_at, key LIMIT ?"
	args = append(args, limit)
	rows, err := s.db.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("store: outbox: due: %w", err)
	}
	defer rows.Close()
	var out []OutboxItem
	for rows.Next() {
		var it OutboxItem
		var created, due int64
		if err := rows.Scan(&it.Key, &it.Channel, &it.Payload, &created, &due, &it.Attempts, &it.LastError); err != nil {
			return nil, fmt.Errorf("store: outbox: due: %w", err)
		}
		it.CreatedAt, it.DueAt = fromNanos(created), fromNanos(due)
		out = append(out, it)
	}
	return out, rows.Err()
}

// MarkSent records that the item was delivered at at.
func (s *Store) MarkSent(ctx context.Context, key string, at time.Time) error {
	return markSent(ctx, s.db, key, at)
}

// MarkSent is Store.MarkSent inside a transaction (e.g. with the
// notification records of an e-mail).
func (t *Tx) MarkSent(ctx context.Context, key string, at time.Time) error {
	return markSent(ctx, t.tx, key, at)
}

func markSent(ctx context.Context, q execer, key string, at time.Time) error {
	if at.IsZero() {
		return fmt.Errorf("store: outbox: mark %s sent: zero time", key)
	}
	res, err := q.ExecContext(ctx, "UPDATE outbox SET sent_at = ?, last_error = '' WHERE key = ?", at.UnixNano(), key)
	if err != nil {
		return fmt.Errorf("store: outbox: mark %s sent: %w", key, err)
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return fmt.Errorf("store: outbox: mark %s sent: no such item", key)
	}
	return nil
}

// MarkSentBatch marks many items delivered in one transaction.
func (s *Store) MarkSentBatch(ctx context.Context, keys []string, at time.Time) error {
	return s.Update(ctx, func(tx *Tx) error {
		for _, k := range keys {
			if err := tx.MarkSent(ctx, k, at); err != nil {
				return err
			}
		}
		return nil
	})
}

// MarkFailed records a failed delivery attempt and when to try again.
func (s *Store) MarkFailed(ctx context.Context, key string, cause error, retryAt time.Time) error {
	msg := "unknown error"
	if cause != nil {
		msg = cause.Error()
	}
	if len(msg) > 2000 {
		msg = msg[:2000]
	}
	res, err := s.db.ExecContext(ctx, `UPDATE outbox SET attempts = attempts + 1, last_error = ?, due_at = ?
		WHERE key = ? AND sent_at = 0`, msg, retryAt.UnixNano(), key)
	if err != nil {
		return fmt.Errorf("store: outbox: mark %s failed: %w", key, err)
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return fmt.Errorf("store: outbox: mark %s failed: no such pending item", key)
	}
	return nil
}

// Pending counts unsent items of a channel ("" = all) and their payload bytes.
func (s *Store) Pending(ctx context.Context, channel string) (items int, bytes int64, err error) {
	q := "SELECT COUNT(*), COALESCE(SUM(length(payload)), 0) FROM outbox WHERE sent_at = 0"
	var args []any
	if channel != "" {
		q += " AND channel = ?"
		args = append(args, channel)
	}
	if err := s.db.QueryRowContext(ctx, q, args...).Scan(&items, &bytes); err != nil {
		return 0, 0, fmt.Errorf("store: outbox: pending: %w", err)
	}
	return items, bytes, nil
}

// OutboxState returns whether key is known, and when it was sent (zero if
// still pending).
func (s *Store) OutboxState(ctx context.Context, key string) (known bool, sentAt time.Time, err error) {
	var n int64
	err = s.db.QueryRowContext(ctx, "SELECT sent_at FROM outbox WHERE key = ?", key).Scan(&n)
	if err != nil {
		if errors.Is(err, sql.ErrNoRows) {
			return false, time.Time{}, nil
		}
		return false, time.Time{}, fmt.Errorf("store: outbox: state of %s: %w", key, err)
	}
	return true, fromNanos(n), nil
}

// PurgeSent deletes items of channel ("" = all) sent before t and returns how
// many went. Keys deleted this way are no longer deduplicated by Enqueue, so
// keep them at least as long as a producer could replay them.
func (s *Store) PurgeSent(ctx context.Context, channel string, before time.Time) (int64, error) {
	q := "DELETE FROM outbox WHERE sent_at > 0 AND sent_at < ?"
	args := []any{before.UnixNano()}
	if channel != "" {
		q += " AND channel = ?"
		args = append(args, channel)
	}
	res, err := s.db.ExecContext(ctx, q, args...)
	if err != nil {
		return 0, fmt.Errorf("store: outbox: purge: %w", err)
	}
	n, _ := res.RowsAffected()
	return n, nil
}

// Backoff is the one retry delay rule of every sink: base·2^attempt, capped
// at max (attempt counts failures so far, from 0). Common practice for
// retrying a remote service without hammering it during an outage.
func Backoff(attempt int, base, max time.Duration) time.Duration {
	if base <= 0 {
		base = time.Second
	}
	if max < base {
		max = base
	}
	d := base
	for i := 0; i < attempt && d < max; i++ {
		d *= 2
	}
	return min(d, max)
}
