package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"
)

// Blob kinds kept per terminal. The fdd package owns their contents (JSON).
const (
	BlobBaseline    = "baseline"    // fitted healthy behaviour (UA and flow factors, residual statistics)
	BlobCalibration = "calibration" // coil model calibration against the submittal/commissioning data
)

// PutTerminalBlob stores a terminal's baseline or calibration (kind is
// BlobBaseline, BlobCalibration or another fdd-defined name).
func (s *Store) PutTerminalBlob(ctx context.Context, terminal, kind string, blob []byte) error {
	return putTerminalBlob(ctx, s.db, terminal, kind, blob)
}

// PutTerminalBlob is Store.PutTerminalBlob inside a transaction.
func (t *Tx) PutTerminalBlob(ctx context.Context, terminal, kind string, blob []byte) error {
	return putTerminalBlob(ctx, t.tx, terminal, kind, blob)
}

func putTerminalBlob(ctx context.Context, q execer, terminal, kind string, blob []byte) error {
	if terminal == "" || kind == "" {
		return fmt.Errorf("store: terminal blob: empty terminal %q or kind %q", terminal, kind)
	}
	if blob == nil {
		blob = []byte{}
	}
	_, err := q.ExecContext(ctx, `INSERT INTO terminal_blobs (terminal, kind, blob, updated_at) VALUES (?, ?, ?, ?)
		ON CONFLICT (terminal, kind) DO UPDATE SET blob = excluded.blob, updated_at = excluded.updated_at`,
		terminal, kind, blob, time.Now().UnixNano())
	if err != nil {
		return fmt.Errorf("store: terminal %s: put %s: %w", terminal, kind, err)
	}
	return nil
}

// TerminalBlob returns a terminal's stored blob of kind and when it was
// written; ok is false when there is none.
func (s *Store) TerminalBlob(ctx context.Context, terminal, kind string) (blob []byte, updated time.Time, ok bool, err error) {
	return terminalBlob(ctx, s.db, terminal, kind)
}

// TerminalBlob is Store.TerminalBlob inside a transaction (it sees the
// transaction's own writes).
func (t *Tx) TerminalBlob(ctx context.Context, terminal, kind string) (blob []byte, updated time.Time, ok bool, err error) {
	return terminalBlob(ctx, t.tx, terminal, kind)
}

func terminalBlob(ctx context.Context, q execer, terminal, kind string) (blob []byte, updated time.Time, ok bool, err error) {
	var at int64
	err = q.QueryRowContext(ctx, "SELECT blob, updated_at FROM terminal_blobs WHERE terminal = ? AND kind = ?",
		terminal, kind).Scan(&blob, &at)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, time.Time{}, false, nil
	}
	if err != nil {
		return nil, time.Time{}, false, fmt.Errorf("store: terminal %s: %s: %w", terminal, kind, err)
	}
	return blob, fromNanos(at), true, nil
}

// TerminalBlobs returns every terminal's blob of kind, keyed by terminal.
func (s *Store) TerminalBlobs(ctx context.Context, kind string) (map[string][]byte, error) {
	rows, err := s.db.QueryContext(ctx, "SELECT terminal, blob FROM terminal_blobs WHERE kind = ?", kind)
	if err != nil {
		return nil, fmt.Errorf("store: terminal %s blobs: %w", kind, err)
	}
	defer rows.Close()
	out := map[string][]byte{}
	for rows.Next() {
		var term string
		var b []byte
		if err := rows.Scan(&term, &b); err != nil {
			return nil, fmt.Errorf("store: terminal %s blobs: %w", kind, err)
		}
		out[term] = b
	}
	return out, rows.Err()
}

// DeleteTerminalBlob removes a terminal's blob of kind (e.g. to re-learn a
// baseline after a coil was replaced).
func (s *Store) DeleteTerminalBlob(ctx context.Context, terminal, kind string) error {
	if _, err := s.db.ExecContext(ctx, "DELETE FROM terminal_blobs WHERE terminal = ? AND kind = ?", terminal, kind); err != nil {
		return fmt.Errorf("store: terminal %s: delete %s: %w", terminal, kind, err)
	}
	return nil
}
