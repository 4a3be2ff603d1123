package main

import (
	"bytes"
	"compress/gzip"
	"context"
	"io"
	"log/slog"
	"net/http"
	"testing"
)

// TestDebugListenerLoopbackOnly: the profiling listener refuses any
// address but loopback, and on loopback serves a heap profile (gzip-
// compressed protobuf, as go tool pprof reads it).
func TestDebugListenerLoopbackOnly(t *testing.T) {
	for _, bad := range []string{"0.0.0.0:9471", ":9471", "[::]:9471", "192.0.2.7:9471", "example.test:9471", "nonsense"} {
		if err := checkLoopback(bad); err == nil {
			t.Errorf("--debug-listen %s accepted", bad)
		}
	}
	for _, good := range []string{"127.0.0.1:9471", "[::1]:9471", "localhost:9471", "127.0.0.2:0"} {
		if err := checkLoopback(good); err != nil {
			t.Errorf("--debug-listen %s: %v", good, err)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	addr, err := startDebug(ctx, "127.0.0.1:0", slog.New(slog.NewTextHandler(io.Discard, nil)))
	if err != nil {
		t.Fatal(err)
	}
	resp, err := http.Get("http://" + addr.String() + "/debug/pprof/heap?gc=1")
	if err != nil {
		t.Fatal(err)
	}
	raw, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusOK {
		t.Fatalf("heap profile: %s", resp.Status)
	}
	if _, err := gzip.NewReader(bytes.NewReader(raw)); err != nil {
		t.Errorf("heap profile is not a gzip-compressed profile: %v", err)
	}
	resp, err = http.Get("http://" + addr.String() + "/debug/pprof/nosuch")
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	if resp.StatusCode != http.StatusNotFound {
		t.Errorf("unknown profile: %s, want 404", resp.Status)
	}
}
