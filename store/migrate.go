package store

import (
	"context"
	"fmt"
	"time"
)

// migration is one schema step. Migrations are append-only: never edit one
// that has shipped; add the next version instead.
type migration struct {
	version int
	name    string
	sql     string
}

var migrations = []migration{
	{1, "initial schema", `
CREATE TABLE fault_history (
	id          INTEGER PRIMARY KEY AUTOINCREMENT,
	fault_id    TEXT    NOT NULL,
	entity      TEXT    NOT NULL,
	entity_kind INTEGER NOT NULL,
	kind        TEXT    NOT NULL,
	rule        TEXT    NOT NULL,
	from_state  TEXT    NOT NULL,
	to_state    TEXT    NOT NULL,
	at          INTEGER NOT NULL,
	since       INTEGER NOT NULL,
	severity    INTEGER NOT NULL,
	confidence  REAL    NOT NULL,
	weekly_cost REAL    NOT NULL,
	ahu         TEXT    NOT NULL,
	loop        TEXT    NOT NULL,
	message     TEXT    NOT NULL,
	snapshot    TEXT    NOT NULL
);
CREATE UNIQUE INDEX fault_history_once ON fault_history (fault_id, at, to_state);
CREATE INDEX fault_history_at   ON fault_history (at);
CREATE INDEX fault_history_kind ON fault_history (kind, at);

CREATE TABLE fault_state (
	key        TEXT PRIMARY KEY,
	blob       BLOB    NOT NULL,
	updated_at INTEGER NOT NULL
);

CREATE TABLE acknowledgements (
	id       INTEGER PRIMARY KEY AUTOINCREMENT,
	fault_id TEXT    NOT NULL,
	action   TEXT    NOT NULL CHECK (action IN ('ack', 'snooze', 'unsnooze')),
	who      TEXT    NOT NULL,
	at       INTEGER NOT NULL,
	until    INTEGER NOT NULL DEFAULT 0,
	note     TEXT    NOT NULL DEFAULT ''
);
CREATE INDEX acknowledgements_fault ON acknowledgements (fault_id, at);

CREATE TABLE terminal_blobs (
	terminal   TEXT    NOT NULL,
	kind       TEXT    NOT NULL,
	blob       BLOB    NOT NULL,
	updated_at INTEGER NOT NULL,
	PRIMARY KEY (terminal, kind)
);

CREATE TABLE checkpoints (
	key        TEXT PRIMARY KEY,
	value      BLOB    NOT NULL,
	updated_at INTEGER NOT NULL
);

CREATE TABLE outbox (
	key        TEXT PRIMARY KEY,
	channel    TEXT    NOT NULL,
	payload    BLOB    NOT NULL,
	created_at INTEGER NOT NULL,
	due_at     INTEGER NOT NULL,
	attempts   INTEGER NOT NULL DEFAULT 0,
	last_error TEXT    NOT NULL DEFAULT '',
	sent_at    INTEGER NOT NULL DEFAULT 0
);
CREATE INDEX outbox_due ON outbox (due_at) WHERE sent_at = 0;
`},
	{2, "notification records and outbox channel index", `
CREATE TABLE notifications (
	id         INTEGER PRIMARY KEY AUTOINCREMENT,
	fault_id   TEXT    NOT NULL,
	channel    TEXT    NOT NULL,
	recipient  TEXT    NOT NULL,
	outbox_key TEXT    NOT NULL,
	sent_at    INTEGER NOT NULL,
	UNIQUE (outbox_key, recipient)
);
CREATE INDEX notifications_fault ON notifications (fault_id, sent_at);
CREATE INDEX outbox_channel_due ON outbox (channel, due_at) WHERE sent_at = 0;
`},
	// SQLite cannot change a CHECK constraint in place: the table is
	// rebuilt with its rows and IDs (the daemon's acknowledgement cursor
	// counts on them; AUTOINCREMENT carries on from the largest).
	{3, "relearn requests among the acknowledgements", `
CREATE TABLE acknowledgements_v3 (
	id       INTEGER PRIMARY KEY AUTOINCREMENT,
	fault_id TEXT    NOT NULL,
	action   TEXT    NOT NULL CHECK (action IN ('ack', 'snooze', 'unsnooze', 'relearn')),
	who      TEXT    NOT NULL,
	at       INTEGER NOT NULL,
	until    INTEGER NOT NULL DEFAULT 0,
	note     TEXT    NOT NULL DEFAULT ''
);
INSERT INTO acknowledgements_v3 (id, fault_id, action, who, at, until, note)
	SELECT id, fault_id, action, who, at, until, note FROM acknowledgements;
DROP TABLE acknowledgements;
ALTER TABLE acknowledgements_v3 RENAME TO acknowledgements;
CREATE INDEX acknowledgements_fault ON acknowledgements (fault_id, at);
`},
}

// SchemaVersion is the schema version this build writes.
func SchemaVersion() int { return migrations[len(migrations)-1].version }

// Version returns the database's current schema version.
func (s *Store) Version(ctx context.Context) (int, error) {
	var v int
	err := s.db.QueryRowContext(ctx, "SELECT COALESCE(MAX(version), 0) FROM schema_migrations").Scan(&v)
	if err != nil {
		return 0, fmt.Errorf("store: schema version: %w", err)
	}
	return v, nil
}

// migrate applies the missing migrations up to max (0 = all), each in its
// own transaction together with its schema_migrations row.
func (s *Store) migrate(ctx context.Context, max int) error {
	if _, err := s.db.ExecContext(ctx, `CREATE TABLE IF NOT EXISTS schema_migrations (
		version    INTEGER PRIMARY KEY,
		name       TEXT    NOT NULL,
		applied_at INTEGER NOT NULL)`); err != nil {
		return fmt.Errorf("migrations table: %w", err)
	}
	cur, err := s.Version(ctx)
	if err != nil {
		return err
	}
	if cur > SchemaVersion() {
		return fmt.Errorf("schema version %d is newer than this build understands (%d); upgrade risewatch", cur, SchemaVersion())
	}
	for _, m := range migrations {
		if m.version <= cur || (max > 0 && m.version > max) {
			continue
		}
		err := s.Update(ctx, func(tx *Tx) error {
			if _, err := tx.tx.ExecContext(ctx, m.sql); err != nil {
				return err
			}
			_, err := tx.tx.ExecContext(ctx,
				"INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)",
				m.version, m.name, time.Now().UnixNano())
			return err
		})
		if err != nil {
			return fmt.Errorf("migration %d (%s): %w", m.version, m.name, err)
		}
	}
	return nil
}
