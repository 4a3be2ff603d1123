package trendfile

import (
	"bufio"
	"context"
	"encoding/csv"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// benchFile writes the benchmark's trend file: 100 terminals × 30 days at
// 1-min rows in the simulator's wide layout (timestamp then 404 point
// columns), about 80 MB. Its values repeat (temperatures at 0.01, valves
// in whole percent, airflow in whole cfm, states 0/1).
func benchFile(b *testing.B) (string, *site.Site, int64) {
	return benchFileWith(b, writeWide)
}

// benchFileDistinct is the same site and size with values as many
// exports give them: analog values with three decimals and sensor noise,
// so nearly every cell string differs from the ones before it.
func benchFileDistinct(b *testing.B) (string, *site.Site, int64) {
	return benchFileWith(b, writeWideDistinct)
}

func benchFileWith(b *testing.B, write func(io.Writer, *site.Site, time.Time, time.Duration, int) error) (string, *site.Site, int64) {
	b.Helper()
	s := genSite(100)
	path := filepath.Join(b.TempDir(), "campus-30d.csv")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	if err := write(f, s, start, time.Minute, 30*24*60); err != nil {
		b.Fatal(err)
	}
	st, _ := f.Stat()
	f.Close()
	return path, s, st.Size()
}

// writeWideDistinct writes writeWide's layout with rawValue plus a
// deterministic noise of up to ±0.5 in the file's unit, three decimals
// (binary points stay 0/1).
func writeWideDistinct(w io.Writer, s *site.Site, start time.Time, step time.Duration, rows int) error {
	bw := bufio.NewWriterSize(w, 1<<16)
	pts := columns(s)
	bw.WriteString("timestamp")
	for _, p := range pts {
		bw.WriteString("," + p.Column)
	}
	bw.WriteString("\n")
	var num []byte
	x := uint64(0x9E3779B97F4A7C15)
	for r := 0; r < rows; r++ {
		bw.WriteString(start.Add(time.Duration(r) * step).Format(time.RFC3339))
		for k, p := range pts {
			bw.WriteByte(',')
			v := rawValue(p, k, r)
			if !p.Binary {
				x ^= x << 13 // xorshift64 (G. Marsaglia, "Xorshift RNGs", J. Stat. Softw. 8(14), 2003)
				x ^= x >> 7
				x ^= x << 17
				v += float64(x>>11)/(1<<53) - 0.5
				num = strconv.AppendFloat(num[:0], v, 'f', 3, 64)
			} else {
				num = strconv.AppendFloat(num[:0], v, 'f', -1, 64)
			}
			bw.Write(num)
		}
		bw.WriteByte('\n')
	}
	return bw.Flush()
}

// BenchmarkTrendIngest reads the whole file into readings (SI, with their
// timestamps), as the source does, through the public stream reader.
func BenchmarkTrendIngest(b *testing.B) {
	path, s, size := benchFile(b)
	benchIngest(b, path, s, size)
}

// BenchmarkTrendIngestDistinct is BenchmarkTrendIngest on the file with
// nearly all-distinct values (three decimals and sensor noise).
func BenchmarkTrendIngestDistinct(b *testing.B) {
	path, s, size := benchFileDistinct(b)
	benchIngest(b, path, s, size)
}

// benchIngest reads path (size octets) through ReadStream per iteration.
func benchIngest(b *testing.B, path string, s *site.Site, size int64) {
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

// BenchmarkTrendIngestSource is the same through Source.Run and a channel,
// the path of `risewatch analyze` and the daemon: the consumer hands each
// batch back when done (collector.Recycler), as collector.Assembler.Run does.
// "cpu-ms/op" is the process CPU time per read (getrusage: all goroutines,
// the garbage collector's too).
func BenchmarkTrendIngestSource(b *testing.B) {
	path, s, size := benchFile(b)
	benchSource(b, path, s, size, 0)
}

// BenchmarkTrendIngestSourceSequential is BenchmarkTrendIngestSource with
// the sequential reader (Workers 1): its cpu-ms/op against the parallel
// reader's is what the helpers cost in CPU on the consumer's path.
func BenchmarkTrendIngestSourceSequential(b *testing.B) {
	path, s, size := benchFile(b)
	benchSource(b, path, s, size, 1)
}

func benchSource(b *testing.B, path string, s *site.Site, size int64, workers int) {
	b.SetBytes(size)
	b.ReportAllocs()
	var cpu time.Duration
	for b.Loop() {
		src, err := New(Config{Name: srcName, Site: s, File: site.TrendfileConfig{Path: path}, Workers: workers, Logger: quietLog()})
		if err != nil {
			b.Fatal(err)
		}
		c0 := cpuTime()
		out := make(chan []collector.Reading, 4)
		errc := make(chan error, 1)
		go func() { errc <- src.Run(context.Background(), out); close(out) }()
		for batch := range out {
			src.Recycle(batch)
		}
		if err := <-errc; err != nil {
			b.Fatal(err)
		}
		cpu += cpuTime() - c0
	}
	b.ReportMetric(float64(cpu)/1e6/float64(b.N), "cpu-ms/op")
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
	vsCSV(b, path, s, size, 0)
}

// BenchmarkTrendIngestVsCSVSequential is the same with the sequential
// reader (Workers 1): the single-core ratio.
func BenchmarkTrendIngestVsCSVSequential(b *testing.B) {
	path, s, size := benchFile(b)
	vsCSV(b, path, s, size, 1)
}

// BenchmarkTrendIngestVsCSVDistinct is BenchmarkTrendIngestVsCSV on the
// file with nearly all-distinct values.
func BenchmarkTrendIngestVsCSVDistinct(b *testing.B) {
	path, s, size := benchFileDistinct(b)
	vsCSV(b, path, s, size, 0)
}

// BenchmarkTrendIngestVsCSVDistinctSequential is the sequential reader on
// the all-distinct file.
func BenchmarkTrendIngestVsCSVDistinctSequential(b *testing.B) {
	path, s, size := benchFileDistinct(b)
	vsCSV(b, path, s, size, 1)
}

func vsCSV(b *testing.B, path string, s *site.Site, size int64, workers int) {
	src, err := New(Config{Name: srcName, Site: s, File: site.TrendfileConfig{Path: path}, Workers: workers, Logger: quietLog()})
	if err != nil {
		b.Fatal(err)
	}
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

// BenchmarkTrendIngestParallelVsSequential alternates encoding/csv, the
// parallel reader (Workers 0: one per CPU) and the sequential one (Workers
// 1) on the benchmark file, one pass each per iteration, so all three run
// under the same machine load: "x-seq" is the sequential reader's wall
// time over the parallel one's (below 1: the parallel reader was slower),
// "x-seq-cpu" the same in process CPU time (below 1: the parallel reader
// spends more CPU per byte), "x-csv" and "x-csv-seq" encoding/csv's wall
// time over each.
func BenchmarkTrendIngestParallelVsSequential(b *testing.B) {
	path, s, size := benchFile(b)
	parVsSeq(b, path, s, size)
}

// BenchmarkTrendIngestParallelVsSequentialDistinct is the same on the
// file with nearly all-distinct values.
func BenchmarkTrendIngestParallelVsSequentialDistinct(b *testing.B) {
	path, s, size := benchFileDistinct(b)
	parVsSeq(b, path, s, size)
}

func parVsSeq(b *testing.B, path string, s *site.Site, size int64) {
	var srcs [2]*Source
	for i, w := range []int{0, 1} {
		src, err := New(Config{Name: srcName, Site: s, File: site.TrendfileConfig{Path: path}, Workers: w, Logger: quietLog()})
		if err != nil {
			b.Fatal(err)
		}
		srcs[i] = src
	}
	b.SetBytes(3 * size)
	var tCSV, tPar, tSeq, cPar, cSeq time.Duration
	for b.Loop() {
		t0 := time.Now()
		if _, err := readCSV(path); err != nil {
			b.Fatal(err)
		}
		t1, c1 := time.Now(), cpuTime()
		if _, err := readStream(srcs[0], path); err != nil {
			b.Fatal(err)
		}
		t2, c2 := time.Now(), cpuTime()
		if _, err := readStream(srcs[1], path); err != nil {
			b.Fatal(err)
		}
		tCSV, tPar, tSeq = tCSV+t1.Sub(t0), tPar+t2.Sub(t1), tSeq+time.Since(t2)
		cPar, cSeq = cPar+c2-c1, cSeq+cpuTime()-c2
	}
	b.ReportMetric(float64(tSeq)/float64(tPar), "x-seq")
	if cPar > 0 {
		// Process CPU time: how much more the parallel reader spends.
		b.ReportMetric(float64(cSeq)/float64(cPar), "x-seq-cpu")
	}
	b.ReportMetric(float64(tCSV)/float64(tPar), "x-csv")
	b.ReportMetric(float64(tCSV)/float64(tSeq), "x-csv-seq")
	b.ReportMetric(float64(size)/1e6/tPar.Seconds()*float64(b.N), "par-MB/s")
	b.ReportMetric(float64(size)/1e6/tSeq.Seconds()*float64(b.N), "seq-MB/s")
}
