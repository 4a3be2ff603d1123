package rules

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"risewatch/units"
)

// FaultRow is one fault in a ranked report: its latest state over an
// analysis run. It encodes as JSON (no NaN: evidence is a map of the
// available values).
type FaultRow struct {
	Rank         int                `json:"rank"`
	FaultID      string             `json:"fault_id"`
	Entity       string             `json:"entity"`
	EntityKind   string             `json:"entity_kind"`
	Kind         string             `json:"kind"`
	Rule         string             `json:"rule"`
	Title        string             `json:"title"`
	State        string             `json:"state"`
	Severity     int                `json:"severity"`
	Confidence   float64            `json:"confidence"`
	Since        time.Time          `json:"since"`
	OpenedAt     time.Time          `json:"opened_at"`
	ClearedAt    *time.Time         `json:"cleared_at,omitempty"`
	ExplainedBy  string             `json:"explained_by,omitempty"`
	Summary      string             `json:"summary"`    // SI units first
	SummaryIP    string             `json:"summary_ip"` // IP units first
	Message      string             `json:"message"`    // SI units first
	MessageIP    string             `json:"message_ip"` // IP units first
	Evidence     map[string]float64 `json:"evidence"`
	WeeklyHeat   float64            `json:"weekly_heat_kwh"`
	WeeklyCool   float64            `json:"weekly_cooling_kwh"`
	WeeklyShort  float64            `json:"weekly_shortfall_kwh"`
	WeeklyCost   float64            `json:"weekly_cost"`
	Currency     string             `json:"currency"`
	Causes       []string           `json:"causes"`
	Checks       []string           `json:"checks"`
	AHU          string             `json:"ahu,omitempty"`
	Loop         string             `json:"loop,omitempty"`
	Location     string             `json:"location,omitempty"`
	Source       string             `json:"source"`
	Transitions  int                `json:"transitions"`
	TimesOpened  int                `json:"times_opened"`
	firstOpenIdx int
}

var entityKindNames = map[EntityKind]string{EntityTerminal: "terminal", EntityLoop: "loop", EntityAHU: "ahu"}

// Rank folds an analysis run's transitions and the faults still raised at its
// end into one row per fault, ranked: raised before cleared, then by
// severity (most urgent first), weekly cost (highest first) and fault ID.
// Faults that closed because another fault explains them are left out.
func Rank(trs []Transition, open []Transition) []FaultRow {
	rows := map[string]*FaultRow{}
	upd := func(tr *Transition) *FaultRow {
		r := rows[tr.FaultID]
		if r == nil {
			r = &FaultRow{FaultID: tr.FaultID, firstOpenIdx: len(rows)}
			rows[tr.FaultID] = r
		}
		r.Entity, r.EntityKind, r.Kind = tr.Entity, entityKindNames[tr.EntityKind], tr.Kind.String()
		if tr.Rule != "" {
			r.Rule, r.Title, r.Source = tr.Rule, tr.Title, tr.Source
			r.Message, r.Causes, r.Checks = tr.Message, tr.Causes, tr.Checks
			r.Evidence, r.Summary, r.SummaryIP = tr.Evidence.Map(), tr.Summary(), tr.SummaryIn(true)
			r.MessageIP = tr.MessageIn(true)
		}
		r.State, r.Severity, r.Confidence = tr.To.String(), int(tr.Severity), tr.Confidence
		r.Since, r.OpenedAt = tr.Since, tr.OpenedAt
		r.AHU, r.Loop, r.Location = tr.AHU, tr.Loop, tr.Location
		im := tr.Impact
		r.WeeklyHeat, r.WeeklyCool, r.WeeklyShort, r.WeeklyCost, r.Currency = im.WeeklyHeatKWh, im.WeeklyCoolKWh, im.WeeklyShortfallKWh, im.WeeklyCost, im.Currency
		return r
	}
	for i := range trs {
		tr := &trs[i]
		if tr.To == StateClear && tr.ExplainedBy != "" {
			delete(rows, tr.FaultID)
			continue
		}
		// Keep the evidence of the raised fault on its clear row.
		if tr.To == StateClear {
			if r := rows[tr.FaultID]; r != nil {
				at := tr.At
				r.ClearedAt, r.State = &at, StateClear.String()
				r.Transitions++
				continue
			}
		}
		r := upd(tr)
		r.Transitions++
		r.ClearedAt = nil
		if tr.From == StatePending {
			r.TimesOpened++
		}
	}
	for i := range open {
		r := upd(&open[i])
		r.ClearedAt = nil
	}
	out := make([]FaultRow, 0, len(rows))
	for _, r := range rows {
		out = append(out, *r)
	}
	sort.Slice(out, func(i, j int) bool {
		a, b := &out[i], &out[j]
		if (a.ClearedAt == nil) != (b.ClearedAt == nil) {
			return a.ClearedAt == nil
		}
		if a.Severity != b.Severity {
			return a.Severity < b.Severity
		}
		if a.WeeklyCost != b.WeeklyCost {
			return a.WeeklyCost > b.WeeklyCost
		}
		return a.FaultID < b.FaultID
	})
	for i := range out {
		out[i].Rank = i + 1
	}
	return out
}

// WriteTable prints the ranked fault table for a terminal, its evidence
// with IP units first when ip is set, else SI first.
func WriteTable(w io.Writer, rows []FaultRow, loc *time.Location, ip bool) error {
	if loc == nil {
		loc = time.UTC
	}
	tw := tabwriter.NewWriter(w, 2, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "#\tENTITY\tFAULT\tSEV\tSTATE\tSINCE\tEVIDENCE\tWEEKLY COST")
	for _, r := range rows {
		state := r.State
		if r.ClearedAt != nil {
			state = "cleared " + r.ClearedAt.In(loc).Format("01-02 15:04")
		}
		sum := r.Summary
		if ip {
			sum = r.SummaryIP
		}
		fmt.Fprintf(tw, "%d\t%s\t%s\t%d\t%s\t%s\t%s\t%s\n", r.Rank, r.Entity, r.Kind, r.Severity, state,
			r.Since.In(loc).Format("2006-01-02 15:04"), sum, costText(r.WeeklyCost, r.Currency))
	}
	return tw.Flush()
}

func costText(v float64, cur string) string {
	if v == 0 || math.IsNaN(v) {
		return "-"
	}
	return moneyText(v, cur)
}

// moneyText gives an amount the way every output writes one, the currency
// code first ("USD 12.40"; "12.40" without a code).
func moneyText(v float64, cur string) string {
	return strings.TrimSpace(fmt.Sprintf("%s %.2f", cur, v))
}

// WriteJSON writes the rows as an indented JSON array.
func WriteJSON(w io.Writer, rows []FaultRow) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	if rows == nil {
		rows = []FaultRow{}
	}
	return enc.Encode(rows)
}

// WriteCSV writes the rows as CSV with SI and IP columns for the energy,
// and the summary and message with SI first and with IP first.
func WriteCSV(w io.Writer, rows []FaultRow) error {
	cw := csv.NewWriter(w)
	_ = cw.Write([]string{"rank", "fault_id", "entity", "kind", "rule", "severity", "state", "since", "opened_at", "cleared_at",
		"confidence", "summary", "weekly_heat_kwh", "weekly_heat_therm", "weekly_cooling_kwh", "weekly_cooling_ton_h", "weekly_cost", "currency",
		"ahu", "loop", "location", "message", "summary_ip", "message_ip"})
	f := func(v float64, p int) string { return strconv.FormatFloat(v, 'f', p, 64) }
	for _, r := range rows {
		cleared := ""
		if r.ClearedAt != nil {
			cleared = r.ClearedAt.Format(time.RFC3339)
		}
		// 1 ton of refrigeration = 12,000 Btu/h = 3.516853 kW (NIST SP 811, B.8).
		tonH := r.WeeklyCool / units.KWhPerTonHour
		_ = cw.Write([]string{strconv.Itoa(r.Rank), r.FaultID, r.Entity, r.Kind, r.Rule, strconv.Itoa(r.Severity), r.State,
			r.Since.Format(time.RFC3339), r.OpenedAt.Format(time.RFC3339), cleared, f(r.Confidence, 2), r.Summary,
			f(r.WeeklyHeat, 1), f(r.WeeklyHeat/units.KWhPerTherm, 2), f(r.WeeklyCool, 1), f(tonH, 2), f(r.WeeklyCost, 2), r.Currency,
			r.AHU, r.Loop, r.Location, r.Message, r.SummaryIP, r.MessageIP})
	}
	cw.Flush()
	return cw.Error()
}

// transitionJSON is a Transition as JSON (evidence as a map without NaN).
type transitionJSON struct {
	FaultID     string             `json:"fault_id"`
	Rule        string             `json:"rule"`
	Kind        string             `json:"kind"`
	From        string             `json:"from"`
	To          string             `json:"to"`
	At          time.Time          `json:"at"`
	Since       time.Time          `json:"since"`
	Severity    int                `json:"severity"`
	Confidence  float64            `json:"confidence"`
	ExplainedBy string             `json:"explained_by,omitempty"`
	Evidence    map[string]float64 `json:"evidence"`
	WeeklyCost  float64            `json:"weekly_cost"`
	Message     string             `json:"message"`
}

// WriteTransitionsJSON writes transitions as a JSON array.
func WriteTransitionsJSON(w io.Writer, trs []Transition) error {
	out := make([]transitionJSON, len(trs))
	for i := range trs {
		t := &trs[i]
		out[i] = transitionJSON{FaultID: t.FaultID, Rule: t.Rule, Kind: t.Kind.String(), From: t.From.String(), To: t.To.String(),
			At: t.At, Since: t.Since, Severity: int(t.Severity), Confidence: t.Confidence, ExplainedBy: t.ExplainedBy,
			Evidence: t.Evidence.Map(), WeeklyCost: t.Impact.WeeklyCost, Message: t.Message}
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}
