package web

import (
	"errors"
	"fmt"
	"net/http"
	"net/url"
	"sort"
	"strings"
	"time"

	"risewatch/rules"
)

// faultForm is one current fault with its acknowledge and snooze forms.
// By, Note and SnoozeDefault carry what a refused submission sent, so the
// form comes back with nothing typed lost.
type faultForm struct {
	Kind, State, Since, Message, Status    string
	Causes, Checks                         []string
	IDPath, CSRF, SnoozeDefault, SnoozeMin string
	By, Note                               string
}

func (s *Server) formFor(w http.ResponseWriter, r *http.Request, f rules.Transition) faultForm {
	since := f.Since
	if since.IsZero() {
		since = f.At
	}
	now := s.b.Now().In(s.loc())
	ff := faultForm{Kind: f.Kind.String(), State: f.To.String(), Since: since.In(s.loc()).Format("Mon 2 Jan 15:04"),
		Message: f.MessageIn(s.cfg.IP), Causes: f.Causes, Checks: f.Checks,
		IDPath: url.PathEscape(f.FaultID), CSRF: s.csrfToken(w, r),
		SnoozeDefault: now.AddDate(0, 0, 7).Format("2006-01-02"), SnoozeMin: now.AddDate(0, 0, 1).Format("2006-01-02")}
	var status []string
	if f.AckedBy != "" {
		a := "acknowledged by " + f.AckedBy
		if !f.AckedAt.IsZero() {
			a += ", " + f.AckedAt.In(s.loc()).Format("Mon 2 Jan 15:04")
		}
		status = append(status, a)
	}
	if !f.SuppressedUntil.IsZero() {
		status = append(status, "snoozed until "+f.SuppressedUntil.In(s.loc()).Format("Mon 2 Jan 2006 15:04"))
	}
	if len(status) > 0 {
		ff.Status = strings.ToUpper(status[0][:1]) + strings.Join(status, "; ")[1:] + "."
	}
	return ff
}

func (s *Server) findFault(r *http.Request) (rules.Transition, bool, error) {
	id := r.PathValue("id")
	fs, err := s.b.Faults(r.Context())
	if err != nil {
		return rules.Transition{}, false, fmt.Errorf("reading faults: %w", err)
	}
	for _, f := range fs {
		if f.FaultID == id {
			return f, true, nil
		}
	}
	return rules.Transition{}, false, nil
}

// actionPage is the page of the acknowledge and snooze forms, of their
// outcome, and of every error (with a way back).
type actionPage struct {
	page
	Heading, Error, Text, Back, BackText string
	Fault                                *faultForm
}

func (s *Server) backFor(entity string) (string, string) {
	if _, ok := s.b.Site().TerminalIndex[entity]; ok {
		return "/terminals/" + url.PathEscape(entity), "Back to " + entity
	}
	return "/", "Back to the overview"
}

// fail answers with the site's page layout, the status code and a link
// back, so that a stale e-mail link or a refused request does not leave
// the reader on a bare text page.
func (s *Server) fail(w http.ResponseWriter, status int, heading, msg, back, backText string) {
	if back == "" {
		back, backText = "/", "Back to the overview"
	}
	w.WriteHeader(status)
	s.render(w, "action", actionPage{page: s.page(heading), Heading: heading, Error: msg, Back: back, BackText: backText})
}

// notFound is the page of a path that names nothing; other methods than
// GET and HEAD on such a path are not allowed.
func (s *Server) notFound(w http.ResponseWriter, r *http.Request) {
	if r.Method != http.MethodGet && r.Method != http.MethodHead {
		w.Header().Set("Allow", "GET, HEAD")
		http.Error(w, "method not allowed", http.StatusMethodNotAllowed)
		return
	}
	s.fail(w, http.StatusNotFound, "Page not found", "There is no page at "+r.URL.Path+".", "", "")
}

// noFault is the answer for a fault that is not current: never raised, or
// cleared since the link was made.
func (s *Server) noFault(w http.ResponseWriter, r *http.Request) {
	id := r.PathValue("id")
	entity, _, _ := strings.Cut(id, "/")
	back, backText := s.backFor(entity)
	s.fail(w, http.StatusNotFound, "No current fault "+id,
		"No fault "+id+" is open, acknowledged or snoozed now: it may have cleared since the link was made. Nothing was changed.", back, backText)
}

// ackForm and snoozeForm are what e-mail links open: a page with the POST
// forms, so a GET never changes anything.
func (s *Server) ackForm(w http.ResponseWriter, r *http.Request) { s.actionForm(w, r, "Acknowledge") }
func (s *Server) snoozeForm(w http.ResponseWriter, r *http.Request) {
	s.actionForm(w, r, "Snooze")
}

func (s *Server) actionForm(w http.ResponseWriter, r *http.Request, verb string) {
	f, ok, err := s.findFault(r)
	if err != nil {
		s.fail(w, http.StatusInternalServerError, "Error", err.Error(), "", "")
		return
	}
	if !ok {
		s.noFault(w, r)
		return
	}
	ff := s.formFor(w, r, f)
	back, backText := s.backFor(f.Entity)
	s.render(w, "action", actionPage{page: s.page(verb), Heading: verb + " " + f.FaultID, Text: f.MessageIn(s.cfg.IP), Back: back, BackText: backText, Fault: &ff})
}

func (s *Server) ackPost(w http.ResponseWriter, r *http.Request) { s.actionPost(w, r, false) }
func (s *Server) snoozePost(w http.ResponseWriter, r *http.Request) {
	s.actionPost(w, r, true)
}

// actionPost applies an acknowledgement or a snooze. Refused input comes
// back as the form with the reason and what was typed (status 400).
func (s *Server) actionPost(w http.ResponseWriter, r *http.Request, snooze bool) {
	if err := s.checkCSRF(r); err != nil {
		s.fail(w, http.StatusForbidden, "Refused", "refused: "+err.Error()+". Open the form again and resubmit.", "", "")
		return
	}
	f, ok, err := s.findFault(r)
	if err != nil {
		s.fail(w, http.StatusInternalServerError, "Error", err.Error(), "", "")
		return
	}
	if !ok {
		s.noFault(w, r)
		return
	}
	by := strings.TrimSpace(r.PostFormValue("by"))
	note := strings.TrimSpace(r.PostFormValue("note"))
	untilText := strings.TrimSpace(r.PostFormValue("until"))
	verb := "Acknowledge"
	if snooze {
		verb = "Snooze"
	}
	back, backText := s.backFor(f.Entity)
	refuse := func(status int, msg string) {
		ff := s.formFor(w, r, f)
		ff.By, ff.Note = by, note
		if snooze && untilText != "" {
			ff.SnoozeDefault = untilText
		}
		w.WriteHeader(status)
		s.render(w, "action", actionPage{page: s.page(verb), Heading: verb + " " + f.FaultID, Error: msg,
			Text: f.MessageIn(s.cfg.IP), Back: back, BackText: backText, Fault: &ff})
	}
	switch {
	case by == "":
		refuse(http.StatusBadRequest, "Nothing was changed: a name is required.")
		return
	case len(by) > 80:
		refuse(http.StatusBadRequest, "Nothing was changed: the name is longer than 80 characters.")
		return
	case len(note) > 500:
		refuse(http.StatusBadRequest, "Nothing was changed: the note is longer than 500 characters.")
		return
	}
	text := ""
	if snooze {
		until, perr := time.ParseInLocation("2006-01-02", untilText, s.loc())
		switch {
		case perr != nil:
			refuse(http.StatusBadRequest, fmt.Sprintf("Nothing was changed: %q is not a date (YYYY-MM-DD).", untilText))
			return
		case !until.After(s.b.Now()):
			refuse(http.StatusBadRequest, "Nothing was changed: the snooze date "+until.Format("Mon 2 Jan 2006")+
				" is not in the future; pick "+s.b.Now().In(s.loc()).AddDate(0, 0, 1).Format("Mon 2 Jan 2006")+" or later.")
			return
		}
		err = s.b.Snooze(r.Context(), f.FaultID, by, until, note)
		text = "Snoozed until " + until.Format("Mon 2 Jan 2006") + " by " + by + "."
	} else {
		err = s.b.Ack(r.Context(), f.FaultID, by, note)
		text = "Acknowledged by " + by + ". Repeat notifications stop; the fault stays visible until it clears."
	}
	if errors.Is(err, rules.ErrUnknownFault) {
		s.noFault(w, r)
		return
	}
	if err != nil {
		refuse(http.StatusInternalServerError, "Nothing was changed: "+err.Error())
		return
	}
	s.log.Info("web: fault action", "fault", f.FaultID, "snooze", snooze, "by", by)
	s.render(w, "action", actionPage{page: s.page("Done"), Heading: f.FaultID, Text: text, Back: back, BackText: backText})
}

func (s *Server) sources(w http.ResponseWriter, r *http.Request) {
	type row struct {
		Name, Kind, Last, Class, Errors, Points, LastError string
		Reads                                              uint64
	}
	var rows []row
	now := s.wall()
	for _, src := range s.b.Sources() {
		rw := row{Name: src.Name, Kind: src.Kind, Reads: src.Reads, LastError: src.LastError, Points: fmt.Sprintf("%d (%d)", src.Points, src.StalePoints), Last: "never", Class: "bad"}
		if !src.LastSuccess.IsZero() {
			age := now.Sub(src.LastSuccess)
			rw.Last = src.LastSuccess.In(s.loc()).Format("Mon 2 Jan 15:04:05") + " (" + ago(age) + ")"
			rw.Class = "ok"
			if age > 15*time.Minute {
				rw.Class = "bad"
			}
		}
		var es []string
		keys := make([]string, 0, len(src.Errors))
		for k := range src.Errors {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			es = append(es, fmt.Sprintf("%s %d", k, src.Errors[k]))
		}
		rw.Errors = strings.Join(es, ", ")
		if rw.Errors == "" {
			rw.Errors = "0"
		}
		rows = append(rows, rw)
	}
	s.render(w, "sources", struct {
		page
		Sources []row
	}{s.page("Collectors"), rows})
}

// wall is the wall clock the collectors' last successes are stamped with
// (Config.Wall, else time.Now); Backend.Now may be a data clock.
func (s *Server) wall() time.Time {
	if s.cfg.Wall != nil {
		return s.cfg.Wall()
	}
	return time.Now()
}

// ago writes an age as a person reads it: "45 s ago", "12 min ago",
// "3 h 5 min ago", "2 d 4 h ago"; a stamp ahead of the clock reads "just now".
func ago(d time.Duration) string {
	switch {
	case d < time.Second:
		return "just now"
	case d < time.Minute:
		return fmt.Sprintf("%d s ago", int(d/time.Second))
	case d < time.Hour:
		return fmt.Sprintf("%d min ago", int(d/time.Minute))
	case d < 24*time.Hour:
		return fmt.Sprintf("%d h %d min ago", int(d/time.Hour), int(d%time.Hour/time.Minute))
	}
	return fmt.Sprintf("%d d %d h ago", int(d/(24*time.Hour)), int(d%(24*time.Hour)/time.Hour))
}
