package notify

import (
	"fmt"
	"sort"
	"strings"
	"unicode/utf8"
)

// foldEvents gathers the events of each fault into one: a message shows a
// fault once, as it stands at its latest event, with all its events listed
// under it in time order. A catch-up after a restart or a flapping fault would
// otherwise put "opened" and "cleared" entries for one fault all over the
// message, ranked by cost rather than in time order. A fault that opened in
// the same message keeps "opened" when a later event only escalated or
// reminded (or "re-opened"). The result is ranked by sortEvents.
func foldEvents(evs []Event) []Event {
	byID := map[string][]Event{}
	var ids []string
	for _, e := range evs {
		if _, ok := byID[e.T.FaultID]; !ok {
			ids = append(ids, e.T.FaultID)
		}
		byID[e.T.FaultID] = append(byID[e.T.FaultID], e)
	}
	out := make([]Event, 0, len(ids))
	for _, id := range ids {
		g := byID[id]
		sort.SliceStable(g, func(i, j int) bool {
			if !g[i].T.At.Equal(g[j].T.At) {
				return g[i].T.At.Before(g[j].T.At)
			}
			return g[i].Type == EventOpened && g[j].Type != EventOpened
		})
		last := g[len(g)-1]
		if len(g) > 1 {
			last.history = append([]Event(nil), g...)
		}
		if last.Type != EventCleared {
			for _, e := range g {
				if e.Type == EventOpened || e.Type == EventReopened {
					last.Type = e.Type
					break
				}
			}
		}
		out = append(out, last)
	}
	sortEvents(out)
	return out
}

// maxSubject bounds a subject line in characters: an inbox list shows the
// first 50-80, and what follows the counts and the lead fault is in the
// message.
const maxSubject = 110

// subject summarises a message in one line: the site (one mailbox may get
// several sites' alerts, Route.Sites), then for one fault its entity, kind
// and what happened; for several, the count of faults per
// event type and the fault that leads the message (the dearest one needing
// attention), so an inbox list shows what to open first. evs are folded
// and ranked (foldEvents).
func (c *Config) subject(site string, evs []Event) string {
	if len(evs) == 1 {
		e := evs[0]
		return clip(fmt.Sprintf("[risewatch] %s: %s %s %s", clipTo(site, maxSubjectSite), e.T.Entity, e.T.Kind, e.Type))
	}
	counts := map[EventType]int{}
	for _, e := range evs {
		counts[e.Type]++
	}
	var parts []string
	for _, t := range []EventType{EventOpened, EventReopened, EventUnsnoozed, EventEscalated, EventReminder, EventDigest, EventCleared} {
		if counts[t] > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", counts[t], t))
		}
	}
	s := fmt.Sprintf("[risewatch] %s: %s", clipTo(site, maxSubjectSite), strings.Join(parts, ", "))
	lead := evs[0]
	s += fmt.Sprintf("; %s %s", lead.T.Entity, lead.T.Kind)
	if lead.Type != EventCleared && lead.T.Impact.WeeklyCost >= 0.005 {
		s += " (" + c.money(lead.T.Impact.WeeklyCost) + " a week)"
	}
	if more := fmt.Sprintf(" and %d more", len(evs)-1); utf8.RuneCountInString(s+more) <= maxSubject {
		s += more // the counts already say it when there is no room
	}
	return clip(s)
}

// maxSubjectSite bounds the site name in a subject for several faults, so
// that a long name leaves room for the counts.
const maxSubjectSite = 40

// clip shortens a subject to at most maxSubject characters (clipTo).
func clip(s string) string { return clipTo(s, maxSubject) }

// clipTo shortens s to at most n characters at a word boundary, marking the
// cut with an ellipsis, so the text never ends mid-word.
func clipTo(s string, n int) string {
	if utf8.RuneCountInString(s) <= n {
		return s
	}
	r := []rune(s)[:n-1]
	cut := string(r)
	if i := strings.LastIndexByte(cut, ' '); i > 0 {
		cut = cut[:i]
	}
	return strings.TrimRight(cut, " ,;:") + "…"
}
