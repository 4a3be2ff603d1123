package trendfile

import (
	"context"
	"os"
	"path/filepath"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// settleHarness drives the drop-folder poll with a synthetic clock: each
// step sets the file's modification time and polls at a given time, so
// "settled" and "still growing" are decided without sleeping.
type settleHarness struct {
	t    *testing.T
	src  *Source
	path string
	obs  map[string]*observation
	out  chan []collector.Reading
	got  []collector.Reading
	t0   time.Time
}

func newSettleHarness(t *testing.T, ck Checkpoints) *settleHarness {
	dir := t.TempDir()
	src, err := New(Config{Name: srcName, Site: genSite(1), File: site.TrendfileConfig{Path: dir, Watch: true},
		Checkpoints: ck, SettleTime: 10 * time.Second, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	src.pending = map[string]bool{}
	return &settleHarness{t: t, src: src, path: filepath.Join(dir, "export.csv"), obs: map[string]*observation{},
		out: make(chan []collector.Reading, 1000), t0: time.Now().Add(-time.Hour)}
}

// write appends s to the file, stamped at t0+at.
func (h *settleHarness) write(s string, at time.Duration) {
	appendFile(h.t, h.path, s)
	if err := os.Chtimes(h.path, h.t0.Add(at), h.t0.Add(at)); err != nil {
		h.t.Fatal(err)
	}
}

// poll polls at t0+at and returns the readings it sent.
func (h *settleHarness) poll(at time.Duration) []collector.Reading {
	if err := h.src.poll(context.Background(), h.obs, h.out, h.t0.Add(at)); err != nil {
		h.t.Fatal(err)
	}
	var got []collector.Reading
	for len(h.out) > 0 {
		got = append(got, <-h.out...)
	}
	h.got = append(h.got, got...)
	return got
}

func TestSettledUnterminatedLastLineIsRead(t *testing.T) {
	ck := &MemCheckpoints{}
	h := newSettleHarness(t, ck)
	h.write(header1+rowsText(0, 10)+"2024-01-15T00:10:00Z,110", 0)
	if n := len(h.poll(time.Second)); n != 0 {
		t.Fatalf("first sight: %d readings, want 0 (not settled)", n)
	}
	if n := len(h.poll(5 * time.Second)); n != 0 {
		t.Fatalf("5 s unchanged of 10: %d readings, want 0", n)
	}
	// Settled: every line, the unterminated last one too.
	if n := len(h.poll(11 * time.Second)); n != 11 {
		t.Fatalf("settled: %d readings, want 11", n)
	}
	// The terminator arrives late, then more rows: nothing twice.
	h.write("\n"+rowsText(11, 15), 20*time.Second)
	h.poll(21 * time.Second)
	h.poll(31 * time.Second)
	exactlyOnce(t, h.got, 15)
	// A restart from the checkpoint continues after the last row.
	h2 := newSettleHarness(t, ck)
	h2.path, h2.src.cfg.File.Path = h.path, filepath.Dir(h.path)
	h2.write(rowsText(15, 20), 40*time.Second)
	h2.poll(41 * time.Second)
	h2.poll(51 * time.Second)
	exactlyOnce(t, append(h.got, h2.got...), 20)
}

func TestGrowingFileHalfLineIsNotRead(t *testing.T) {
	h := newSettleHarness(t, &MemCheckpoints{})
	// The writer stops mid-line ("…,1" of "…,110") and goes on 8 s later,
	// within the settle time: the half line is never read.
	h.write(header1+rowsText(0, 10)+"2024-01-15T00:10:00Z,1", 0)
	h.poll(time.Second)
	h.poll(5 * time.Second)
	h.write("10\n"+rowsText(11, 12)+"2024-01-15T00:12:00Z,11", 8*time.Second)
	h.poll(9 * time.Second)
	h.poll(15 * time.Second)
	h.write("2\n", 16*time.Second)
	h.poll(17 * time.Second)
	h.poll(27 * time.Second)
	exactlyOnce(t, h.got, 13) // values 100+minute: a half-read "1" or "11" would fail
}

func TestSettledLineThatGrowsAgainIsSkipped(t *testing.T) {
	h := newSettleHarness(t, &MemCheckpoints{})
	// A writer that pauses mid-line longer than the settle time: the half
	// line was read as complete; when the line goes on, its rest is skipped
	// (warned), and the rows after it are read.
	h.write(header1+rowsText(0, 10)+"2024-01-15T00:10:00Z,110", 0)
	h.poll(time.Second)
	h.poll(11 * time.Second)
	h.write(".5\n"+rowsText(11, 13), 20*time.Second)
	h.poll(21 * time.Second)
	h.poll(31 * time.Second)
	exactlyOnce(t, h.got, 13)
}

func TestProgressMovesFileOnlyAfterCommitCoversIt(t *testing.T) {
	ck := &MemCheckpoints{}
	prog, err := collector.OpenProgress(ck, "assembler", time.Hour)
	if err != nil {
		t.Fatal(err)
	}
	h := newSettleHarness(t, ck)
	processed := filepath.Join(t.TempDir(), "done")
	os.MkdirAll(processed, 0o755)
	src, err := New(Config{Name: srcName, Site: genSite(1), File: site.TrendfileConfig{Path: filepath.Dir(h.path), Watch: true, ProcessedDir: processed},
		Checkpoints: ck, SettleTime: 10 * time.Second, Progress: prog, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	src.pending = map[string]bool{}
	h.src = src
	h.write(header1+rowsText(0, 10), 0)
	h.poll(time.Second)
	if n := len(h.poll(11 * time.Second)); n != 10 {
		t.Fatalf("%d readings, want 10", n)
	}
	last := time.Date(2024, 1, 15, 0, 9, 0, 0, time.UTC)
	// The consumer accepted steps up to 00:20: readFrom = 00:20 − 21 min is
	// before the last row, so the file stays and is not read again.
	if err := prog.Accept(last.Add(10 * time.Minute)); err != nil {
		t.Fatal(err)
	}
	if err := prog.Commit(); err != nil {
		t.Fatal(err)
	}
	if n := len(h.poll(12 * time.Second)); n != 0 {
		t.Fatalf("read again: %d readings", n)
	}
	if _, err := os.Stat(h.path); err != nil {
		t.Fatalf("moved before a commit covered its last row: %v", err)
	}
	// Accepted far enough: the next poll moves it.
	prog.Accept(last.Add(time.Hour))
	if err := prog.Commit(); err != nil {
		t.Fatal(err)
	}
	h.poll(13 * time.Second)
	if _, err := os.Stat(filepath.Join(processed, "export.csv")); err != nil {
		t.Fatalf("not moved after the commit: %v", err)
	}
}
