package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"
)

// Checkpoints is a namespaced view of the collector checkpoints. It
// satisfies the small Get/Put interface the collectors declare
// (trend-log sequence numbers, processed export files, Influx page times).
type Checkpoints struct {
	s      *Store
	prefix string
}

// Checkpoints returns the checkpoint view for a namespace, e.g. a source name
// ("bacnet:campus/"); keys are stored as namespace + key.
func (s *Store) Checkpoints(namespace string) *Checkpoints {
	return &Checkpoints{s: s, prefix: namespace}
}

// Get returns the value stored under key; ok is false when there is none.
func (c *Checkpoints) Get(key string) ([]byte, bool, error) {
	var v []byte
	err := c.s.db.QueryRowContext(context.Background(),
		"SELECT value FROM checkpoints WHERE key = ?", c.prefix+key).Scan(&v)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, false, nil
	}
	if err != nil {
		return nil, false, fmt.Errorf("store: checkpoint %q: %w", c.prefix+key, err)
	}
	return v, true, nil
}

// Put stores value under key; it is durable when Put returns.
func (c *Checkpoints) Put(key string, value []byte) error {
	return putCheckpoint(context.Background(), c.s.db, c.prefix+key, value)
}

// Delete removes key.
func (c *Checkpoints) Delete(key string) error {
	if _, err := c.s.db.ExecContext(context.Background(), "DELETE FROM checkpoints WHERE key = ?", c.prefix+key); err != nil {
		return fmt.Errorf("store: delete checkpoint %q: %w", c.prefix+key, err)
	}
	return nil
}

// Keys lists the keys in the namespace (without the namespace prefix).
func (c *Checkpoints) Keys() ([]string, error) {
	rows, err := c.s.db.QueryContext(context.Background(),
		"SELECT key FROM checkpoints WHERE instr(key, ?) = 1 ORDER BY key", c.prefix)
	if err != nil {
		return nil, fmt.Errorf("store: checkpoint keys %q: %w", c.prefix, err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var k string
		if err := rows.Scan(&k); err != nil {
			return nil, fmt.Errorf("store: checkpoint keys %q: %w", c.prefix, err)
		}
		out = append(out, k[len(c.prefix):])
	}
	return out, rows.Err()
}

// PutCheckpoint stores a checkpoint (full key) inside a transaction, so a
// source can commit its position together with what it derived from it.
func (t *Tx) PutCheckpoint(ctx context.Context, key string, value []byte) error {
	return putCheckpoint(ctx, t.tx, key, value)
}

func putCheckpoint(ctx context.Context, q execer, key string, value []byte) error {
	if key == "" {
		return errors.New("store: empty checkpoint key")
	}
	if value == nil {
		value = []byte{}
	}
	_, err := q.ExecContext(ctx, `INSERT INTO checkpoints (key, value, updated_at) VALUES (?, ?, ?)
		ON CONFLICT (key) DO UPDATE SET value = excluded.value, updated_at = excluded.updated_at`,
		key, value, time.Now().UnixNano())
	if err != nil {
		return fmt.Errorf("store: checkpoint %q: %w", key, err)
	}
	return nil
}
