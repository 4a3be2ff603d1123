package trendfile

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// TestParallelChunkPathRecyclesSegments drives the helpers' path (a
// worker's parseChunk, then the merge's mergeChunk) over every chunk of a
// multi-chunk file, with a consumer that hands each batch back as Run's
// does: once the pool holds the batches of the first pass, a pass over the
// file allocates (nearly) nothing. A chunk path that asks the pool for an
// array larger than the batches it hands out (and so drops them and makes
// a new one) allocates at least once per chunk.
func TestParallelChunkPathRecyclesSegments(t *testing.T) {
	s := genSite(20)
	var data bytes.Buffer
	if err := writeWide(&data, s, start, time.Minute, 600); err != nil {
		t.Fatal(err)
	}
	src, err := New(Config{Name: srcName, Site: s, File: site.TrendfileConfig{Path: "x"}, Workers: 2, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	src.fmt.chunkBytes, src.fmt.batchReading = 4096, 200 // several segments per chunk
	p, err := src.parser("p.csv")
	if err != nil {
		t.Fatal(err)
	}
	sc := newScanner(bytes.NewReader(data.Bytes()), 0, 1, true)
	if err := p.readHeader(sc); err != nil {
		t.Fatal(err)
	}
	rd := newChunkReader(sc, p.chunkSize())
	var chunks []*chunk
	for !rd.done {
		c := &chunk{}
		rd.fill(c)
		if c.err != nil {
			t.Fatal(c.err)
		}
		chunks = append(chunks, c)
	}
	if len(chunks) < 40 {
		t.Fatalf("%d chunks: too few to tell per-chunk allocations", len(chunks))
	}
	w := p.worker()
	var readings int
	emit := func(b []collector.Reading, _, _ int64) error {
		readings += len(b)
		src.Recycle(b)
		return nil
	}
	pass := func() {
		readings, p.hasT = 0, false
		for _, c := range chunks {
			w.parseChunk(c, true)
			if err := p.mergeChunk(c, 0, 1, emit); err != nil {
				t.Fatal(err)
			}
		}
	}
	allocs := testing.AllocsPerRun(5, pass)
	if want := 600 * len(p.cols); readings != want {
		t.Fatalf("a pass delivered %d readings, want %d", readings, want)
	}
	if bound := float64(len(chunks)) / 8; allocs > bound {
		t.Fatalf("%.1f allocations per pass over %d chunks, want at most %.1f (recycled batches are not reused)", allocs, len(chunks), bound)
	}
}

// TestRunParallelSteadyStateAllocations reads a file of many chunks
// through Run with helpers (parallel windows only) and a consumer that
// hands every batch back: a read allocates its fixed set-up (the parser,
// the helpers, the slots, the first batches), not something per chunk,
// whichever goroutine parses a chunk.
func TestRunParallelSteadyStateAllocations(t *testing.T) {
	s := genSite(20)
	path := filepath.Join(t.TempDir(), "wide.csv")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := writeWide(f, s, start, time.Minute, 24000); err != nil {
		t.Fatal(err)
	}
	st, err := f.Stat()
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	src, err := New(Config{Name: srcName, Site: s, File: site.TrendfileConfig{Path: path}, Workers: 3, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	const chunkBytes = 4096
	src.fmt.chunkBytes, src.fmt.batchReading = chunkBytes, 200
	src.fmt.modeChunks = 1 << 30 // one window: helpers are offered every chunk
	chunks := st.Size() / chunkBytes
	var readings int
	read := func() {
		src.cfg.Checkpoints = &MemCheckpoints{} // else the file is done after the first read
		readings = 0
		out := make(chan []collector.Reading, 4)
		errc := make(chan error, 1)
		go func() { errc <- src.Run(context.Background(), out); close(out) }()
		for b := range out {
			readings += len(b)
			src.Recycle(b)
		}
		if err := <-errc; err != nil {
			t.Fatal(err)
		}
	}
	allocs := testing.AllocsPerRun(3, read)
	if want := 24000 * len(columns(s)); readings != want {
		t.Fatalf("a read delivered %d readings, want %d", readings, want)
	}
	if bound := float64(chunks) / 4; allocs > bound {
		t.Fatalf("%.0f allocations per read of %d chunks, want at most %.0f (recycled batches are not reused)", allocs, chunks, bound)
	}
	t.Logf("%.0f allocations per read of %d chunks", allocs, chunks)
}
