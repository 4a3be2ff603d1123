package daemon

import (
	"context"
	"testing"
	"time"

	"risewatch/store"
)

// TestPurgeSent: sent rows older than outbox_keep go; recent sent rows and
// pending rows stay.
func TestPurgeSent(t *testing.T) {
	ctx := context.Background()
	st, err := store.Open(ctx, t.TempDir(), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	now := time.Now()
	for _, k := range []string{"old", "recent", "pending"} {
		if err := st.Enqueue(ctx, k, "email", []byte(k)); err != nil {
			t.Fatal(err)
		}
	}
	if err := st.MarkSent(ctx, "old", now.Add(-40*24*time.Hour)); err != nil {
		t.Fatal(err)
	}
	if err := st.MarkSent(ctx, "recent", now.Add(-24*time.Hour)); err != nil {
		t.Fatal(err)
	}
	cfg := &Config{}
	cfg.defaults() // outbox_keep 30 days
	pl := &pipeline{d: &Daemon{log: quietLog()}, p: &plan{cfg: cfg}, st: st}
	pl.purgeSent(ctx)
	for k, want := range map[string]bool{"old": false, "recent": true, "pending": true} {
		known, _, err := st.OutboxState(ctx, k)
		if err != nil {
			t.Fatal(err)
		}
		if known != want {
			t.Errorf("%s: in the outbox %v, want %v", k, known, want)
		}
	}
}
