package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"strings"
	"time"

	"risewatch/daemon"
	"risewatch/store"
)

// nowFunc is the wall clock (a variable only so the subcommands read one clock).
var nowFunc = time.Now

func newQuietLogger(w io.Writer) *slog.Logger {
	return slog.New(slog.NewTextHandler(w, &slog.HandlerOptions{Level: slog.LevelWarn}))
}

// runAck implements `risewatch ack`: record that a person has seen a fault
// (and optionally snooze it) in the store; the running daemon applies it
// within seconds and stops repeating notifications for it.
func runAck(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("ack", flag.ContinueOnError)
	fs.SetOutput(stderr)
	cfgPath := fs.String("config", "", "site configuration file (YAML)")
	data := fs.String("data", "", "data directory (overrides daemon.data_dir)")
	fault := fs.String("fault", "", `fault ID as printed in the alert, e.g. "VAV-2-07/leaking-valve"`)
	by := fs.String("by", "", "who acknowledges (name)")
	note := fs.String("note", "", "note kept with the acknowledgement")
	until := fs.String("snooze-until", "", "also hide the fault until this date or time (YYYY-MM-DD[THH:MM] site time, or RFC 3339)")
	unsnooze := fs.Bool("unsnooze", false, "end a snooze early instead")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: risewatch ack --config FILE --fault ID --by NAME [--note TEXT] [--snooze-until DATE]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *cfgPath == "" || *fault == "" || strings.TrimSpace(*by) == "" {
		fs.Usage()
		return errors.New("--config, --fault and --by are required")
	}
	_, cfg, err := daemon.Load(*cfgPath)
	if err != nil {
		return err
	}
	if *data != "" {
		cfg.DataDir = *data
	}
	now := nowFunc()
	var snoozeTo time.Time
	if *until != "" {
		if snoozeTo, err = parseWhen(*until, cfg.Location()); err != nil {
			return fmt.Errorf("--snooze-until: %w", err)
		}
		if !snoozeTo.After(now) {
			return fmt.Errorf("--snooze-until %s is not in the future", snoozeTo.Format(time.RFC3339))
		}
	}
	st, err := store.Open(ctx, cfg.DataDir, store.Options{})
	if err != nil {
		return err
	}
	defer st.Close()
	hist, err := st.History(ctx, store.HistoryQuery{FaultID: *fault, Limit: 1, Newest: true})
	if err != nil {
		return err
	}
	if len(hist) == 0 {
		return fmt.Errorf("fault %q is not in the history of %s (IDs look like VAV-2-07/leaking-valve)", *fault, cfg.DataDir)
	}
	var acts []store.Ack
	switch {
	case *unsnooze:
		acts = append(acts, store.Ack{FaultID: *fault, Action: store.ActionUnsnooze, Who: *by, At: now, Note: *note})
	default:
		acts = append(acts, store.Ack{FaultID: *fault, Action: store.ActionAck, Who: *by, At: now, Note: *note})
		if !snoozeTo.IsZero() {
			acts = append(acts, store.Ack{FaultID: *fault, Action: store.ActionSnooze, Who: *by, At: now, Until: snoozeTo, Note: *note})
		}
	}
	for _, a := range acts {
		if err := st.Acknowledge(ctx, a); err != nil {
			return err
		}
	}
	fmt.Fprintf(stdout, "%s: recorded %s by %s (state was %s)", *fault, acts[len(acts)-1].Action, *by, hist[0].To)
	if !snoozeTo.IsZero() {
		fmt.Fprintf(stdout, ", snoozed until %s", snoozeTo.In(cfg.Location()).Format("2006-01-02 15:04 MST"))
	}
	fmt.Fprintln(stdout, "; the running daemon applies it within seconds.")
	return nil
}
