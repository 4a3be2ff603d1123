package notify

import (
	"bytes"
	"fmt"
	"html/template"
	"math"
	"mime"
	"mime/multipart"
	"mime/quotedprintable"
	"net/textproto"
	"net/url"
	"strings"
	ttemplate "text/template"
	"time"

	"risewatch/rules"
	"risewatch/units"
)

// EventType says why a fault is in a message.
type EventType string

// Event types.
const (
	EventOpened    EventType = "opened"
	EventReopened  EventType = "re-opened" // opened again after it was mailed about and cleared
	EventCleared   EventType = "cleared"
	EventReminder  EventType = "still open"
	EventDigest    EventType = "open"
	EventUnsnoozed EventType = "open after snooze" // the snooze ended and the fault is still there
	EventEscalated EventType = "more urgent"       // a rule of higher severity now holds it
)

// Event is one fault in one message.
type Event struct {
	Type EventType
	T    rules.Transition
	// history holds every event of the fault gathered into the same
	// message, oldest first, when there is more than one (foldEvents); T
	// is the latest.
	history []Event
}

// Advisory is printed in every message, ahead of the faults and their
// checks, so the hot-water warning is read before the work it warns about.
const Advisory = "risewatch is advisory only and never writes to the building automation system. " +
	"Confirm every finding on site and follow local codes, the equipment makers' instructions and licensed practice. " +
	"Hot-water systems can scald and are under pressure: isolate the circuit, let it cool and relieve pressure " +
	"before opening, venting or replacing valves, coils, strainers or air vents, and follow your lock-out/tag-out procedure."

type view struct {
	Site, Subject, Generated string
	Items                    []itemView
	Advisory                 string
	TotalCost                string
}

type itemView struct {
	Type, Title, Since, Message, Seen, Matters, Confidence string
	History                                                string // the fault's events in this message, when more than one
	Where                                                  string // location, air handler and loop
	Cleared, Explained                                     string // when a cleared fault cleared; what explains it
	MattersLabel                                           string
	Causes, Checks                                         []string
	AckURL, SnoozeURL, AckCmd                              string
}

func (c *Config) fmtTemp(k float64) string {
	return both(units.FormatTempDiff(k, c.IP), units.FormatTempDiff(k, !c.IP))
}

func both(a, b string) string { return a + " (" + b + ")" }

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// stamp formats a time in the site's zone, with the year when it is not
// the year of the message (at): a fault open since last year, or history
// mailed later, is not read as this year's.
func (c *Config) stamp(t, at time.Time) string {
	lt := t.In(c.Location)
	if lt.Year() != at.In(c.Location).Year() {
		return lt.Format("Mon 2 Jan 2006 15:04 MST")
	}
	return lt.Format("Mon 2 Jan 15:04 MST")
}

// pairIf gives "a (b)" for a quantity in both units, or "" when either
// reads zero at its precision ("0.0 MBH (0.00 kW)" tells nobody anything).
func pairIf(v float64, ip bool, f func(float64, bool) string) string {
	a, b := f(v, ip), f(v, !ip)
	if a == f(0, ip) || b == f(0, !ip) {
		return ""
	}
	return both(a, b)
}

// itemFor renders one fault of a message composed at at.
func (c *Config) itemFor(e Event, at time.Time) itemView {
	t := e.T
	ev := t.Evidence
	var seen []string
	if finite(ev.ObservedRiseK) && finite(ev.ExpectedRiseK) && ev.ExpectedRiseK != 0 {
		seen = append(seen, fmt.Sprintf("air temperature rise %s against %s expected", c.fmtTemp(ev.ObservedRiseK), c.fmtTemp(ev.ExpectedRiseK)))
	} else if finite(ev.ObservedRiseK) {
		seen = append(seen, "air temperature rise "+c.fmtTemp(ev.ObservedRiseK))
	}
	if finite(ev.ValveFrac) {
		seen = append(seen, "valve command "+units.FormatPercent(ev.ValveFrac))
	}
	if finite(ev.AirflowM3s) && ev.AirflowM3s > 0 {
		seen = append(seen, "airflow "+both(units.FormatAirflow(ev.AirflowM3s, c.IP), units.FormatAirflow(ev.AirflowM3s, !c.IP)))
	}
	if finite(ev.LeakFlowFrac) && ev.LeakFlowFrac > 0 {
		seen = append(seen, fmt.Sprintf("estimated leak flow %s of design", units.FormatPercent(ev.LeakFlowFrac)))
	}
	if finite(ev.UAFactor) && ev.UAFactor > 0 && ev.UAFactor != 1 {
		seen = append(seen, fmt.Sprintf("apparent coil UA %.0f %% of its baseline", ev.UAFactor*100))
	}
	if finite(ev.FlowFactor) && ev.FlowFactor > 0 && ev.FlowFactor != 1 {
		seen = append(seen, fmt.Sprintf("apparent water flow %.0f %% of expected", ev.FlowFactor*100))
	}
	im := t.Impact
	var matters []string
	add := func(pre string, v float64, f func(float64, bool) string, post string) {
		if finite(v) && v > 0 {
			if p := pairIf(v, c.IP, f); p != "" {
				matters = append(matters, pre+p+post)
			}
		}
	}
	add("unwanted heat ", im.WastedHeatW, units.FormatPower, "")
	add("extra cooling ", im.AddedCoolingW, units.FormatPower, "")
	add("heat the zone asked for and did not get ", im.ShortfallW, units.FormatPower, " (comfort)")
	add("about ", im.WeeklyHeatKWh, units.FormatHeatEnergy, " of heat a week")
	add("about ", im.WeeklyCoolKWh, units.FormatCoolingEnergy, " of cooling a week")
	if im.WeeklyCost >= 0.005 { // "USD 0.00" is no cost to report
		matters = append(matters, fmt.Sprintf("about %s a week", c.money(im.WeeklyCost)))
	}
	var where []string
	if t.Location != "" {
		where = append(where, t.Location)
	}
	if t.AHU != "" {
		where = append(where, "air handler "+t.AHU)
	}
	if t.Loop != "" && t.Loop != t.Entity {
		where = append(where, "hot-water loop "+t.Loop)
	}
	it := itemView{
		Type:         string(e.Type),
		Title:        fmt.Sprintf("%s: %s", t.Entity, t.Kind),
		Since:        c.stamp(t.Since, at),
		Message:      t.MessageIn(c.IP),
		Seen:         strings.Join(seen, "; "),
		Matters:      strings.Join(matters, "; "),
		MattersLabel: "Why it matters",
		Confidence:   fmt.Sprintf("%.0f %%", t.Confidence*100),
		Causes:       t.Causes,
		Checks:       t.Checks,
		AckCmd:       c.ackCommand(t.FaultID),
		Where:        strings.Join(where, ", "),
	}
	if t.Since.IsZero() {
		it.Since = c.stamp(t.At, at)
	}
	if e.Type == EventCleared {
		// The message and figures are the fault's last record while open.
		it.Cleared = c.stamp(t.At, at)
		it.MattersLabel = "While it was open"
		if t.ExplainedBy != "" {
			it.Explained = "Closed because " + t.ExplainedBy + " explains it (see that fault): not a repair."
		}
	}
	var hist []string
	for _, p := range e.history {
		hist = append(hist, string(p.Type)+" "+c.stamp(p.T.At, at))
	}
	it.History = strings.Join(hist, "; ")
	if c.LinkBase != "" && e.Type != EventCleared {
		base := strings.TrimRight(c.LinkBase, "/") + "/faults/" + url.PathEscape(t.FaultID)
		it.AckURL = base + "/ack"
		it.SnoozeURL = base + "/snooze"
	}
	return it
}

// ackCommand is the command that acknowledges a fault on the server, with
// every flag "risewatch ack" requires (--config, --fault, --by), so it runs
// once the name is filled in.
func (c *Config) ackCommand(faultID string) string {
	file := "SITE-FILE"
	if c.SiteFile != "" {
		file = shellQuote(c.SiteFile)
	}
	return "risewatch ack --fault " + shellQuote(faultID) + " --config " + file + ` --by "YOUR NAME"`
}

// shellQuote quotes s for a POSIX shell when it holds anything but the
// characters of plain paths and fault IDs.
func shellQuote(s string) string {
	plain := s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789-_./:+@%,=") == ""
	if plain {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

func (c *Config) money(v float64) string {
	cur := c.Currency
	if cur == "" {
		cur = "USD"
	}
	return fmt.Sprintf("%s %.2f", cur, v)
}

const textTmpl = `{{.Subject}}

{{.Advisory}}
{{range .Items}}
== {{.Title}} ({{.Type}}) ==
{{if .Where}}Where: {{.Where}}
{{end}}{{if .Explained}}{{.Explained}}
{{end}}{{if .Message}}{{.Message}}
{{end}}Since: {{.Since}}{{if .Cleared}}   Cleared: {{.Cleared}}{{end}}   Confidence: {{.Confidence}}
{{if .History}}Changes: {{.History}}
{{end}}{{if .Seen}}What was seen: {{.Seen}}
{{end}}{{if .Matters}}{{.MattersLabel}}: {{.Matters}}
{{end}}{{if .Checks}}What to check first:
{{range .Checks}}  - {{.}}
{{end}}{{end}}{{if .Causes}}Likely causes: {{join .Causes "; "}}
{{end}}{{if .AckURL}}Acknowledge: {{.AckURL}}
Snooze: {{.SnoozeURL}}
{{end}}{{if ne .Type "cleared"}}Or on the server: {{.AckCmd}}
{{end}}{{end}}{{if .TotalCost}}
Estimated cost of the open faults above: {{.TotalCost}} a week.
{{end}}
Generated {{.Generated}} by risewatch for {{.Site}}.
`

const htmlTmpl = `<!DOCTYPE html><html><body style="font-family:sans-serif;max-width:46em">
<h2>{{.Subject}}</h2>
<p style="background:#fff4d6;padding:.6em">{{.Advisory}}</p>
{{range .Items}}<div style="border-left:4px solid {{if eq .Type "cleared"}}#2a7{{else}}#c52{{end}};padding-left:.8em;margin:1em 0">
<h3 style="margin:.2em 0">{{.Title}} <small>({{.Type}})</small></h3>
{{if .Where}}<p><b>Where:</b> {{.Where}}</p>{{end}}
{{if .Explained}}<p><b>{{.Explained}}</b></p>{{end}}
{{if .Message}}<p>{{.Message}}</p>{{end}}
<p><b>Since</b> {{.Since}}{{if .Cleared}} &middot; <b>Cleared</b> {{.Cleared}}{{end}} &middot; <b>Confidence</b> {{.Confidence}}</p>
{{if .History}}<p><b>Changes:</b> {{.History}}</p>{{end}}
{{if .Seen}}<p><b>What was seen:</b> {{.Seen}}</p>{{end}}
{{if .Matters}}<p><b>{{.MattersLabel}}:</b> {{.Matters}}</p>{{end}}
{{if .Checks}}<p><b>What to check first:</b></p><ol>{{range .Checks}}<li>{{.}}</li>{{end}}</ol>{{end}}
{{if .Causes}}<p><b>Likely causes:</b> {{join .Causes "; "}}</p>{{end}}
{{if .AckURL}}<p><a href="{{.AckURL}}">Acknowledge</a> &middot; <a href="{{.SnoozeURL}}">Snooze</a></p>{{end}}
{{if ne .Type "cleared"}}<p><small>Or on the server: <code>{{.AckCmd}}</code></small></p>{{end}}
</div>{{end}}
{{if .TotalCost}}<p>Estimated cost of the open faults above: <b>{{.TotalCost}}</b> a week.</p>{{end}}
<p><small>Generated {{.Generated}} by risewatch for {{.Site}}.</small></p>
</body></html>`

type renderer struct {
	text *ttemplate.Template
	html *template.Template
}

func newRenderer() *renderer {
	fm := map[string]any{"join": strings.Join}
	return &renderer{
		text: ttemplate.Must(ttemplate.New("t").Funcs(fm).Parse(textTmpl)),
		html: template.Must(template.New("h").Funcs(fm).Parse(htmlTmpl)),
	}
}

// compose builds the full MIME message (multipart/alternative, text and HTML).
func (c *Config) compose(r *renderer, site, key string, to []string, at time.Time, subj string, evs []Event) ([]byte, error) {
	v := view{Site: site, Subject: subj, Generated: at.In(c.Location).Format("Mon 2 Jan 2006 15:04 MST"), Advisory: Advisory}
	total := 0.0
	for _, e := range evs {
		v.Items = append(v.Items, c.itemFor(e, at))
		if e.Type != EventCleared {
			total += e.T.Impact.WeeklyCost
		}
	}
	if total > 0 && len(evs) > 1 {
		v.TotalCost = c.money(total)
	}
	var text, html bytes.Buffer
	if err := r.text.Execute(&text, v); err != nil {
		return nil, fmt.Errorf("render text: %w", err)
	}
	if err := r.html.Execute(&html, v); err != nil {
		return nil, fmt.Errorf("render html: %w", err)
	}
	var body bytes.Buffer
	mw := multipart.NewWriter(&body)
	for _, part := range []struct {
		ctype string
		data  []byte
	}{{"text/plain; charset=utf-8", text.Bytes()}, {"text/html; charset=utf-8", html.Bytes()}} {
		if err := writeQPPart(mw, part.ctype, part.data); err != nil {
			return nil, err
		}
	}
	if err := mw.Close(); err != nil {
		return nil, err
	}
	return c.envelope(key, to, at, subj, "multipart/alternative; boundary="+mw.Boundary(), body.Bytes()), nil
}

// writeQPPart adds a quoted-printable part (RFC 2045 §6.7) to mw.
func writeQPPart(mw *multipart.Writer, ctype string, data []byte) error {
	h := textproto.MIMEHeader{}
	h.Set("Content-Type", ctype)
	h.Set("Content-Transfer-Encoding", "quoted-printable")
	pw, err := mw.CreatePart(h)
	if err != nil {
		return err
	}
	qw := quotedprintable.NewWriter(pw)
	if _, err := qw.Write(data); err != nil {
		return err
	}
	return qw.Close()
}

// envelope puts the RFC 5322 headers in front of a MIME body. The
// Message-ID is derived from the outbox key, so a re-sent message is
// recognisably the same message.
func (c *Config) envelope(key string, to []string, at time.Time, subj, contentType string, body []byte) []byte {
	var msg bytes.Buffer
	hdr := func(k, v string) { fmt.Fprintf(&msg, "%s: %s\r\n", k, v) }
	hdr("From", c.From)
	hdr("To", strings.Join(to, ", "))
	hdr("Subject", mime.QEncoding.Encode("utf-8", subj))
	hdr("Date", at.Format(time.RFC1123Z))
	hdr("Message-ID", "<"+key+"@risewatch>")
	hdr("MIME-Version", "1.0")
	hdr("Auto-Submitted", "auto-generated")
	hdr("X-Risewatch-Key", key)
	hdr("Content-Type", contentType)
	msg.WriteString("\r\n")
	msg.Write(body)
	return msg.Bytes()
}
