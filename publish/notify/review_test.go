package notify

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"log/slog"
	"mime"
	"net/mail"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

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

// mailText returns the decoded text part and the subject of a recorded mail.
func mailText(t *testing.T, m Mail) (subj, text string) {
	t.Helper()
	msg, err := mail.ReadMessage(bytes.NewReader(m.Data))
	if err != nil {
		t.Fatal(err)
	}
	subj, err = new(mime.WordDecoder).DecodeHeader(msg.Header.Get("Subject"))
	if err != nil {
		t.Fatal(err)
	}
	text, _ = parts(t, msg)
	return subj, text
}

// sendAll handles ts, waits out the group wait and delivers.
func sendAll(t *testing.T, n *Notifier, clk *clock, ts []rules.Transition) {
	t.Helper()
	ctx := context.Background()
	if err := n.Handle(ctx, ts); err != nil {
		t.Fatal(err)
	}
	clk.add(10 * time.Minute)
	if err := n.Flush(ctx); err != nil {
		t.Fatal(err)
	}
	if _, err := n.Deliver(ctx); err != nil {
		t.Fatal(err)
	}
}

// TestGroupedMessageShowsEachFaultOnce: when one message gathers several
// events of one fault (a catch-up after a restart, a fault that flaps), the
// fault appears once, as it stands at its latest event, with the earlier
// events in time order under it; faults that need attention come before
// cleared ones, each by cost; and the subject counts faults, not events,
// and names the fault to open first.
func TestGroupedMessageShowsEachFaultOnce(t *testing.T) {
	clk := &clock{t: t0.Add(6 * time.Hour)}
	n, rs := quietNotifier(t, testConfig(), clk)
	flap := func(from, to rules.State, at time.Time) rules.Transition {
		tr := leak("VAV-1-03", at)
		tr.From, tr.To, tr.Impact.WeeklyCost = from, to, 3
		return tr
	}
	dear := leak("VAV-1-07", t0.Add(time.Hour))
	dear.Impact.WeeklyCost = 10
	gone := leak("VAV-2-01", t0.Add(2*time.Hour))
	gone.From, gone.To, gone.Impact.WeeklyCost = rules.StateOpen, rules.StateClear, 20
	sendAll(t, n, clk, []rules.Transition{ // not in time order, as the outbox may return them
		flap(rules.StatePending, rules.StateOpen, t0.Add(5*time.Hour)),
		gone,
		flap(rules.StateOpen, rules.StateClear, t0.Add(2*time.Hour)),
		dear,
		flap(rules.StatePending, rules.StateOpen, t0),
	})
	if len(rs.mails) != 1 {
		t.Fatalf("%d messages, want 1", len(rs.mails))
	}
	subj, text := mailText(t, rs.mails[0])
	if c := strings.Count(text, "== VAV-1-03: leaking-valve"); c != 1 {
		t.Errorf("VAV-1-03 appears %d times, want once:\n%s", c, text)
	}
	if !strings.Contains(text, "== VAV-1-03: leaking-valve (opened) ==") ||
		!strings.Contains(text, "Earlier: opened Wed 14 Jan 10:00 UTC; cleared Wed 14 Jan 12:00 UTC") {
		t.Errorf("VAV-1-03 not shown as opened with its earlier events in order:\n%s", text)
	}
	i7, i3, i2 := strings.Index(text, "== VAV-1-07"), strings.Index(text, "== VAV-1-03"), strings.Index(text, "== VAV-2-01")
	if !(i7 < i3 && i3 < i2) {
		t.Errorf("order VAV-1-07 %d, VAV-1-03 %d, VAV-2-01 (cleared) %d: want open faults by cost, then cleared", i7, i3, i2)
	}
	if want := "[risewatch] Larkspur Commons: 2 opened, 1 cleared; VAV-1-07 leaking-valve, USD 10.00 a week, and 2 more"; subj != want {
		t.Errorf("subject\n%q, want\n%q", subj, want)
	}
}

// TestSubjectBoundedAtAWord: a subject for many faults on a site with a
// long name stays short enough for an inbox list and is cut between words,
// never inside one, with the counts kept.
func TestSubjectBoundedAtAWord(t *testing.T) {
	c := testConfig()
	site := "Larkspur Commons Student Residences and Conference Centre, North Campus Energy Centre"
	var evs []Event
	for i := 0; i < 40; i++ {
		tr := leak(fmt.Sprintf("VAV-%d-%02d", i/10+1, i), t0)
		tr.Impact.WeeklyCost = float64(i)
		evs = append(evs, Event{Type: EventOpened, T: tr})
	}
	evs = foldEvents(evs)
	s := c.subject(site, evs)
	full := "[risewatch] " + site + ": 40 opened; VAV-4-39 leaking-valve, USD 39.00 a week, and 39 more"
	if n := utf8.RuneCountInString(s); n > maxSubject {
		t.Errorf("subject of %d characters, want at most %d: %q", n, maxSubject, s)
	}
	words := map[string]bool{}
	for _, w := range strings.Fields(full) {
		words[strings.TrimRight(w, ",;:")] = true
	}
	for _, w := range strings.Fields(s) {
		if w = strings.TrimRight(w, ",;:…"); w != "" && !words[w] {
			t.Errorf("subject %q has %q, a word cut from %q", s, w, full)
		}
	}
	if !strings.Contains(s, "40 opened") {
		t.Errorf("subject %q lost the count", s)
	}
}
