// Package store is risewatch's embedded state store: one SQLite file
// (pure-Go modernc.org/sqlite, no cgo) under the data directory.
//
// It holds the fault history (every rules.Transition with its evidence as
// JSON), the rules engine's current lifecycle state (opaque blobs by key),
// acknowledgements and snoozes, per-terminal baselines and calibrations
// (opaque JSON blobs), collector checkpoints, notification records (what was
// sent to whom) and the outbox through which every side effect leaves the
// process (e-mail, InfluxDB points).
//
// # Durability
//
// The database runs in WAL mode with synchronous=FULL: every COMMIT fsyncs
// the write-ahead log before it returns, so a committed acknowledgement or
// outbox entry survives a process kill (kill -9) and also an operating-system
// crash or power loss. synchronous=NORMAL would survive a process kill as well
// (the WAL pages are in the OS cache) but can lose the last commits on power
// loss; the store's write rate is a handful of commits per analysis step
// (about one a minute), so the extra fsync costs nothing that matters and the
// outbox promise "durable before the side effect" holds without caveat
// (SQLite documentation, "Write-Ahead Logging" and "PRAGMA synchronous").
//
// Writers take the lock at BEGIN (BEGIN IMMEDIATE), and every connection has
// a busy timeout, so concurrent writers queue instead of failing with
// SQLITE_BUSY halfway through a transaction. Readers never block the writer.
//
// # Schema
//
// The schema is versioned: schema_migrations records every applied
// migration, and Open applies the missing ones in order, each in its own
// transaction. Times are stored as INTEGER Unix nanoseconds (UTC); in the
// sqlite3 shell, datetime(at/1000000000, 'unixepoch') shows them.
//
// # Outbox
//
// A producer calls Enqueue (idempotent on key) in the same transaction as the
// state change that causes it, a sink reads Due entries, delivers them, and
// calls MarkSent or MarkFailed with a retry time. A crash between delivery and
// MarkSent re-delivers with the same key, which the receivers make harmless
// (InfluxDB points have fixed timestamps and tags; e-mails carry a Message-ID
// derived from the key).
package store
