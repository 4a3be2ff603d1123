package notify

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"sort"
	"strings"
	"time"

	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/store"
)

// Outbox channels used by the notifier.
const (
	ChannelEvent = "email-event" // one durable record per fault event, waiting to be grouped
	ChannelMail  = "email"       // one composed message, waiting to be sent
)

// Queue is the durable outbox (implemented by *store.Store).
type Queue interface {
	Enqueue(ctx context.Context, key, channel string, payload []byte) error
	DueOn(ctx context.Context, channel string, now time.Time, limit int) ([]store.OutboxItem, error)
	MarkSent(ctx context.Context, key string, at time.Time) error
	MarkFailed(ctx context.Context, key string, cause error, retryAt time.Time) error
}

// recorder is implemented by queues that also keep "what was sent to whom".
type recorder interface {
	RecordNotification(ctx context.Context, n store.Notification) error
}

// notificationLister is implemented by queues that can say what was sent
// about a fault (*store.Store); the notifier then tells a fault opening
// again from one opening for the first time.
type notificationLister interface {
	Notifications(ctx context.Context, faultID string) ([]store.Notification, error)
}

// Notifier turns fault transitions into grouped, durable, deduplicated e-mail.
type Notifier struct {
	cfg    Config
	site   string
	q      Queue
	send   Sender
	now    func() time.Time
	log    *slog.Logger
	render *renderer
	// MaxBackoff bounds the retry interval of a message that failed to send.
	MaxBackoff time.Duration
}

// New returns a notifier. cfg must have been validated. now is the wall
// clock (nil: time.Now); quiet hours and grouping run on it.
func New(cfg Config, site string, q Queue, s Sender, now func() time.Time, log *slog.Logger) *Notifier {
	if now == nil {
		now = time.Now
	}
	if log == nil {
		log = slog.Default()
	}
	if cfg.Location == nil {
		cfg.Location = time.UTC
	}
	if cfg.GroupFor == 0 {
		cfg.GroupFor = 5 * time.Minute
	}
	return &Notifier{cfg: cfg, site: site, q: q, send: s, now: now, log: log, render: newRenderer(), MaxBackoff: time.Hour}
}

type eventRecord struct {
	Type EventType        `json:"type"`
	T    rules.Transition `json:"t"`
}

type mailRecord struct {
	Route     string    `json:"route"`
	To        []string  `json:"to"`
	Subject   string    `json:"subject"`
	NotBefore time.Time `json:"not_before"`
	Faults    []string  `json:"faults"`
	Data      []byte    `json:"data"`
}

func key(parts ...string) string {
	h := sha256.Sum256([]byte(strings.Join(parts, "\x00")))
	return hex.EncodeToString(h[:12])
}

// Handle records the e-mail-worthy transitions durably: a fault that
// opened, one still there when its snooze ended, one that became more
// urgent, and a fault that cleared after being open. It sends nothing
// itself.
func (n *Notifier) Handle(ctx context.Context, ts []rules.Transition) error {
	for _, t := range ts {
		var typ EventType
		switch {
		case t.To == rules.StateOpen && (t.From == rules.StateClear || t.From == rules.StatePending):
			typ = EventOpened
		case t.To == rules.StateOpen && t.From == rules.StateSuppressed:
			typ = EventUnsnoozed
		case t.To == rules.StateOpen && t.From == rules.StateOpen:
			typ = EventEscalated // a more urgent rule now holds it
		case t.To == rules.StateClear && (t.From == rules.StateOpen || t.From == rules.StateAcked || t.From == rules.StateSuppressed):
			typ = EventCleared
		default:
			continue
		}
		if err := n.enqueueEvent(ctx, typ, t, key("event", t.FaultID, string(typ), t.At.UTC().Format(time.RFC3339Nano))); err != nil {
			return err
		}
	}
	return nil
}

func (n *Notifier) enqueueEvent(ctx context.Context, typ EventType, t rules.Transition, k string) error {
	b, err := json.Marshal(eventRecord{Type: typ, T: t})
	if err != nil {
		return fmt.Errorf("notify: encode event %s: %w", t.FaultID, err)
	}
	if err := n.q.Enqueue(ctx, k, ChannelEvent, b); err != nil {
		return fmt.Errorf("notify: queue event %s: %w", t.FaultID, err)
	}
	return nil
}

// Remind queues a reminder for every fault in open that is still open and
// neither acknowledged nor suppressed once each Renotify interval since it
// opened. Keys are derived from the opening time and the interval number,
// so a restart never sends a reminder twice. The intervals count from
// OpenedAt: the open list (rules.Evaluator.Open) stamps At with the time
// it was built, which moves with every change on the site.
func (n *Notifier) Remind(ctx context.Context, open []rules.Transition, at time.Time) error {
	if n.cfg.Renotify <= 0 {
		return nil
	}
	for _, t := range open {
		if t.To != rules.StateOpen {
			continue // acked or suppressed faults stop repeating
		}
		since := t.OpenedAt
		if since.IsZero() { // recorded before OpenedAt was published
			since = t.At
		}
		if since.IsZero() || at.Before(since) {
			continue
		}
		k := int64(at.Sub(since) / n.cfg.Renotify)
		if k < 1 {
			continue
		}
		if err := n.enqueueEvent(ctx, EventReminder, t, key("remind", t.FaultID, since.UTC().Format(time.RFC3339Nano), fmt.Sprint(k))); err != nil {
			return err
		}
	}
	return nil
}

// Digest queues the daily digest for every digest route, once per local day,
// at or after DigestHour.
func (n *Notifier) Digest(ctx context.Context, open []rules.Transition) error {
	now := n.now().In(n.cfg.Location)
	if now.Hour() < n.cfg.DigestHour {
		return nil
	}
	day := now.Format("2006-01-02")
	for _, r := range n.cfg.Routes {
		if !r.Digest {
			continue
		}
		var evs []Event
		for _, t := range open {
			if n.matches(r, t) && t.To != rules.StateSuppressed {
				evs = append(evs, Event{Type: EventDigest, T: t})
			}
		}
		if len(evs) == 0 {
			continue
		}
		sortEvents(evs)
		subj := fmt.Sprintf("[risewatch] %s: daily digest, %d open fault(s)", n.site, len(evs))
		if err := n.queueMail(ctx, r, key("digest", r.Name, day), subj, evs, now); err != nil {
			return err
		}
	}
	return nil
}

func (n *Notifier) matches(r Route, t rules.Transition) bool {
	in := func(list []string, v string) bool {
		if len(list) == 0 {
			return true
		}
		for _, x := range list {
			if x == v {
				return true
			}
		}
		return false
	}
	if !in(r.Sites, n.site) || !in(r.AHUs, t.AHU) || !in(r.Loops, t.Loop) || !in(r.Kinds, t.Kind.String()) {
		return false
	}
	if r.MaxSeverity > 0 && (t.Severity == 0 || int(t.Severity) > r.MaxSeverity) {
		return false
	}
	return true
}

// sortEvents ranks a message's faults: the ones that need attention
// (opened, still open, ...) before the cleared ones, each by weekly cost,
// dearest first.
func sortEvents(evs []Event) {
	sort.SliceStable(evs, func(i, j int) bool {
		if ci, cj := evs[i].Type == EventCleared, evs[j].Type == EventCleared; ci != cj {
			return cj
		}
		if evs[i].T.Impact.WeeklyCost != evs[j].T.Impact.WeeklyCost {
			return evs[i].T.Impact.WeeklyCost > evs[j].T.Impact.WeeklyCost
		}
		return evs[i].T.FaultID < evs[j].T.FaultID
	})
}

// Flush groups the queued events that have waited at least GroupFor (or all
// of them once the oldest has) into one message per route and queues those
// messages. A loop-level fault and the terminal events on that loop go out
// together, so one cold loop is one message.
func (n *Notifier) Flush(ctx context.Context) error {
	now := n.now()
	items, err := n.q.DueOn(ctx, ChannelEvent, now, 5000)
	if err != nil {
		return fmt.Errorf("notify: read queued events: %w", err)
	}
	if len(items) == 0 {
		return nil
	}
	oldest := items[0].CreatedAt
	for _, it := range items {
		if it.CreatedAt.Before(oldest) {
			oldest = it.CreatedAt
		}
	}
	if now.Sub(oldest) < n.cfg.GroupFor {
		return nil
	}
	var evs []Event
	var keys []string
	for _, it := range items {
		var rec eventRecord
		if err := json.Unmarshal(it.Payload, &rec); err != nil {
			n.log.Error("notify: dropping unreadable queued event", "key", it.Key, "err", err)
			keys = append(keys, it.Key)
			continue
		}
		evs = append(evs, Event{Type: rec.Type, T: rec.T})
		keys = append(keys, it.Key)
	}
	sort.Strings(keys)
	n.markReopened(ctx, evs)
	for _, r := range n.cfg.Routes {
		if r.Digest {
			continue
		}
		var mine []Event
		for _, e := range evs {
			if n.matches(r, e.T) {
				mine = append(mine, e)
			}
		}
		if len(mine) == 0 {
			continue
		}
		mine = foldEvents(mine)
		if err := n.queueMail(ctx, r, key(append([]string{"mail", r.Name}, keys...)...), n.cfg.subject(n.site, mine), mine, now); err != nil {
			return err
		}
	}
	for _, k := range keys {
		if err := n.q.MarkSent(ctx, k, now); err != nil {
			return fmt.Errorf("notify: mark event %s grouped: %w", k, err)
		}
	}
	return nil
}

// markReopened turns "opened" into "re-opened" for a fault that was mailed
// about before: a message went out only while an earlier opening of it was
// open or as it cleared, so the operator has seen this fault come and go.
// Without a notification record (a queue that keeps none, or an error) the
// event stays "opened".
func (n *Notifier) markReopened(ctx context.Context, evs []Event) {
	nl, ok := n.q.(notificationLister)
	if !ok {
		return
	}
	seen := map[string]bool{}
	for i := range evs {
		if evs[i].Type != EventOpened {
			continue
		}
		id := evs[i].T.FaultID
		before, done := seen[id]
		if !done {
			recs, err := nl.Notifications(ctx, id)
			if err != nil {
				n.log.Warn("notify: notifications of a fault not read; mailed as opened", "fault", id, "err", err)
			}
			before = err == nil && len(recs) > 0
			seen[id] = before
		}
		if before {
			evs[i].Type = EventReopened
		}
	}
}

func (n *Notifier) queueMail(ctx context.Context, r Route, k, subj string, evs []Event, now time.Time) error {
	data, err := n.cfg.compose(n.render, n.site, k, r.To, now, subj, evs)
	if err != nil {
		return fmt.Errorf("notify: compose %s: %w", r.Name, err)
	}
	rec := mailRecord{Route: r.Name, To: r.To, Subject: subj, Data: data}
	if !r.IgnoreQuiet {
		rec.NotBefore = n.cfg.Quiet.Release(now, n.cfg.Location)
	}
	for _, e := range evs {
		rec.Faults = append(rec.Faults, e.T.FaultID)
	}
	b, err := json.Marshal(rec)
	if err != nil {
		return err
	}
	if err := n.q.Enqueue(ctx, k, ChannelMail, b); err != nil {
		return fmt.Errorf("notify: queue message to %s: %w", r.Name, err)
	}
	return nil
}

// Deliver sends the queued messages that are due. A message that fails is
// retried with exponential back-off; it is marked sent only after the server
// accepted it, and carries a fixed Message-ID, so a crash in between re-sends
// the same message (receivers de-duplicate on Message-ID). It returns the
// number of messages sent.
func (n *Notifier) Deliver(ctx context.Context) (int, error) {
	now := n.now()
	items, err := n.q.DueOn(ctx, ChannelMail, now, 100)
	if err != nil {
		return 0, fmt.Errorf("notify: read queued mail: %w", err)
	}
	sent := 0
	var errs []error
	for _, it := range items {
		var rec mailRecord
		if err := json.Unmarshal(it.Payload, &rec); err != nil {
			errs = append(errs, fmt.Errorf("notify: queued message %s unreadable: %w", it.Key, err))
			_ = n.q.MarkFailed(ctx, it.Key, err, now.Add(24*time.Hour*365))
			continue
		}
		if now.Before(rec.NotBefore) {
			if err := n.q.MarkFailed(ctx, it.Key, errors.New("held for quiet hours"), rec.NotBefore); err != nil {
				errs = append(errs, err)
			}
			continue
		}
		if err := n.send.Send(ctx, Mail{From: n.cfg.From, To: rec.To, Data: rec.Data}); err != nil {
			back := store.Backoff(it.Attempts, time.Minute, n.MaxBackoff)
			n.log.Warn("notify: send failed, will retry", "route", rec.Route, "key", it.Key, "attempt", it.Attempts+1, "retry_in", back, "err", err)
			if merr := n.q.MarkFailed(ctx, it.Key, err, now.Add(back)); merr != nil {
				errs = append(errs, merr)
			}
			errs = append(errs, err)
			continue
		}
		if err := n.q.MarkSent(ctx, it.Key, n.now()); err != nil {
			errs = append(errs, fmt.Errorf("notify: mark %s sent: %w", it.Key, err))
			continue
		}
		if rn, ok := n.q.(recorder); ok {
			for _, f := range rec.Faults {
				for _, to := range rec.To {
					if err := rn.RecordNotification(ctx, store.Notification{FaultID: f, Channel: ChannelMail, Recipient: to, OutboxKey: it.Key, SentAt: n.now()}); err != nil {
						errs = append(errs, err)
					}
				}
			}
		}
		sent++
		n.log.Info("notify: sent", "route", rec.Route, "to", len(rec.To), "faults", len(rec.Faults), "subject", rec.Subject)
	}
	return sent, errors.Join(errs...)
}

// Summary is a short line for logs and tests.
func Summary(t rules.Transition) string {
	k := t.Kind
	if k == fdd.KindNone {
		return t.FaultID
	}
	return t.Entity + " " + k.String()
}
