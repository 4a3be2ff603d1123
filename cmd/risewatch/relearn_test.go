package main

import (
	"bytes"
	"context"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"risewatch/store"
)

// TestRelearnRecordsRequests: `risewatch relearn` records one request per
// terminal in the data directory's store, refuses a terminal the site does
// not have (naming it, recording nothing) and requires --by.
func TestRelearnRecordsRequests(t *testing.T) {
	ctx := context.Background()
	dir, data := t.TempDir(), t.TempDir()
	var out, errb bytes.Buffer
	if err := runSim(ctx, []string{"--days", "1", "--out", dir}, &out, &errb); err != nil {
		t.Fatalf("sim: %v\n%s", err, errb.String())
	}
	cfg := filepath.Join(dir, "site.yaml")
	if err := runRelearn(ctx, []string{"--config", cfg, "--data", data, "--by", "tech", "VAV-L-101", "VAV-NOPE"}, &out, &errb); err == nil ||
		!strings.Contains(err.Error(), "VAV-NOPE") || strings.Contains(err.Error(), "VAV-L-101") {
		t.Fatalf("unknown terminal: %v, want an error naming only VAV-NOPE", err)
	}
	if err := runRelearn(ctx, []string{"--config", cfg, "--data", data, "VAV-L-101"}, &out, &errb); err == nil {
		t.Fatal("no --by: no error")
	}
	out.Reset()
	if err := runRelearn(ctx, []string{"--config", cfg, "--data", data, "--by", "tech", "--note", "coil replaced", "VAV-L-101", "VAV-Q-203"}, &out, &errb); err != nil {
		t.Fatalf("relearn: %v\n%s", err, errb.String())
	}
	if strings.Count(out.String(), "baseline relearn recorded") != 2 {
		t.Errorf("output %q, want a line per terminal", out.String())
	}
	st, err := store.Open(ctx, data, store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	acks, err := st.AcksSince(ctx, time.Time{})
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, a := range acks {
		if a.Action != store.ActionRelearn || a.Who != "tech" || a.Note != "coil replaced" {
			t.Errorf("recorded %+v", a)
		}
		term, _ := store.BaselineTerminal(a.FaultID)
		got = append(got, term)
	}
	if strings.Join(got, ",") != "VAV-L-101,VAV-Q-203" {
		t.Errorf("requests for %v, want VAV-L-101 and VAV-Q-203 (and nothing from the refused call)", got)
	}
}
