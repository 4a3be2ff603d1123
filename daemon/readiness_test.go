package daemon

import (
	"context"
	"strings"
	"testing"
	"time"

	"risewatch/publish/report"
)

// TestReadinessSection: with daemon.report.readiness set, the weekly
// report's input carries the readiness section of every demo terminal
// (each has a design load in the demo scenario); without it, none.
func TestReadinessSection(t *testing.T) {
	s, sc := demoSite(t, t.TempDir())
	cfg := &Config{}
	var in report.Input
	if err := AddReadiness(context.Background(), &in, s, cfg); err != nil || len(in.Sections) != 0 {
		t.Fatalf("without readiness: %d sections, %v", len(in.Sections), err)
	}
	cfg.Report.Readiness = &ReadinessConfig{Supply: "120 F"}
	in = report.Input{Site: s, IP: true, WeekStart: sc.StartTime(), WeekEnd: sc.StartTime().Add(7 * 24 * time.Hour)}
	if err := AddReadiness(context.Background(), &in, s, cfg); err != nil {
		t.Fatal(err)
	}
	if len(in.Sections) != 1 {
		t.Fatalf("%d sections, want 1", len(in.Sections))
	}
	sec := in.Sections[0]
	if !strings.Contains(sec.Title, "120") || !strings.Contains(sec.Title, "°F") {
		t.Errorf("title %q: want the candidate 120 °F", sec.Title)
	}
	rows := map[string]bool{}
	for _, r := range sec.Rows {
		rows[r[0]] = true
	}
	// The section lists at most 40 terminals, worst first (assess.Section).
	if want := min(40, len(s.Terminals)); len(rows) != want {
		t.Errorf("%d terminal rows, want %d", len(rows), want)
	}
	var pdf strings.Builder
	if err := report.WritePDF(&pdf, in); err != nil {
		t.Fatalf("report with the section: %v", err)
	}
}
