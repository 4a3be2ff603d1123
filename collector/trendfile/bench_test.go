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
		var err error
		if n, err = readStream(src, path); err != nil {
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
// same file (ReuseRecord, no number or time parsing) through a bufio.Reader
// of the same size as the trend reader's buffer, so both read the same
// bytes from the same file in the same-sized chunks.
func BenchmarkEncodingCSV(b *testing.B) {
	path, _, size := benchFile(b)
	b.SetBytes(size)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := readCSV(path); err != nil {
			b.Fatal(err)
		}
	}
}

// readCSV tokenises path with encoding/csv and returns the field count.
func readCSV(path string) (int, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, err
	}
	defer f.Close()
	r := csv.NewReader(bufio.NewReaderSize(f, initialBuf))
	r.ReuseRecord = true
	fields := 0
	for {
		rec, err := r.Read()
		if err == io.EOF {
			return fields, nil
		}
		if err != nil {
			return fields, err
		}
		fields += len(rec)
	}
}

// readStream reads path through ReadStream and returns the reading count.
func readStream(src *Source, path string) (int64, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, err
	}
	defer f.Close()
	var n int64
	_, err = src.ReadStream(context.Background(), f, path, func(batch []collector.Reading) error {
		n += int64(len(batch))
		return nil
	})
	return n, err
}

// BenchmarkTrendIngestVsCSV alternates the two readers of
// BenchmarkTrendIngest and BenchmarkEncodingCSV on the same file, one pass
// each per iteration, and reports their ratio ("x-csv", encoding/csv time
// over ReadStream time; "x-csv-cpu" the same in process CPU time): on a
// shared, loaded machine the separate
// benchmarks can run under different load, the alternation cannot.
func BenchmarkTrendIngestVsCSV(b *testing.B) {
	path, s, size := benchFile(b)
	src := newSource(b, s, site.TrendfileConfig{Path: path})
	b.SetBytes(2 * size)
	var tCSV, tOurs, cCSV, cOurs time.Duration
	for b.Loop() {
		t0, c0 := time.Now(), cpuTime()
		if _, err := readCSV(path); err != nil {
			b.Fatal(err)
		}
		t1, c1 := time.Now(), cpuTime()
		if _, err := readStream(src, path); err != nil {
			b.Fatal(err)
		}
		tCSV += t1.Sub(t0)
		tOurs += time.Since(t1)
		cCSV += c1 - c0
		cOurs += cpuTime() - c1
	}
	b.ReportMetric(float64(tCSV)/float64(tOurs), "x-csv")
	if cOurs > 0 {
		// Process CPU time (getrusage; encoding/csv's includes its garbage
		// collection): less sensitive to other load than wall time.
		b.ReportMetric(float64(cCSV)/float64(cOurs), "x-csv-cpu")
	}
	b.ReportMetric(float64(size)/1e6/tOurs.Seconds()*float64(b.N), "trend-MB/s")
	b.ReportMetric(float64(size)/1e6/tCSV.Seconds()*float64(b.N), "csv-MB/s")
}
