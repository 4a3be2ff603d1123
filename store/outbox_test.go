package store

import (
	"context"
	"errors"
	"testing"
	"time"
)

func TestOutboxLifecycle(t *testing.T) {
	st := openTest(t)
	ctx := context.Background()
	for _, k := range []string{"mail-1", "mail-2", "mail-1"} { // mail-1 twice: idempotent
		if err := st.Enqueue(ctx, k, "email", []byte("body "+k)); err != nil {
			t.Fatal(err)
		}
	}
	_ = st.Enqueue(ctx, "influx-1", "influx", []byte("m f=1 1"))
	now := time.Now().Add(time.Second)
	due, err := st.Due(ctx, now, 10)
	if err != nil || len(due) != 3 {
		t.Fatalf("Due = %d items, %v; want 3", len(due), err)
	}
	mail, _ := st.DueOn(ctx, "email", now, 10)
	if len(mail) != 2 || mail[0].Key != "mail-1" || string(mail[0].Payload) != "body mail-1" {
		t.Fatalf("DueOn(email) = %+v", mail)
	}
	if err := st.MarkSent(ctx, "mail-1", now); err != nil {
		t.Fatal(err)
	}
	if err := st.Enqueue(ctx, "mail-1", "email", []byte("again")); err != nil {
		t.Fatal(err)
	}
	if mail, _ = st.DueOn(ctx, "email", now, 10); len(mail) != 1 || mail[0].Key != "mail-2" {
		t.Fatalf("after sent and re-enqueue: %+v", mail)
	}
	retry := now.Add(time.Minute)
	if err := st.MarkFailed(ctx, "mail-2", errors.New("smtp: 451 try later"), retry); err != nil {
		t.Fatal(err)
	}
	if mail, _ = st.DueOn(ctx, "email", now, 10); len(mail) != 0 {
		t.Fatalf("failed item due before retry time: %+v", mail)
	}
	mail, _ = st.DueOn(ctx, "email", retry, 10)
	if len(mail) != 1 || mail[0].Attempts != 1 || mail[0].LastError != "smtp: 451 try later" {
		t.Fatalf("after failure: %+v", mail)
	}
	if n, _, _ := st.Pending(ctx, "email"); n != 1 {
		t.Fatalf("Pending(email) = %d, want 1", n)
	}
	known, sent, _ := st.OutboxState(ctx, "mail-1")
	if !known || sent.IsZero() {
		t.Fatalf("OutboxState(mail-1) = %v %v", known, sent)
	}
	if known, _, _ := st.OutboxState(ctx, "nope"); known {
		t.Fatal("unknown key reported known")
	}
	if err := st.MarkSent(ctx, "nope", now); err == nil {
		t.Fatal("MarkSent of unknown key succeeded")
	}
	if err := st.MarkFailed(ctx, "mail-1", errors.New("x"), retry); err == nil {
		t.Fatal("MarkFailed of a sent item succeeded")
	}
	n, err := st.PurgeSent(ctx, "", now.Add(time.Nanosecond))
	if err != nil || n != 1 {
		t.Fatalf("PurgeSent = %d %v", n, err)
	}
}

func TestNotifications(t *testing.T) {
	st := openTest(t)
	ctx := context.Background()
	t0 := time.Date(2025, 1, 14, 9, 0, 0, 0, time.UTC)
	_ = st.Enqueue(ctx, "mail-7", "email", []byte("x"))
	err := st.Update(ctx, func(tx *Tx) error {
		for _, r := range []string{"ops@example.org", "tech@example.org", "ops@example.org"} {
			if err := tx.RecordNotification(ctx, Notification{FaultID: "F1", Channel: "email", Recipient: r, OutboxKey: "mail-7", SentAt: t0}); err != nil {
				return err
			}
		}
		return tx.MarkSent(ctx, "mail-7", t0)
	})
	if err != nil {
		t.Fatal(err)
	}
	ns, _ := st.Notifications(ctx, "F1")
	if len(ns) != 2 {
		t.Fatalf("Notifications = %+v, want 2 (duplicate recipient ignored)", ns)
	}
	last, _ := st.LastNotified(ctx, "F1", "email", "tech@example.org")
	if !last.Equal(t0) {
		t.Fatalf("LastNotified = %v", last)
	}
	if last, _ := st.LastNotified(ctx, "F1", "email", "nobody@example.org"); !last.IsZero() {
		t.Fatalf("LastNotified(nobody) = %v", last)
	}
}

func TestBackoff(t *testing.T) {
	// Doubling with a cap (common practice).
	cases := []struct {
		attempt int
		want    time.Duration
	}{{0, time.Second}, {1, 2 * time.Second}, {3, 8 * time.Second}, {10, time.Minute}, {1000, time.Minute}}
	for _, c := range cases {
		if got := Backoff(c.attempt, time.Second, time.Minute); got != c.want {
			t.Errorf("Backoff(%d) = %v, want %v", c.attempt, got, c.want)
		}
	}
}
