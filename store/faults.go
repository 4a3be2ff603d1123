package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strings"
	"time"

	"risewatch/fdd"
	"risewatch/rules"
)

// RecordTransition appends a fault transition to the history. Recording the
// same transition again (same fault, time and target state, e.g. a replay
// after a restart) is a no-op.
func (s *Store) RecordTransition(ctx context.Context, tr rules.Transition) error {
	return recordTransition(ctx, s.db, tr)
}

// RecordTransition is Store.RecordTransition inside a transaction.
func (t *Tx) RecordTransition(ctx context.Context, tr rules.Transition) error {
	return recordTransition(ctx, t.tx, tr)
}

func recordTransition(ctx context.Context, q execer, tr rules.Transition) error {
	if tr.FaultID == "" {
		return errors.New("store: transition without fault ID")
	}
	if tr.At.IsZero() {
		return fmt.Errorf("store: transition %s: zero time", tr.FaultID)
	}
	snap, err := marshalNaN(tr)
	if err != nil {
		return fmt.Errorf("store: transition %s: evidence snapshot: %w", tr.FaultID, err)
	}
	cost := tr.Impact.WeeklyCost
	if cost != cost { // NaN: unknown cost sorts as zero
		cost = 0
	}
	conf := tr.Confidence
	if conf != conf {
		conf = 0
	}
	_, err = q.ExecContext(ctx, `INSERT INTO fault_history
		(fault_id, entity, entity_kind, kind, rule, from_state, to_state, at, since,
		 severity, confidence, weekly_cost, ahu, loop, message, snapshot)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
		ON CONFLICT (fault_id, at, to_state) DO NOTHING`,
		tr.FaultID, tr.Entity, int(tr.EntityKind), tr.Kind.String(), tr.Rule,
		tr.From.String(), tr.To.String(), nanos(tr.At), nanos(tr.Since),
		int(tr.Severity), conf, cost, tr.AHU, tr.Loop, tr.Message, string(snap))
	if err != nil {
		return fmt.Errorf("store: record transition %s at %s: %w", tr.FaultID, tr.At.Format(time.RFC3339), err)
	}
	return nil
}

// HistoryQuery selects fault transitions. Zero fields match everything.
type HistoryQuery struct {
	From, To      time.Time // At in [From, To)
	FaultID       string
	Entity        string
	Kind          fdd.Kind // KindNone = any
	ToState       *rules.State
	MinWeeklyCost float64
	Limit         int  // 0 = no limit
	Newest        bool // newest first (default oldest first)
}

// History returns the transitions matching q, with their evidence snapshots.
func (s *Store) History(ctx context.Context, q HistoryQuery) ([]rules.Transition, error) {
	var where []string
	var args []any
	if !q.From.IsZero() {
		where, args = append(where, "at >= ?"), append(args, nanos(q.From))
	}
	if !q.To.IsZero() {
		where, args = append(where, "at < ?"), append(args, nanos(q.To))
	}
	if q.FaultID != "" {
		where, args = append(where, "fault_id = ?"), append(args, q.FaultID)
	}
	if q.Entity != "" {
		where, args = append(where, "entity = ?"), append(args, q.Entity)
	}
	if q.Kind != fdd.KindNone {
		where, args = append(where, "kind = ?"), append(args, q.Kind.String())
	}
	if q.ToState != nil {
		where, args = append(where, "to_state = ?"), append(args, q.ToState.String())
	}
	if q.MinWeeklyCost > 0 {
		where, args = append(where, "weekly_cost >= ?"), append(args, q.MinWeeklyCost)
	}
	sqlText := "SELECT kind, from_state, to_state, snapshot FROM fault_history"
	if len(where) > 0 {
		sqlText += " WHERE " + strings.Join(where, " AND ")
	}
	if q.Newest {
		sqlText += " ORDER BY at DESC, id DESC"
	} else {
		sqlText += " ORDER BY at, id"
	}
	if q.Limit > 0 {
		sqlText += fmt.Sprintf(" LIMIT %d", q.Limit)
	}
	rows, err := s.db.QueryContext(ctx, sqlText, args...)
	if err != nil {
		return nil, fmt.Errorf("store: fault history: %w", err)
	}
	defer rows.Close()
	var out []rules.Transition
	for rows.Next() {
		var kind, from, to, snap string
		if err := rows.Scan(&kind, &from, &to, &snap); err != nil {
			return nil, fmt.Errorf("store: fault history: %w", err)
		}
		var tr rules.Transition
		if err := unmarshalNaN([]byte(snap), &tr); err != nil {
			return nil, fmt.Errorf("store: fault history: snapshot: %w", err)
		}
		// The stored identifiers are authoritative over the enum numbers
		// in the snapshot (numbers may change between builds, names not).
		if k, ok := fdd.ParseKind(kind); ok {
			tr.Kind = k
		}
		if st, ok := parseState(from); ok {
			tr.From = st
		}
		if st, ok := parseState(to); ok {
			tr.To = st
		}
		out = append(out, tr)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("store: fault history: %w", err)
	}
	return out, nil
}

func parseState(s string) (rules.State, bool) {
	for st := rules.State(0); st < 64; st++ {
		name := st.String()
		if name == "unknown" {
			break
		}
		if name == s {
			return st, true
		}
	}
	return 0, false
}

// SaveState stores the rules engine's lifecycle state under key (opaque to
// the store).
func (s *Store) SaveState(ctx context.Context, key string, blob []byte) error {
	return saveState(ctx, s.db, key, blob)
}

// SaveState is Store.SaveState inside a transaction.
func (t *Tx) SaveState(ctx context.Context, key string, blob []byte) error {
	return saveState(ctx, t.tx, key, blob)
}

func saveState(ctx context.Context, q execer, key string, blob []byte) error {
	if blob == nil {
		blob = []byte{}
	}
	_, err := q.ExecContext(ctx, `INSERT INTO fault_state (key, blob, updated_at) VALUES (?, ?, ?)
		ON CONFLICT (key) DO UPDATE SET blob = excluded.blob, updated_at = excluded.updated_at`,
		key, blob, time.Now().UnixNano())
	if err != nil {
		return fmt.Errorf("store: save state %q: %w", key, err)
	}
	return nil
}

// LoadState returns the blob saved under key; ok is false when there is none.
func (s *Store) LoadState(ctx context.Context, key string) (blob []byte, ok bool, err error) {
	err = s.db.QueryRowContext(ctx, "SELECT blob FROM fault_state WHERE key = ?", key).Scan(&blob)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, false, nil
	}
	if err != nil {
		return nil, false, fmt.Errorf("store: load state %q: %w", key, err)
	}
	return blob, true, nil
}

// DeleteState removes the blob saved under key.
func (s *Store) DeleteState(ctx context.Context, key string) error {
	if _, err := s.db.ExecContext(ctx, "DELETE FROM fault_state WHERE key = ?", key); err != nil {
		return fmt.Errorf("store: delete state %q: %w", key, err)
	}
	return nil
}

// States returns every saved state whose key starts with prefix.
func (s *Store) States(ctx context.Context, prefix string) (map[string][]byte, error) {
	rows, err := s.db.QueryContext(ctx,
		"SELECT key, blob FROM fault_state WHERE instr(key, ?) = 1 ORDER BY key", prefix)
	if err != nil {
		return nil, fmt.Errorf("store: states %q: %w", prefix, err)
	}
	defer rows.Close()
	out := map[string][]byte{}
	for rows.Next() {
		var k string
		var b []byte
		if err := rows.Scan(&k, &b); err != nil {
			return nil, fmt.Errorf("store: states %q: %w", prefix, err)
		}
		out[k] = b
	}
	return out, rows.Err()
}
