package eval

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"
)

// WriteTable prints the evaluation table (Markdown, for the README).
func (r *Report) WriteTable(w io.Writer) error {
	fmt.Fprintf(w, "Evaluation: %s, %d days, built-in rules (%d terminal-samples in %.0f s)\n\n", r.Site, r.Days, r.Samples, r.Elapsed.Seconds())
	if err := r.Faulted.writeRows(w); err != nil {
		return err
	}
	f := r.Faulted
	fmt.Fprintf(w, "\nFalse alarms: %d on unfaulted terminals of the faulted campus (%.1f terminal-weeks, %.2f per 1,000 terminal-weeks); %d on the fault-free twin (%.1f terminal-weeks, %.2f per 1,000 terminal-weeks).\n",
		f.FalseAlarms, f.TerminalWeeks, f.FalsePer1000TW, r.Twin.FalseAlarms, r.Twin.TerminalWeeks, r.Twin.FalsePer1000TW)
	f.writeMisses(w)
	writeFalseList(w, append(append([]string(nil), f.FalseAlarmList...), r.Twin.FalseAlarmList...))
	return nil
}

// WriteTable prints one scored run: the per-fault table, the false-alarm
// rate on terminal time without a true fault, and what was missed.
func (r *Result) WriteTable(w io.Writer) error {
	if err := r.writeRows(w); err != nil {
		return err
	}
	fmt.Fprintf(w, "\nFalse alarms: %d (%.1f terminal-weeks without a true fault, %.2f per 1,000 terminal-weeks).\n",
		r.FalseAlarms, r.TerminalWeeks, r.FalsePer1000TW)
	r.writeMisses(w)
	writeFalseList(w, r.FalseAlarmList)
	return nil
}

func (r *Result) writeRows(w io.Writer) error {
	tw := tabwriter.NewWriter(w, 2, 4, 1, ' ', 0)
	fmt.Fprintln(tw, "| fault\t| injected\t| detected\t| isolated\t| median TTD (h)\t| median TTD, heating operation (h)\t|")
	fmt.Fprintln(tw, "|---\t|---\t|---\t|---\t|---\t|---\t|")
	for _, row := range r.Rows {
		fmt.Fprintf(tw, "| %s\t| %d\t| %d (%s)\t| %d (%s)\t| %s\t| %s\t|\n", row.Kind, row.Faults, row.Detected, pct(row.Detected, row.Faults),
			row.Isolated, pct(row.Isolated, row.Faults), hours(row.MedianTTDh), hours(row.MedianTTDOpH))
	}
	fmt.Fprintf(tw, "| **all**\t| %d\t| %d (%s)\t| %d (%s)\t|\t|\t|\n", r.TotalFaults, r.TotalDetected, pct(r.TotalDetected, r.TotalFaults),
		r.TotalIsolated, pct(r.TotalIsolated, r.TotalFaults))
	return tw.Flush()
}

func (r *Result) writeMisses(w io.Writer) {
	var miss []string
	for _, row := range r.Rows {
		for _, u := range row.Undetected {
			miss = append(miss, u+" ("+row.Kind.String()+") undetected")
		}
		for _, m := range row.Misclassified {
			miss = append(miss, m+" (true "+row.Kind.String()+")")
		}
	}
	if len(miss) > 0 {
		fmt.Fprintf(w, "Missed or misclassified: %s.\n", strings.Join(miss, "; "))
	}
}

func writeFalseList(w io.Writer, fa []string) {
	if len(fa) == 0 {
		return
	}
	if len(fa) > 12 {
		fa = append(fa[:12], fmt.Sprintf("... %d more", len(fa)-12))
	}
	fmt.Fprintf(w, "False alarms: %s.\n", strings.Join(fa, "; "))
}

// rowJSON and resultJSON are the JSON forms; a median with no detection is
// null.
type rowJSON struct {
	Kind          string   `json:"kind"`
	Injected      int      `json:"injected"`
	Detected      int      `json:"detected"`
	Isolated      int      `json:"isolated"`
	MedianTTDh    *float64 `json:"median_ttd_h"`
	MedianTTDOpH  *float64 `json:"median_ttd_operation_h"`
	Undetected    []string `json:"undetected,omitempty"`
	Misclassified []string `json:"misclassified,omitempty"`
}

type resultJSON struct {
	Rows           []rowJSON `json:"faults"`
	Injected       int       `json:"injected"`
	Detected       int       `json:"detected"`
	Isolated       int       `json:"isolated"`
	FalseAlarms    int       `json:"false_alarms"`
	TerminalWeeks  float64   `json:"fault_free_terminal_weeks"`
	FalsePer1000TW float64   `json:"false_alarms_per_1000_terminal_weeks"`
	FalseAlarmList []string  `json:"false_alarm_list,omitempty"`
}

// MarshalJSON writes the result with stable snake_case names.
func (r Result) MarshalJSON() ([]byte, error) {
	out := resultJSON{Injected: r.TotalFaults, Detected: r.TotalDetected, Isolated: r.TotalIsolated,
		FalseAlarms: r.FalseAlarms, TerminalWeeks: r.TerminalWeeks, FalsePer1000TW: r.FalsePer1000TW, FalseAlarmList: r.FalseAlarmList,
		Rows: make([]rowJSON, 0, len(r.Rows))}
	for _, row := range r.Rows {
		out.Rows = append(out.Rows, rowJSON{Kind: row.Kind.String(), Injected: row.Faults, Detected: row.Detected, Isolated: row.Isolated,
			MedianTTDh: finitePtr(row.MedianTTDh), MedianTTDOpH: finitePtr(row.MedianTTDOpH),
			Undetected: row.Undetected, Misclassified: row.Misclassified})
	}
	return json.Marshal(out)
}

func finitePtr(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

func pct(a, b int) string {
	if b == 0 {
		return "-"
	}
	return fmt.Sprintf("%.0f %%", 100*float64(a)/float64(b))
}

func hours(h float64) string {
	if math.IsNaN(h) {
		return "-"
	}
	return fmt.Sprintf("%.1f", h)
}
