package eval

import (
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"
)

// WriteTable prints the evaluation table (Markdown, for the README).
func (r *Report) WriteTable(w io.Writer) error {
	fmt.Fprintf(w, "Evaluation: %s, %d days, built-in rules (%d terminal-samples in %.0f s)\n\n", r.Site, r.Days, r.Samples, r.Elapsed.Seconds())
	tw := tabwriter.NewWriter(w, 2, 4, 1, ' ', 0)
	fmt.Fprintln(tw, "| fault\t| injected\t| detected\t| isolated\t| median TTD (h)\t| median TTD, heating operation (h)\t|")
	fmt.Fprintln(tw, "|---\t|---\t|---\t|---\t|---\t|---\t|")
	for _, row := range r.Faulted.Rows {
		fmt.Fprintf(tw, "| %s\t| %d\t| %d (%s)\t| %d (%s)\t| %s\t| %s\t|\n", row.Kind, row.Faults, row.Detected, pct(row.Detected, row.Faults),
			row.Isolated, pct(row.Isolated, row.Faults), hours(row.MedianTTDh), hours(row.MedianTTDOpH))
	}
	f := r.Faulted
	fmt.Fprintf(tw, "| **all**\t| %d\t| %d (%s)\t| %d (%s)\t|\t|\t|\n", f.TotalFaults, f.TotalDetected, pct(f.TotalDetected, f.TotalFaults),
		f.TotalIsolated, pct(f.TotalIsolated, f.TotalFaults))
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintf(w, "\nFalse alarms: %d on unfaulted terminals of the faulted campus (%.1f terminal-weeks, %.2f per 1,000 terminal-weeks); %d on the fault-free twin (%.1f terminal-weeks, %.2f per 1,000 terminal-weeks).\n",
		f.FalseAlarms, f.TerminalWeeks, f.FalsePer1000TW, r.Twin.FalseAlarms, r.Twin.TerminalWeeks, r.Twin.FalsePer1000TW)
	var miss []string
	for _, row := range f.Rows {
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
	if fa := append(append([]string(nil), f.FalseAlarmList...), r.Twin.FalseAlarmList...); len(fa) > 0 {
		if len(fa) > 12 {
			fa = append(fa[:12], fmt.Sprintf("... %d more", len(fa)-12))
		}
		fmt.Fprintf(w, "False alarms: %s.\n", strings.Join(fa, "; "))
	}
	return nil
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
