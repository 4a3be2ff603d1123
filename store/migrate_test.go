package store

import (
	"context"
	"testing"
	"time"
)

// TestUpgradeFromV1 builds a version-1 database with data in it, reopens it
// with the current build and checks the data survived and the schema moved on.
func TestUpgradeFromV1(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	old, err := Open(ctx, dir, Options{MaxVersion: 1})
	if err != nil {
		t.Fatal(err)
	}
	if v, _ := old.Version(ctx); v != 1 {
		t.Fatalf("old store at version %d, want 1", v)
	}
	if _, err := old.DB().ExecContext(ctx, "SELECT 1 FROM notifications"); err == nil {
		t.Fatal("v1 schema already has the v2 table")
	}
	_ = old.SaveState(ctx, "faults/VAV-1", []byte("open"))
	_ = old.Enqueue(ctx, "mail-1", "email", []byte("x"))
	if err := old.Close(); err != nil {
		t.Fatal(err)
	}

	st, err := Open(ctx, dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	if v, _ := st.Version(ctx); v != SchemaVersion() {
		t.Fatalf("upgraded store at version %d, want %d", v, SchemaVersion())
	}
	if b, ok, _ := st.LoadState(ctx, "faults/VAV-1"); !ok || string(b) != "open" {
		t.Fatal("state lost in upgrade")
	}
	if n, _, _ := st.Pending(ctx, "email"); n != 1 {
		t.Fatal("outbox lost in upgrade")
	}
	if err := st.RecordNotification(ctx, Notification{FaultID: "F", Channel: "email", Recipient: "a@example.org", OutboxKey: "mail-1", SentAt: time.Date(2025, 1, 14, 9, 0, 0, 0, time.UTC)}); err != nil {
		t.Fatalf("v2 table unusable after upgrade: %v", err)
	}
	var applied int
	_ = st.DB().QueryRowContext(ctx, "SELECT COUNT(*) FROM schema_migrations").Scan(&applied)
	if applied != len(migrations) {
		t.Fatalf("%d migrations recorded, want %d", applied, len(migrations))
	}
	if err := st.IntegrityCheck(ctx); err != nil {
		t.Fatal(err)
	}
}

func TestRefusesNewerSchema(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	st, err := Open(ctx, dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	_, _ = st.DB().ExecContext(ctx, "INSERT INTO schema_migrations VALUES (999, 'future', 0)")
	st.Close()
	if _, err := Open(ctx, dir, Options{}); err == nil {
		t.Fatal("opened a store with a newer schema")
	}
}
