package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"path/filepath"

	"risewatch/daemon"
	"risewatch/publish/report"
	"risewatch/store"
)

// runReport implements `risewatch report`: the weekly contractor report of
// one week from the store (fault history and the persisted plot series).
func runReport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("report", flag.ContinueOnError)
	fs.SetOutput(stderr)
	cfgPath := fs.String("config", "", "site configuration file (YAML)")
	week := fs.String("week", "", `ISO week ("2026-W03") or any date in it ("2026-01-14"); default: last full week`)
	data := fs.String("data", "", "data directory (overrides daemon.data_dir)")
	out := fs.String("out", "", "directory for the PDF and CSV (default DATA/reports)")
	send := fs.Bool("send", false, "e-mail the report to daemon.report.to through the outbox")
	ip := fs.Bool("ip", false, "IP units first (default: daemon.report.ip_units)")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: risewatch report --config FILE [--week 2026-W03|DATE] [--data DIR] [--out DIR] [--send]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *cfgPath == "" {
		fs.Usage()
		return errors.New("--config is required")
	}
	s, cfg, err := daemon.Load(*cfgPath)
	if err != nil {
		return err
	}
	if *data != "" {
		cfg.DataDir = *data
	}
	loc := cfg.Location()
	var start, end = report.PreviousWeek(nowFunc(), loc)
	if *week != "" {
		if start, end, err = report.ParseWeek(*week, loc); err != nil {
			return fmt.Errorf("--week: %w", err)
		}
	}
	st, err := store.Open(ctx, cfg.DataDir, store.Options{})
	if err != nil {
		return err
	}
	defer st.Close()
	repIP, paper := cfg.ReportUnits()
	in, err := daemon.ReportInput(ctx, st, s, nil, start, end, *ip || repIP)
	if err != nil {
		return err
	}
	in.Paper = paper
	if err := daemon.AddReadiness(ctx, &in, s, cfg); err != nil {
		return err
	}
	dir := *out
	if dir == "" {
		dir = filepath.Join(cfg.DataDir, "reports")
	}
	rf, err := daemon.WriteReport(dir, in)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%s week %s: %d open, %d opened, %d cleared\n  %s\n  %s\n", s.Name, rf.Week, len(in.Open), len(in.Opened), len(in.Cleared), rf.PDF, rf.CSV)
	if *send {
		n, err := daemon.SendReport(ctx, st, s, cfg, rf, newQuietLogger(stderr))
		if err != nil {
			return fmt.Errorf("send: %w (the message stays queued; the daemon retries)", err)
		}
		fmt.Fprintf(stdout, "  queued for %v; %d message(s) delivered now\n", cfg.Report.To, n)
	}
	return nil
}
