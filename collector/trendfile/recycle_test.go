package trendfile

import (
	"context"
	"os"
	"path/filepath"
	"reflect"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// TestRunRecycledBatchesSameReadings: a consumer that hands every batch
// back (collector.Recycler, as the assembler does) receives exactly the
// readings of one that keeps them, on a file long enough for many batches
// and for the parallel reader's chunks (so handed-back arrays are reused
// by both the sequential and the chunk path).
func TestRunRecycledBatchesSameReadings(t *testing.T) {
	s := genSite(20)
	path := filepath.Join(t.TempDir(), "wide.csv")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := writeWide(f, s, time.Date(2025, 1, 14, 0, 0, 0, 0, time.UTC), time.Minute, 6000); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	want := readAll(t, newSource(t, s, site.TrendfileConfig{Path: path}))

	src := newSource(t, s, site.TrendfileConfig{Path: path})
	out := make(chan []collector.Reading, 4)
	errc := make(chan error, 1)
	go func() { errc <- src.Run(context.Background(), out); close(out) }()
	var got []collector.Reading
	batches := 0
	for b := range out {
		got = append(got, b...)
		batches++
		src.Recycle(b)
	}
	if err := <-errc; err != nil {
		t.Fatal(err)
	}
	if batches < 20 {
		t.Fatalf("%d batches: the file is too short to reuse any", batches)
	}
	if len(got) != len(want) || !reflect.DeepEqual(got, want) {
		t.Fatalf("recycling consumer: %d readings, keeping consumer: %d (or different values)", len(got), len(want))
	}
}
