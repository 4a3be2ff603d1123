package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"time"

	_ "modernc.org/sqlite" // registers the "sqlite" database/sql driver
)

// FileName is the database file inside the data directory.
const FileName = "risewatch.db"

// Options tune Open. The zero value is the production setting.
type Options struct {
	// BusyTimeout is how long a connection waits for a lock (default 10 s).
	BusyTimeout time.Duration
	// MaxVersion, when > 0, stops migrations at that schema version (tests of
	// upgrades use it to build an old database).
	MaxVersion int
}

// Store is the state store. It is safe for concurrent use.
type Store struct {
	db   *sql.DB
	path string
}

// Open opens (creating if needed) the store in dataDir and brings its schema
// up to date.
func Open(ctx context.Context, dataDir string, opt Options) (*Store, error) {
	if dataDir == "" {
		return nil, errors.New("store: empty data directory")
	}
	if err := os.MkdirAll(dataDir, 0o750); err != nil {
		return nil, fmt.Errorf("store: data directory: %w", err)
	}
	path := filepath.Join(dataDir, FileName)
	busy := opt.BusyTimeout
	if busy <= 0 {
		busy = 10 * time.Second
	}
	q := url.Values{}
	q.Add("_pragma", fmt.Sprintf("busy_timeout(%d)", busy.Milliseconds()))
	q.Add("_pragma", "journal_mode(WAL)")
	q.Add("_pragma", "synchronous(FULL)")
	q.Add("_pragma", "foreign_keys(1)")
	q.Set("_txlock", "immediate")
	dsn := "file:" + (&url.URL{Path: path}).EscapedPath() + "?" + q.Encode()
	db, err := sql.Open("sqlite", dsn)
	if err != nil {
		return nil, fmt.Errorf("store: open %s: %w", path, err)
	}
	// One writer at a time is SQLite's model; a small pool lets readers
	// (dashboard, report) run beside the writer in WAL mode.
	db.SetMaxOpenConns(4)
	db.SetMaxIdleConns(4)
	db.SetConnMaxIdleTime(0)
	s := &Store{db: db, path: path}
	if err := s.migrate(ctx, opt.MaxVersion); err != nil {
		db.Close()
		return nil, fmt.Errorf("store: %s: %w", path, err)
	}
	return s, nil
}

// Close closes the database.
func (s *Store) Close() error { return s.db.Close() }

// Path is the database file's path.
func (s *Store) Path() string { return s.path }

// DB exposes the database for read-only queries by reports and tests.
func (s *Store) DB() *sql.DB { return s.db }

// IntegrityCheck runs PRAGMA integrity_check and returns an error unless
// SQLite answers "ok".
func (s *Store) IntegrityCheck(ctx context.Context) error {
	rows, err := s.db.QueryContext(ctx, "PRAGMA integrity_check")
	if err != nil {
		return fmt.Errorf("store: integrity check: %w", err)
	}
	defer rows.Close()
	var msgs []string
	for rows.Next() {
		var m string
		if err := rows.Scan(&m); err != nil {
			return fmt.Errorf("store: integrity check: %w", err)
		}
		msgs = append(msgs, m)
	}
	if err := rows.Err(); err != nil {
		return fmt.Errorf("store: integrity check: %w", err)
	}
	if len(msgs) == 1 && msgs[0] == "ok" {
		return nil
	}
	return fmt.Errorf("store: integrity check of %s failed: %v", s.path, msgs)
}

// execer is what *sql.DB and *sql.Tx share; every write helper takes one so
// it runs alone or inside Update.
type execer interface {
	ExecContext(ctx context.Context, query string, args ...any) (sql.Result, error)
	QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error)
	QueryRowContext(ctx context.Context, query string, args ...any) *sql.Row
}

// Tx groups writes that must commit together, e.g. a fault transition, the
// new lifecycle state and the e-mail it causes in the outbox.
type Tx struct {
	tx *sql.Tx
}

// Update runs fn in one transaction and commits it when fn returns nil.
// When Update returns nil the writes are durable.
func (s *Store) Update(ctx context.Context, fn func(tx *Tx) error) error {
	tx, err := s.db.BeginTx(ctx, nil)
	if err != nil {
		return fmt.Errorf("store: begin: %w", err)
	}
	if err := fn(&Tx{tx: tx}); err != nil {
		_ = tx.Rollback()
		return err
	}
	if err := tx.Commit(); err != nil {
		return fmt.Errorf("store: commit: %w", err)
	}
	return nil
}

// nanos converts a time to the stored form (Unix nanoseconds; zero time is 0).
func nanos(t time.Time) int64 {
	if t.IsZero() {
		return 0
	}
	return t.UnixNano()
}

// fromNanos is the inverse of nanos; times come back in UTC.
func fromNanos(n int64) time.Time {
	if n == 0 {
		return time.Time{}
	}
	return time.Unix(0, n).UTC()
}
