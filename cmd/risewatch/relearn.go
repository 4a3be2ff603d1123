package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"strings"

	"risewatch/daemon"
	"risewatch/store"
)

// runRelearn implements `risewatch relearn`: record in the store that a
// terminal's baseline is to be learned again (after its coil, valve or
// actuator was replaced or repaired); the running daemon applies it within
// seconds (or at its next start), drops the stored baseline and learns
// from the steady heating samples that follow, on the rated model
// meanwhile.
func runRelearn(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("relearn", flag.ContinueOnError)
	fs.SetOutput(stderr)
	cfgPath := fs.String("config", "", "site configuration file (YAML)")
	data := fs.String("data", "", "data directory (overrides daemon.data_dir)")
	by := fs.String("by", "", "who asks (name)")
	note := fs.String("note", "", "what was done to the unit, kept with the request")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: risewatch relearn --config FILE --by NAME [--note TEXT] TERMINAL...")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *cfgPath == "" || strings.TrimSpace(*by) == "" || fs.NArg() == 0 {
		fs.Usage()
		return errors.New("--config, --by and at least one terminal ID are required")
	}
	s, cfg, err := daemon.Load(*cfgPath)
	if err != nil {
		return err
	}
	if *data != "" {
		cfg.DataDir = *data
	}
	var bad []string
	for _, id := range fs.Args() {
		if _, ok := s.TerminalIndex[id]; !ok {
			bad = append(bad, id)
		}
	}
	if len(bad) > 0 {
		return fmt.Errorf("%s: no terminal %s in the site", *cfgPath, strings.Join(bad, ", "))
	}
	st, err := store.Open(ctx, cfg.DataDir, store.Options{})
	if err != nil {
		return err
	}
	defer st.Close()
	now := nowFunc()
	for _, id := range fs.Args() {
		a := store.Ack{FaultID: store.BaselineID(id), Action: store.ActionRelearn, Who: *by, At: now, Note: *note}
		if err := st.Acknowledge(ctx, a); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "%s: baseline relearn recorded by %s; the running daemon applies it within seconds (or at its next start) and learns from the next steady heating days.\n", id, *by)
	}
	return nil
}
