package trendfile

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// collectorSink gathers readings from a running source.
type collectorSink struct {
	mu  sync.Mutex
	all []collector.Reading
}

func (c *collectorSink) run(out <-chan []collector.Reading) {
	for b := range out {
		c.mu.Lock()
		c.all = append(c.all, b...)
		c.mu.Unlock()
	}
}

func (c *collectorSink) count() int {
	c.mu.Lock()
	defer c.mu.Unlock()
	return len(c.all)
}

func (c *collectorSink) waitFor(t *testing.T, n int) {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for c.count() < n {
		if time.Now().After(deadline) {
			t.Fatalf("timed out: %d readings, want %d", c.count(), n)
		}
		time.Sleep(5 * time.Millisecond)
	}
}

// rowsText makes data rows for one point (column "VAV-000.DAT col") from
// minute a to b-1 with value 100+minute.
func rowsText(a, b int) string {
	var sb strings.Builder
	for m := a; m < b; m++ {
		fmt.Fprintf(&sb, "2024-01-15T00:%02d:00Z,%d\n", m, 100+m)
	}
	return sb.String()
}

const header1 = "timestamp,VAV-000.DAT col\n"

// exactlyOnce checks minutes 0..n-1 arrived once each with their values.
func exactlyOnce(t *testing.T, all []collector.Reading, n int) {
	t.Helper()
	seen := map[int]int{}
	base := time.Date(2024, 1, 15, 0, 0, 0, 0, time.UTC)
	for _, r := range all {
		m := int(r.At.Sub(base) / time.Minute)
		seen[m]++
		// °F → °C of 100+m (units.FToC: (F − 32)·5/9, NIST SP 811 B.9).
		if want := (float64(100+m) - 32) * 5 / 9; r.Value-want > 1e-9 || want-r.Value > 1e-9 {
			t.Errorf("minute %d value %v, want %v", m, r.Value, want)
		}
	}
	for m := 0; m < n; m++ {
		if seen[m] != 1 {
			t.Errorf("minute %d arrived %d times", m, seen[m])
		}
	}
	if len(seen) != n {
		t.Errorf("%d distinct minutes, want %d", len(seen), n)
	}
}

func watchSource(t *testing.T, dir, processed string, ck Checkpoints) *Source {
	src, err := New(Config{Name: srcName, Site: genSite(1), File: site.TrendfileConfig{Path: dir, Watch: true, ProcessedDir: processed},
		Checkpoints: ck, PollInterval: 10 * time.Millisecond, SettleTime: 40 * time.Millisecond, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	return src
}

func appendFile(t *testing.T, path, s string) {
	f, err := os.OpenFile(path, os.O_APPEND|os.O_WRONLY|os.O_CREATE, 0o644)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := f.WriteString(s); err != nil {
		t.Fatal(err)
	}
	f.Close()
}

func TestDropFolderFileArrivesInPieces(t *testing.T) {
	dir := t.TempDir()
	ck, _ := NewFileCheckpoints(filepath.Join(t.TempDir(), "ck"))
	ctx, cancel := context.WithCancel(context.Background())
	out := make(chan []collector.Reading)
	src := watchSource(t, dir, "", ck)
	done := make(chan error, 1)
	go func() { done <- src.Run(ctx, out); close(out) }()
	var sink collectorSink
	go sink.run(out)

	path := filepath.Join(dir, "export.csv")
	// A first piece, then the rest (half lines: settle_test.go).
	appendFile(t, path, header1+rowsText(0, 10))
	sink.waitFor(t, 10)
	time.Sleep(100 * time.Millisecond) // more polls: nothing is read twice
	if n := sink.count(); n != 10 {
		t.Fatalf("%d readings after the first piece, want 10", n)
	}
	appendFile(t, path, rowsText(10, 20))
	sink.waitFor(t, 20)
	// Restart: a new source with the same checkpoints reads only new rows.
	cancel()
	if err := <-done; err != nil {
		t.Fatal(err)
	}
	appendFile(t, path, rowsText(20, 25))
	ctx, cancel = context.WithCancel(context.Background())
	defer cancel()
	out2 := make(chan []collector.Reading)
	src2 := watchSource(t, dir, "", ck)
	go func() { done <- src2.Run(ctx, out2); close(out2) }()
	go sink.run(out2)
	sink.waitFor(t, 25)
	time.Sleep(100 * time.Millisecond)
	cancel()
	<-done
	exactlyOnce(t, sink.all, 25)
}

func TestDropFolderRestartMidFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "big.csv")
	writeFile(t, path, header1+rowsText(0, 60))
	ck, _ := NewFileCheckpoints(filepath.Join(t.TempDir(), "ck"))
	var got []collector.Reading
	// First run: take three batches of 7 readings, then stop.
	src := newSourceCk(t, dir, ck)
	src.fmt.batchReading = 7
	ctx, cancel := context.WithCancel(context.Background())
	out := make(chan []collector.Reading) // unbuffered: a batch is sent only when taken
	done := make(chan error, 1)
	go func() { done <- src.Run(ctx, out) }()
	for i := 0; i < 3; i++ {
		got = append(got, <-out...)
	}
	cancel()
	if err := <-done; err != nil {
		t.Fatal(err)
	}
	if len(got) != 21 {
		t.Fatalf("first run got %d readings, want 21", len(got))
	}
	// Second run, same checkpoints: the rest, once.
	src2 := newSourceCk(t, dir, ck)
	got = append(got, readAll(t, src2)...)
	exactlyOnce(t, got, 60)
	// Third run: nothing left.
	if rest := readAll(t, newSourceCk(t, dir, ck)); len(rest) != 0 {
		t.Errorf("third run read %d readings again", len(rest))
	}
}

func newSourceCk(t *testing.T, dir string, ck Checkpoints) *Source {
	src, err := New(Config{Name: srcName, Site: genSite(1), File: site.TrendfileConfig{Path: dir}, Checkpoints: ck, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	return src
}

func TestDropFolderProcessedDirAndDuplicates(t *testing.T) {
	dir, processed := t.TempDir(), filepath.Join(t.TempDir(), "done")
	ck, _ := NewFileCheckpoints(filepath.Join(t.TempDir(), "ck"))
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan []collector.Reading)
	done := make(chan error, 1)
	go func() { done <- watchSource(t, dir, processed, ck).Run(ctx, out); close(out) }()
	var sink collectorSink
	go sink.run(out)

	// A transfer in progress under a temporary name is not read.
	part := filepath.Join(dir, "day1.csv.part")
	writeFile(t, part, header1+rowsText(0, 10))
	time.Sleep(100 * time.Millisecond)
	if sink.count() != 0 {
		t.Fatal("a .part file was read")
	}
	if err := os.Rename(part, filepath.Join(dir, "day1.csv")); err != nil {
		t.Fatal(err)
	}
	// The last line has no line break: with a processed dir the settled
	// file is final and read to its end.
	writeFile(t, filepath.Join(dir, "day2.csv"), header1+strings.TrimSuffix(rowsText(10, 20), "\n"))
	sink.waitFor(t, 20)
	waitGone(t, filepath.Join(dir, "day1.csv"))
	waitGone(t, filepath.Join(dir, "day2.csv"))
	// The same export delivered again under another name is not re-read.
	b, _ := os.ReadFile(filepath.Join(processed, "day1.csv"))
	writeFile(t, filepath.Join(dir, "day1-again.csv"), string(b))
	waitGone(t, filepath.Join(dir, "day1-again.csv"))
	cancel()
	<-done
	exactlyOnce(t, sink.all, 20)
	ents, _ := os.ReadDir(processed)
	if len(ents) != 3 {
		t.Errorf("processed dir has %d files, want 3", len(ents))
	}
}

func waitGone(t *testing.T, path string) {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for {
		if _, err := os.Stat(path); os.IsNotExist(err) {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("%s was not moved", path)
		}
		time.Sleep(5 * time.Millisecond)
	}
}

func TestFileCheckpointsRoundTrip(t *testing.T) {
	dir := t.TempDir()
	c, err := NewFileCheckpoints(dir)
	if err != nil {
		t.Fatal(err)
	}
	if _, ok, err := c.Get("a/b"); ok || err != nil {
		t.Fatalf("empty store: %v %v", ok, err)
	}
	for _, v := range []string{"one", "two"} {
		if err := c.Put("a/b", []byte(v)); err != nil {
			t.Fatal(err)
		}
	}
	c2, _ := NewFileCheckpoints(dir) // a new process sees the last value
	v, ok, err := c2.Get("a/b")
	if !ok || err != nil || string(v) != "two" {
		t.Errorf("got %q %v %v", v, ok, err)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Errorf("%d files in the store, want 1 (no temporaries left)", len(ents))
	}
}
