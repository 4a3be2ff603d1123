package notify

import (
	"context"
	"io"
	"log/slog"
	"strings"
	"testing"
	"time"

	"risewatch/rules"
)

// quietNotifier is a notifier on an in-memory queue with a recording sender.
func quietNotifier(t *testing.T, cfg Config, clk *clock) (*Notifier, *recSender) {
	t.Helper()
	rs := &recSender{}
	return New(cfg, "Larkspur Commons", newMemQueue(clk.now), rs, clk.now, slog.New(slog.NewTextHandler(io.Discard, nil))), rs
}

// TestRemindersCountFromOpening: the open list the daemon hands to Remind
// (rules.Evaluator.Open) stamps every fault's At with the time the list was
// built, so reminders must count their intervals from OpenedAt: one
// reminder per Renotify interval after the fault opened, however often the
// list is rebuilt.
func TestRemindersCountFromOpening(t *testing.T) {
	clk := &clock{t: t0}
	n, rs := quietNotifier(t, testConfig(), clk) // Renotify 24 h
	ctx := context.Background()
	f := leak("VAV-1-03", t0)
	f.From, f.To, f.OpenedAt = rules.StateOpen, rules.StateOpen, t0
	for _, h := range []int{1, 13, 25, 26, 37, 49, 50} {
		at := t0.Add(time.Duration(h) * time.Hour)
		f.At = at // the open list was rebuilt at this step
		if err := n.Remind(ctx, []rules.Transition{f}, at); err != nil {
			t.Fatal(err)
		}
		clk.t = at.Add(10 * time.Minute)
		if err := n.Flush(ctx); err != nil {
			t.Fatal(err)
		}
		if _, err := n.Deliver(ctx); err != nil {
			t.Fatal(err)
		}
	}
	// Intervals completed: 1 (at 25 h) and 2 (at 49 h).
	if len(rs.mails) != 2 {
		t.Fatalf("%d reminders over 50 h with renotify 24 h, want 2", len(rs.mails))
	}
	for _, m := range rs.mails {
		if !strings.Contains(string(m.Data), "still open") {
			t.Errorf("reminder does not say the fault is still open:\n%.400s", m.Data)
		}
	}
}

// TestSnoozeEndAndEscalationAreMailed: a fault still there when its snooze
// ends comes back into view (rules: Suppressed → Open), and a fault a more
// urgent rule takes over is escalated (Open → Open at a lower severity
// number); both are notices (rules.Transition.IsNotice) and the operator
// who snoozed it or read the first message hears of them. An
// acknowledgement is not mailed.
func TestSnoozeEndAndEscalationAreMailed(t *testing.T) {
	for _, tc := range []struct {
		name     string
		from, to rules.State
		want     string // in the subject; "" = no message
	}{
		{"snooze ended", rules.StateSuppressed, rules.StateOpen, "VAV-1-03 open after snooze: leaking-valve"},
		{"escalated", rules.StateOpen, rules.StateOpen, "VAV-1-03 more urgent: leaking-valve"},
		{"acknowledged", rules.StateOpen, rules.StateAcked, ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			clk := &clock{t: t0}
			n, rs := quietNotifier(t, testConfig(), clk)
			ctx := context.Background()
			tr := leak("VAV-1-03", t0)
			tr.From, tr.To = tc.from, tc.to
			if err := n.Handle(ctx, []rules.Transition{tr}); err != nil {
				t.Fatal(err)
			}
			clk.add(10 * time.Minute)
			if err := n.Flush(ctx); err != nil {
				t.Fatal(err)
			}
			if _, err := n.Deliver(ctx); err != nil {
				t.Fatal(err)
			}
			if tc.want == "" {
				if len(rs.mails) != 0 {
					t.Fatalf("%d messages, want none", len(rs.mails))
				}
				return
			}
			if len(rs.mails) != 1 {
				t.Fatalf("%d messages, want 1", len(rs.mails))
			}
			if s := string(rs.mails[0].Data); !strings.Contains(s, "Subject: [risewatch] "+tc.want) || !strings.Contains(s, "/faults/VAV-1-03%2Fleaking-valve/ack") {
				t.Errorf("message lacks subject %q or the acknowledge link:\n%.600s", tc.want, s)
			}
		})
	}
}
