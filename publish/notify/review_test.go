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

	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/store"
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
		{"snooze ended", rules.StateSuppressed, rules.StateOpen, "Larkspur Commons: VAV-1-03 leaking-valve open after snooze"},
		{"escalated", rules.StateOpen, rules.StateOpen, "Larkspur Commons: VAV-1-03 leaking-valve more urgent"},
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
// fault appears once, as it stands at its latest event, with its events in
// time order under it; faults that need attention come before
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
		!strings.Contains(text, "Changes: opened Wed 14 Jan 10:00 UTC; cleared Wed 14 Jan 12:00 UTC; opened Wed 14 Jan 15:00 UTC") {
		t.Errorf("VAV-1-03 not shown as opened with its events in order:\n%s", text)
	}
	i7, i3, i2 := strings.Index(text, "== VAV-1-07"), strings.Index(text, "== VAV-1-03"), strings.Index(text, "== VAV-2-01")
	if !(i7 < i3 && i3 < i2) {
		t.Errorf("order VAV-1-07 %d, VAV-1-03 %d, VAV-2-01 (cleared) %d: want open faults by cost, then cleared", i7, i3, i2)
	}
	if want := "[risewatch] Larkspur Commons: 2 opened, 1 cleared; VAV-1-07 leaking-valve (USD 10.00 a week) and 2 more"; subj != want {
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
	full := "[risewatch] " + site + ": 40 opened; VAV-4-39 leaking-valve (USD 39.00 a week) and 39 more"
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
	// No room for "and 39 more": it is left out whole, not cut.
	s = c.subject("Wrenfield College East Campus (demo)", evs)
	if want := "[risewatch] Wrenfield College East Campus (demo): 40 opened; VAV-4-39 leaking-valve (USD 39.00 a week)"; s != want {
		t.Errorf("subject\n%q, want\n%q", s, want)
	}
}

// TestClearedItemSaysWhenAndWhy: a cleared fault says when it cleared, and
// one closed because another fault explains it (a cold loop, a valve stuck
// open) says so, so the operator does not read it as repaired; its figures
// are labelled as what it did while open.
func TestClearedItemSaysWhenAndWhy(t *testing.T) {
	c := testConfig()
	tr := leak("VAV-1-03", t0.Add(3*time.Hour))
	tr.From, tr.To, tr.ExplainedBy = rules.StateOpen, rules.StateClear, "VAV-1-03/stuck-valve"
	it := c.itemFor(Event{Type: EventCleared, T: tr}, tr.At)
	if it.Cleared != "Wed 14 Jan 13:00 UTC" {
		t.Errorf("cleared at %q, want Wed 14 Jan 13:00 UTC", it.Cleared)
	}
	if !strings.Contains(it.Explained, "VAV-1-03/stuck-valve explains it") || !strings.Contains(it.Explained, "not a repair") {
		t.Errorf("explained-by note %q", it.Explained)
	}
	if it.MattersLabel != "While it was open" {
		t.Errorf("figures of a cleared fault labelled %q", it.MattersLabel)
	}
	open := c.itemFor(Event{Type: EventOpened, T: leak("VAV-1-03", t0)}, t0)
	if open.Cleared != "" || open.Explained != "" || open.MattersLabel != "Why it matters" {
		t.Errorf("open item: cleared %q, explained %q, label %q", open.Cleared, open.Explained, open.MattersLabel)
	}
	clk := &clock{t: t0.Add(3 * time.Hour)}
	n, rs := quietNotifier(t, c, clk)
	sendAll(t, n, clk, []rules.Transition{tr})
	_, text := mailText(t, rs.mails[0])
	for _, want := range []string{"Cleared: Wed 14 Jan 13:00 UTC", "Closed because VAV-1-03/stuck-valve explains it", "While it was open: unwanted heat"} {
		if !strings.Contains(text, want) {
			t.Errorf("text lacks %q:\n%s", want, text)
		}
	}
}

// TestItemSaysWhere: an operator sent to a box needs where it is: the
// terminal's location text, its air handler and its hot-water loop (a loop
// fault does not name itself again).
func TestItemSaysWhere(t *testing.T) {
	c := testConfig()
	tr := leak("VAV-1-03", t0)
	tr.Location = "Larch Hall room 103"
	if got, want := c.itemFor(Event{Type: EventOpened, T: tr}, t0).Where, "Larch Hall room 103, air handler AHU-1, hot-water loop HW-1"; got != want {
		t.Errorf("where %q, want %q", got, want)
	}
	loop := rules.Transition{FaultID: "HW-1/cold-loop", Entity: "HW-1", EntityKind: rules.EntityLoop, Kind: fdd.KindColdLoop, Loop: "HW-1",
		From: rules.StatePending, To: rules.StateOpen, At: t0, Since: t0}
	if got := c.itemFor(Event{Type: EventOpened, T: loop}, t0).Where; got != "" {
		t.Errorf("loop fault where %q, want none", got)
	}
	clk := &clock{t: t0}
	n, rs := quietNotifier(t, c, clk)
	sendAll(t, n, clk, []rules.Transition{tr})
	if _, text := mailText(t, rs.mails[0]); !strings.Contains(text, "Where: Larch Hall room 103, air handler AHU-1") {
		t.Errorf("text lacks the location:\n%s", text)
	}
}

// TestNegligibleFiguresLeftOut: a figure that reads zero at its printed
// precision ("0.0 MBH (0.00 kW)", "USD 0.00") is left out of "Why it
// matters" rather than printed.
func TestNegligibleFiguresLeftOut(t *testing.T) {
	c := testConfig()
	tr := leak("VAV-1-03", t0)
	tr.Impact = rules.Impact{WastedHeatW: 4, AddedCoolingW: 4, ShortfallW: 2, WeeklyHeatKWh: 0.3, WeeklyCoolKWh: 0.1, WeeklyCost: 0.004}
	if got := c.itemFor(Event{Type: EventOpened, T: tr}, t0).Matters; got != "" {
		t.Errorf("negligible impact printed as %q", got)
	}
	tr.Impact.WastedHeatW, tr.Impact.WeeklyCost = 590, 1.25
	got := c.itemFor(Event{Type: EventOpened, T: tr}, t0).Matters
	// 590 W × 3.41214 Btu/h per W = 2013 Btu/h = 2.0 MBH
	if got != "unwanted heat 2.0 MBH (0.59 kW); about USD 1.25 a week" {
		t.Errorf("matters %q", got)
	}
}

// TestDatesCarryTheYearWhenNotThisYear: a fault open since last year (or
// history mailed in a later year) shows the year; this year's dates do not.
func TestDatesCarryTheYearWhenNotThisYear(t *testing.T) {
	c := testConfig()
	tr := leak("VAV-1-03", t0)
	tr.Since = time.Date(2025, 12, 29, 8, 15, 0, 0, time.UTC)
	if got := c.itemFor(Event{Type: EventReminder, T: tr}, t0).Since; got != "Mon 29 Dec 2025 08:15 UTC" {
		t.Errorf("since %q, want Mon 29 Dec 2025 08:15 UTC", got)
	}
	tr.Since = t0.Add(-time.Hour)
	if got := c.itemFor(Event{Type: EventReminder, T: tr}, t0).Since; got != "Wed 14 Jan 09:00 UTC" {
		t.Errorf("since %q, want Wed 14 Jan 09:00 UTC", got)
	}
}

// TestAdvisoryBeforeTheChecks: the advisory and hot-water safety notice
// come before the first fault's checks in both parts, so a message with
// many faults does not leave it below every instruction.
func TestAdvisoryBeforeTheChecks(t *testing.T) {
	clk := &clock{t: t0}
	n, rs := quietNotifier(t, testConfig(), clk)
	var ts []rules.Transition
	for i := 0; i < 12; i++ {
		ts = append(ts, leak(fmt.Sprintf("VAV-1-%02d", i), t0))
	}
	sendAll(t, n, clk, ts)
	msg, err := mail.ReadMessage(bytes.NewReader(rs.mails[0].Data))
	if err != nil {
		t.Fatal(err)
	}
	text, html := parts(t, msg)
	for name, body := range map[string]string{"text": text, "html": html} {
		a, c := strings.Index(body, "scald"), strings.Index(body, "What to check first")
		if a < 0 || c < 0 || a > c {
			t.Errorf("%s part: safety notice at %d, first checks at %d; want the notice first", name, a, c)
		}
		if strings.Count(body, "advisory only") != 1 {
			t.Errorf("%s part: advisory printed %d times, want once", name, strings.Count(body, "advisory only"))
		}
	}
}

// TestReopenedFaultSaysSo: a fault that opens again after the operator was
// mailed about it (and its clearing) is "re-opened", not a new "opened", so
// a recurring fault is recognised; the store's notification records say
// what was mailed. A first opening stays "opened".
func TestReopenedFaultSaysSo(t *testing.T) {
	ctx := context.Background()
	st, err := store.Open(ctx, t.TempDir(), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	clk := &clock{t: time.Now()} // the store stamps queued items with the wall clock
	rs := &recSender{}
	n := New(testConfig(), "Larkspur Commons", st, rs, clk.now, slog.New(slog.NewTextHandler(io.Discard, nil)))
	tr := leak("VAV-3-04", clk.now())
	other := leak("VAV-3-05", clk.now())
	sendAll(t, n, clk, []rules.Transition{tr})
	cl := tr
	cl.From, cl.To, cl.At = rules.StateOpen, rules.StateClear, clk.now()
	sendAll(t, n, clk, []rules.Transition{cl})
	again := tr
	again.At, again.Since = clk.now(), clk.now().Add(-time.Hour)
	sendAll(t, n, clk, []rules.Transition{again})
	other.At = clk.now()
	sendAll(t, n, clk, []rules.Transition{other})
	var subjects []string
	for _, m := range rs.mails {
		s, _ := mailText(t, m)
		subjects = append(subjects, s)
	}
	want := []string{
		"[risewatch] Larkspur Commons: VAV-3-04 leaking-valve opened",
		"[risewatch] Larkspur Commons: VAV-3-04 leaking-valve cleared",
		"[risewatch] Larkspur Commons: VAV-3-04 leaking-valve re-opened",
		"[risewatch] Larkspur Commons: VAV-3-05 leaking-valve opened",
	}
	if strings.Join(subjects, "\n") != strings.Join(want, "\n") {
		t.Errorf("subjects\n%s\nwant\n%s", strings.Join(subjects, "\n"), strings.Join(want, "\n"))
	}
}

// TestAckCommandHasRequiredFlags: the command printed for acknowledging on
// the server carries every flag "risewatch ack" refuses to run without
// (--config, --fault, --by), with the site file when the daemon gave it.
func TestAckCommandHasRequiredFlags(t *testing.T) {
	c := testConfig()
	tr := leak("VAV-1-03", t0)
	if got, want := c.itemFor(Event{Type: EventOpened, T: tr}, t0).AckCmd,
		`risewatch ack --fault VAV-1-03/leaking-valve --config SITE-FILE --by "YOUR NAME"`; got != want {
		t.Errorf("without a site file: %q, want %q", got, want)
	}
	c.SiteFile = "/etc/risewatch/Larkspur Commons.yaml"
	got := c.itemFor(Event{Type: EventOpened, T: tr}, t0).AckCmd
	if want := `risewatch ack --fault VAV-1-03/leaking-valve --config '/etc/risewatch/Larkspur Commons.yaml' --by "YOUR NAME"`; got != want {
		t.Errorf("with a site file: %q, want %q", got, want)
	}
}

// TestSingleFaultSubjectNamesTheSite: routes can select sites, so one
// mailbox may get alerts from several; a one-fault subject names the site
// like every other subject does.
func TestSingleFaultSubjectNamesTheSite(t *testing.T) {
	c := testConfig()
	evs := foldEvents([]Event{{Type: EventOpened, T: leak("VAV-2-07", t0)}})
	if got, want := c.subject("Larkspur Commons", evs), "[risewatch] Larkspur Commons: VAV-2-07 leaking-valve opened"; got != want {
		t.Errorf("subject %q, want %q", got, want)
	}
}
