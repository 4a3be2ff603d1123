package daemon

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"path/filepath"
	"time"

	"github.com/robfig/cron/v3"

	"risewatch/publish/notify"
	"risewatch/publish/report"
	"risewatch/rules"
	"risewatch/site"
	"risewatch/store"
)

// ReportFiles are the paths one weekly report was written to.
type ReportFiles struct {
	PDF, CSV   string
	Week       string // ISO week, e.g. "2026-W03"
	Open       int
	Start, End time.Time
}

// openAt returns the faults raised at t: per fault, the newest transition
// before t, when it left the fault open, acknowledged or suppressed.
func openAt(ctx context.Context, st *store.Store, t time.Time, s *site.Site) ([]rules.Transition, error) {
	hist, err := st.History(ctx, store.HistoryQuery{To: t, Newest: true})
	if err != nil {
		return nil, err
	}
	seen := map[string]bool{}
	var out []rules.Transition
	for _, tr := range hist {
		if seen[tr.FaultID] {
			continue
		}
		seen[tr.FaultID] = true
		if !inSite(s, tr) {
			continue
		}
		switch tr.To {
		case rules.StateOpen, rules.StateAcked, rules.StateSuppressed:
			out = append(out, tr)
		}
	}
	return out, nil
}

func inSite(s *site.Site, tr rules.Transition) bool {
	switch tr.EntityKind {
	case rules.EntityTerminal:
		_, ok := s.TerminalIndex[tr.Entity]
		return ok
	case rules.EntityLoop:
		_, ok := s.LoopIndex[tr.Entity]
		return ok
	case rules.EntityAHU:
		_, ok := s.AHUIndex[tr.Entity]
		return ok
	}
	return false
}

// ReportInput gathers one week's report from the store: the faults open at
// the week's end, those opened and cleared during it, and every terminal's
// hourly series of the week (ring: the running daemon's; nil reads the
// series persisted in the store).
func ReportInput(ctx context.Context, st *store.Store, s *site.Site, ring *seriesRing, start, end time.Time, ip bool) (report.Input, error) {
	in := report.Input{Site: s, WeekStart: start, WeekEnd: end, IP: ip, Generated: time.Now(), Series: map[string][]report.Point{}}
	var err error
	if in.Open, err = openAt(ctx, st, end, s); err != nil {
		return in, err
	}
	opened, cleared := rules.StateOpen, rules.StateClear
	week, err := st.History(ctx, store.HistoryQuery{From: start, To: end, ToState: &opened})
	if err != nil {
		return in, err
	}
	for _, tr := range week {
		if (tr.From == rules.StateClear || tr.From == rules.StatePending) && inSite(s, tr) {
			in.Opened = append(in.Opened, tr)
		}
	}
	if week, err = st.History(ctx, store.HistoryQuery{From: start, To: end, ToState: &cleared}); err != nil {
		return in, err
	}
	for _, tr := range week {
		if tr.From != rules.StatePending && inSite(s, tr) {
			in.Cleared = append(in.Cleared, tr)
		}
	}
	if ring == nil {
		ring = newSeriesRing(len(s.Terminals))
		ring.load = storedSeries(st, func(ti int) string { return s.Terminals[ti].ID })
		if err := loadSeries(ctx, st, ring, s.TerminalIndex); err != nil {
			return in, err
		}
	}
	want := map[string]bool{}
	for _, lst := range [][]rules.Transition{in.Open, in.Opened, in.Cleared} {
		for _, tr := range lst {
			want[tr.Entity] = true
		}
	}
	for id := range want {
		ti, ok := s.TerminalIndex[id]
		if !ok {
			continue
		}
		pts, err := ring.points(ctx, ti, start, end)
		if err != nil {
			return in, err
		}
		for _, p := range pts {
			in.Series[id] = append(in.Series[id], report.Point{At: p.At, ObservedRiseK: p.ObservedRiseK, ExpectedRiseK: p.ExpectedRiseK, ValveFrac: p.ValveFrac})
		}
	}
	return in, nil
}

// WriteReport writes the PDF and CSV of in into dir, atomically, named by ISO week.
func WriteReport(dir string, in report.Input) (ReportFiles, error) {
	y, w := in.WeekStart.ISOWeek()
	rf := ReportFiles{Week: fmt.Sprintf("%04d-W%02d", y, w), Open: len(in.Open), Start: in.WeekStart, End: in.WeekEnd}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return rf, fmt.Errorf("report: %w", err)
	}
	base := filepath.Join(dir, "risewatch-"+rf.Week)
	for _, f := range []struct {
		path  *string
		ext   string
		write func(*bytes.Buffer) error
	}{
		{&rf.PDF, ".pdf", func(b *bytes.Buffer) error { return report.WritePDF(b, in) }},
		{&rf.CSV, ".csv", func(b *bytes.Buffer) error { return report.WriteCSV(b, in) }},
	} {
		var b bytes.Buffer
		if err := f.write(&b); err != nil {
			return rf, fmt.Errorf("report %s: %w", f.ext, err)
		}
		*f.path = base + f.ext
		if err := writeAtomic(*f.path, b.Bytes()); err != nil {
			return rf, err
		}
	}
	return rf, nil
}

func writeAtomic(path string, data []byte) error {
	tmp, err := os.CreateTemp(filepath.Dir(path), ".report-*.tmp")
	if err != nil {
		return err
	}
	_, err = tmp.Write(data)
	if err == nil {
		err = tmp.Sync()
	}
	if cerr := tmp.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(tmp.Name(), 0o644)
	}
	if err == nil {
		err = os.Rename(tmp.Name(), path)
	}
	if err != nil {
		os.Remove(tmp.Name())
	}
	return err
}

// MailReport queues the report files to the contractor list through the
// outbox (de-duplicated per site and week).
func MailReport(ctx context.Context, n *notify.Notifier, siteName string, to []string, rf ReportFiles) error {
	pdf, err := os.ReadFile(rf.PDF)
	if err != nil {
		return err
	}
	csv, err := os.ReadFile(rf.CSV)
	if err != nil {
		return err
	}
	subj := fmt.Sprintf("[risewatch] %s: weekly coil report %s, %d open fault(s)", siteName, rf.Week, rf.Open)
	text := fmt.Sprintf("The weekly reheat-coil report for %s, week %s (%s to %s), is attached:\n"+
		"the PDF ranks the open faults by weekly cost with evidence, likely causes and checks;\n"+
		"the CSV is the same work list for a spreadsheet.\n", siteName, rf.Week,
		rf.Start.Format("Mon 2 Jan 2006"), rf.End.Add(-time.Second).Format("Mon 2 Jan 2006"))
	return n.QueueAttachments(ctx, "report\x00"+siteName+"\x00"+rf.Week, to, subj, text, []notify.Attachment{
		{Name: filepath.Base(rf.PDF), ContentType: "application/pdf", Data: pdf},
		{Name: filepath.Base(rf.CSV), ContentType: "text/csv; charset=utf-8", Data: csv},
	})
}

// reportWeek is the week a report written at at covers: the full week
// before at, or with current (the demo's first report, written once the
// history is analysed) the week holding more of the days before at: the
// week in progress from its fourth day on, else the week before, so a
// history ending early in a week is not reported as an almost empty week.
func reportWeek(at time.Time, loc *time.Location, current bool) (start, end time.Time) {
	if current {
		start, end = report.WeekOf(at, loc)
		if at.Sub(start) >= end.Sub(start)/2 {
			return start, end
		}
	}
	return report.PreviousWeek(at, loc)
}

// ReportUnits gives the weekly report's unit order and paper: the report's
// own settings (not the dashboard's), for the scheduled report and
// `risewatch report` alike, so a week comes out the same either way.
func (c *Config) ReportUnits() (ip bool, paper string) { return c.Report.IP, c.Report.Paper }

// runReport writes (and mails) the report of the week reportWeek gives.
func (pl *pipeline) runReport(ctx context.Context, at time.Time, mail, current bool) {
	cfg, s := pl.p.cfg, pl.p.site
	start, end := reportWeek(at, cfg.Location(), current)
	ip, paper := cfg.ReportUnits()
	in, err := ReportInput(ctx, pl.st, s, pl.ring, start, end, ip)
	if err != nil {
		pl.d.log.Error("weekly report: gather", "err", err)
		return
	}
	in.Paper = paper
	if err := AddReadiness(ctx, &in, s, cfg); err != nil {
		pl.d.log.Error("weekly report: readiness section left out", "err", err)
	}
	rf, err := WriteReport(filepath.Join(cfg.DataDir, "reports"), in)
	if err != nil {
		pl.d.log.Error("weekly report: write", "err", err)
		return
	}
	pl.d.log.Info("weekly report written", "week", rf.Week, "pdf", rf.PDF, "open_faults", rf.Open)
	if mail && pl.ntf != nil && len(cfg.Report.To) > 0 {
		if err := MailReport(ctx, pl.ntf, s.Name, cfg.Report.To, rf); err != nil {
			pl.d.log.Error("weekly report: mail", "err", err)
		}
	}
}

// startReports schedules the weekly report with robfig/cron/v3 in site time.
func (pl *pipeline) startReports(ctx context.Context) func() {
	cfg := pl.p.cfg
	if cfg.Report.Disabled {
		return func() {}
	}
	sched, err := report.ParseSchedule(cfg.Report.Schedule, cfg.Location())
	if err != nil {
		pl.d.log.Error("weekly report: schedule", "err", err)
		return func() {}
	}
	c := cron.New(cron.WithLocation(cfg.Location()))
	c.Schedule(sched, cron.FuncJob(func() { pl.runReport(ctx, pl.Now(), true, false) }))
	c.Start()
	return func() { <-c.Stop().Done() }
}

// SendReport queues the report to the contractor list and delivers what is
// due on the mail channel now (for `risewatch report --send`).
func SendReport(ctx context.Context, st *store.Store, s *site.Site, cfg *Config, rf ReportFiles, log *slog.Logger) (int, error) {
	if cfg.Notify == nil || len(cfg.Report.To) == 0 {
		return 0, errors.New("report: --send needs daemon.notify and daemon.report.to in the site file")
	}
	var snd notify.Sender = &notify.SMTPSender{Cfg: cfg.Notify.SMTP}
	if cfg.MailSpool != "" {
		snd = SpoolSender{Dir: cfg.MailSpool}
	}
	nc := *cfg.Notify
	nc.Currency = s.Energy.Currency
	n := notify.New(nc, s.Name, txQueue{st}, snd, nil, log)
	if err := MailReport(ctx, n, s.Name, cfg.Report.To, rf); err != nil {
		return 0, err
	}
	return n.Deliver(ctx)
}
