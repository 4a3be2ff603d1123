package store

import (
	"context"
	"fmt"
	"time"
)

// Notification records that a message about a fault went to a recipient.
type Notification struct {
	FaultID   string
	Channel   string // "email", ...
	Recipient string
	OutboxKey string
	SentAt    time.Time
}

// RecordNotification records a delivered notification; recording the same
// outbox key and recipient again is a no-op.
func (t *Tx) RecordNotification(ctx context.Context, n Notification) error {
	return recordNotification(ctx, t.tx, n)
}

// RecordNotification is Tx.RecordNotification on its own.
func (s *Store) RecordNotification(ctx context.Context, n Notification) error {
	return recordNotification(ctx, s.db, n)
}

func recordNotification(ctx context.Context, q execer, n Notification) error {
	if n.FaultID == "" || n.Recipient == "" || n.SentAt.IsZero() {
		return fmt.Errorf("store: notification: fault %q, recipient %q and time are required", n.FaultID, n.Recipient)
	}
	_, err := q.ExecContext(ctx, `INSERT INTO notifications (fault_id, channel, recipient, outbox_key, sent_at)
		VALUES (?, ?, ?, ?, ?) ON CONFLICT (outbox_key, recipient) DO NOTHING`,
		n.FaultID, n.Channel, n.Recipient, n.OutboxKey, n.SentAt.UnixNano())
	if err != nil {
		return fmt.Errorf("store: notification of %s to %s: %w", n.FaultID, n.Recipient, err)
	}
	return nil
}

// Notifications returns what was sent about a fault, oldest first.
func (s *Store) Notifications(ctx context.Context, faultID string) ([]Notification, error) {
	rows, err := s.db.QueryContext(ctx, `SELECT fault_id, channel, recipient, outbox_key, sent_at
		FROM notifications WHERE fault_id = ? ORDER BY sent_at, id`, faultID)
	if err != nil {
		return nil, fmt.Errorf("store: notifications of %s: %w", faultID, err)
	}
	defer rows.Close()
	var out []Notification
	for rows.Next() {
		var n Notification
		var at int64
		if err := rows.Scan(&n.FaultID, &n.Channel, &n.Recipient, &n.OutboxKey, &at); err != nil {
			return nil, fmt.Errorf("store: notifications of %s: %w", faultID, err)
		}
		n.SentAt = fromNanos(at)
		out = append(out, n)
	}
	return out, rows.Err()
}

// LastNotified returns when a recipient was last told about a fault on a
// channel (zero time if never), for re-notification intervals.
func (s *Store) LastNotified(ctx context.Context, faultID, channel, recipient string) (time.Time, error) {
	var at int64
	err := s.db.QueryRowContext(ctx, `SELECT COALESCE(MAX(sent_at), 0) FROM notifications
		WHERE fault_id = ? AND channel = ? AND recipient = ?`, faultID, channel, recipient).Scan(&at)
	if err != nil {
		return time.Time{}, fmt.Errorf("store: last notification of %s to %s: %w", faultID, recipient, err)
	}
	return fromNanos(at), nil
}
