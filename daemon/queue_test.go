package daemon

import (
	"context"
	"testing"
	"time"

	"risewatch/store"
)

// TestQueueSaysWhatWasSent: the daemon's queue passes the store's record of
// what was sent about a fault to the notifier (which then mails a fault that
// opens again as re-opened, not as new).
func TestQueueSaysWhatWasSent(t *testing.T) {
	ctx := context.Background()
	st, err := store.Open(ctx, t.TempDir(), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	var q any = txQueue{st}
	lister, ok := q.(interface {
		Notifications(ctx context.Context, faultID string) ([]store.Notification, error)
	})
	if !ok {
		t.Fatal("txQueue does not say what was sent about a fault")
	}
	if err := st.RecordNotification(ctx, store.Notification{FaultID: "VAV-1/leaking-valve", Channel: "email",
		Recipient: "ops@example.invalid", OutboxKey: "k1", SentAt: time.Unix(1736000000, 0)}); err != nil {
		t.Fatal(err)
	}
	recs, err := lister.Notifications(ctx, "VAV-1/leaking-valve")
	if err != nil || len(recs) != 1 || recs[0].Recipient != "ops@example.invalid" {
		t.Errorf("Notifications = %+v, %v; want the one recorded", recs, err)
	}
	if recs, err := lister.Notifications(ctx, "VAV-2/leaking-valve"); err != nil || len(recs) != 0 {
		t.Errorf("a fault never mailed: %+v, %v", recs, err)
	}
}
