package store

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"
)

// Action is what a person did to a fault.
type Action string

// Acknowledgement actions.
const (
	ActionAck      Action = "ack"      // "I have seen it and someone is on it"
	ActionSnooze   Action = "snooze"   // suppress notifications until Until
	ActionUnsnooze Action = "unsnooze" // end a snooze early
	// ActionRelearn asks for a terminal's baseline to be learned again
	// (after a coil, valve or actuator was replaced or repaired); its
	// FaultID is BaselineID(terminal).
	ActionRelearn Action = "relearn"
)

// baselineSuffix ends the FaultID of a relearn request.
const baselineSuffix = "/baseline"

// BaselineID is the FaultID under which a relearn request for terminal is
// recorded.
func BaselineID(terminal string) string { return terminal + baselineSuffix }

// BaselineTerminal is the terminal of a relearn request's FaultID.
func BaselineTerminal(id string) (string, bool) {
	t, ok := strings.CutSuffix(id, baselineSuffix)
	return t, ok && t != ""
}

// Ack is one acknowledgement, snooze or unsnooze of a fault by a person.
type Ack struct {
	ID      int64
	FaultID string
	Action  Action
	Who     string
	At      time.Time
	Until   time.Time // snooze end; zero for ack/unsnooze
	Note    string
}

// Acknowledge records an acknowledgement, snooze or unsnooze.
func (s *Store) Acknowledge(ctx context.Context, a Ack) error {
	return acknowledge(ctx, s.db, a)
}

// Acknowledge is Store.Acknowledge inside a transaction.
func (t *Tx) Acknowledge(ctx context.Context, a Ack) error {
	return acknowledge(ctx, t.tx, a)
}

func acknowledge(ctx context.Context, q execer, a Ack) error {
	switch {
	case a.FaultID == "":
		return errors.New("store: acknowledgement without fault ID")
	case a.Who == "":
		return fmt.Errorf("store: acknowledgement of %s: who is empty", a.FaultID)
	case a.At.IsZero():
		return fmt.Errorf("store: acknowledgement of %s: zero time", a.FaultID)
	}
	switch a.Action {
	case ActionAck, ActionUnsnooze:
		a.Until = time.Time{}
	case ActionRelearn:
		if _, ok := BaselineTerminal(a.FaultID); !ok {
			return fmt.Errorf("store: relearn request %q by %s: want <terminal>%s", a.FaultID, a.Who, baselineSuffix)
		}
		a.Until = time.Time{}
	case ActionSnooze:
		if !a.Until.After(a.At) {
			return fmt.Errorf("store: snooze of %s by %s: until %s is not after %s",
				a.FaultID, a.Who, a.Until.Format(time.RFC3339), a.At.Format(time.RFC3339))
		}
	default:
		return fmt.Errorf("store: acknowledgement of %s: unknown action %q", a.FaultID, a.Action)
	}
	_, err := q.ExecContext(ctx, `INSERT INTO acknowledgements (fault_id, action, who, at, until, note)
		VALUES (?, ?, ?, ?, ?, ?)`, a.FaultID, string(a.Action), a.Who, nanos(a.At), nanos(a.Until), a.Note)
	if err != nil {
		return fmt.Errorf("store: acknowledgement of %s: %w", a.FaultID, err)
	}
	return nil
}

// Acks returns a fault's acknowledgements, oldest first.
func (s *Store) Acks(ctx context.Context, faultID string) ([]Ack, error) {
	return s.queryAcks(ctx, "WHERE fault_id = ? ORDER BY at, id", faultID)
}

// AcksSince returns every acknowledgement at or after t, oldest first.
func (s *Store) AcksSince(ctx context.Context, t time.Time) ([]Ack, error) {
	return s.queryAcks(ctx, "WHERE at >= ? ORDER BY at, id", nanos(t))
}

// SnoozedUntil returns when the fault's current snooze ends at time now, or
// the zero time when it is not snoozed. The latest snooze or unsnooze at or
// before now decides.
func (s *Store) SnoozedUntil(ctx context.Context, faultID string, now time.Time) (time.Time, error) {
	acks, err := s.queryAcks(ctx, `WHERE fault_id = ? AND action IN ('snooze', 'unsnooze') AND at <= ?
		ORDER BY at DESC, id DESC LIMIT 1`, faultID, nanos(now))
	if err != nil || len(acks) == 0 {
		return time.Time{}, err
	}
	a := acks[0]
	if a.Action == ActionSnooze && a.Until.After(now) {
		return a.Until, nil
	}
	return time.Time{}, nil
}

// ActiveSnoozes returns, per fault, the snooze in force at now.
func (s *Store) ActiveSnoozes(ctx context.Context, now time.Time) (map[string]Ack, error) {
	acks, err := s.queryAcks(ctx, `WHERE action IN ('snooze', 'unsnooze') AND at <= ? ORDER BY at, id`, nanos(now))
	if err != nil {
		return nil, err
	}
	out := map[string]Ack{}
	for _, a := range acks {
		if a.Action == ActionSnooze && a.Until.After(now) {
			out[a.FaultID] = a
		} else {
			delete(out, a.FaultID)
		}
	}
	return out, nil
}

func (s *Store) queryAcks(ctx context.Context, where string, args ...any) ([]Ack, error) {
	rows, err := s.db.QueryContext(ctx,
		"SELECT id, fault_id, action, who, at, until, note FROM acknowledgements "+where, args...)
	if err != nil {
		return nil, fmt.Errorf("store: acknowledgements: %w", err)
	}
	defer rows.Close()
	var out []Ack
	for rows.Next() {
		var a Ack
		var action string
		var at, until int64
		if err := rows.Scan(&a.ID, &a.FaultID, &action, &a.Who, &at, &until, &a.Note); err != nil {
			return nil, fmt.Errorf("store: acknowledgements: %w", err)
		}
		a.Action, a.At, a.Until = Action(action), fromNanos(at), fromNanos(until)
		out = append(out, a)
	}
	return out, rows.Err()
}
