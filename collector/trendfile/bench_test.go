package trendfile

import (
	"bufio"
	"context"
	"encoding/csv"
	"io"
	"os"
	"path/filepath"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// benchFile writes the benchmark's trend file: 100 terminals × 30 days at
// 1-min rows in the simulator's wide layout (timestamp then 404 point
// columns), about 100 MB.
func benchFile(b *testing.B) (string, *site.Site, int64) {
	b.Helper()
	s := genSite(100)
	path := filepath.Join(b.TempDir(), "campus-30d.csv")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	if err := writeWide(f, s, start, time.Minute, 30*24*60); err != nil {
		b.Fatal(err)
	}
	st, _ := f.Stat()
	f.Close()
	return path, s, st.Size()
}

// BenchmarkTrendIngest reads the whole file into readings (SI, with their
// timestamps), as the source does, through the public stream reader.
func BenchmarkTrendIngest(b *testing.B) {
	path, s, size := benchFile(b)
	src := newSource(b, s, site.TrendfileConfig{Path: path})
	b.SetBytes(size)
	b.ReportAllocs()
	var n int64
	for b.Loop() {
		f, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		n = 0
		_, err = src.ReadStream(context.Background(), f, path, func(batch []collector.Reading) error {
			n += int64(len(batch))
			return nil
		})
		f.Close()
		if err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(n), "readings/op")
}

// BenchmarkTrendIngestRows reads the same file through ReadRows: SI values
// per row, no Reading per value.
func BenchmarkTrendIngestRows(b *testing.B) {
	path, s, size := benchFile(b)
	src := newSource(b, s, site.TrendfileConfig{Path: path})
	b.SetBytes(size)
	b.ReportAllocs()
	var sum float64
	for b.Loop() {
		f, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		_, err = src.ReadRows(context.Background(), f, path, func(r Row) error {
			sum += r.Values[0]
			return nil
		})
		f.Close()
		if err != nil {
			b.Fatal(err)
		}
	}
	_ = sum
}

// BenchmarkTrendIngestSource is the same through Source.Run and a channel.
func BenchmarkTrendIngestSource(b *testing.B) {
	path, s, size := benchFile(b)
	b.SetBytes(size)
	b.ReportAllocs()
	for b.Loop() {
		src := newSource(b, s, site.TrendfileConfig{Path: path})
		out := make(chan []collector.Reading, 4)
		errc := make(chan error, 1)
		go func() { errc <- src.Run(context.Background(), out); close(out) }()
		for range out {
		}
		if err := <-errc; err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkEncodingCSV is the baseline: Go's encoding/csv tokenising the
// same file (ReuseRecord, no number or time parsing).
func BenchmarkEncodingCSV(b *testing.B) {
	path, _, size := benchFile(b)
	b.SetBytes(size)
	b.ReportAllocs()
	for b.Loop() {
		f, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		r := csv.NewReader(bufio.NewReaderSize(f, 1<<16))
		r.ReuseRecord = true
		fields := 0
		for {
			rec, err := r.Read()
			if err == io.EOF {
				break
			}
			if err != nil {
				b.Fatal(err)
			}
			fields += len(rec)
		}
		f.Close()
	}
}
