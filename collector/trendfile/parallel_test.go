package trendfile

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"runtime"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// logRecorder keeps every log record's message and line attribute.
type logRecorder struct {
	mu    *sync.Mutex
	lines *[]string
}

func newLogRecorder() logRecorder { return logRecorder{mu: &sync.Mutex{}, lines: &[]string{}} }

func (h logRecorder) Enabled(context.Context, slog.Level) bool { return true }
func (h logRecorder) WithAttrs([]slog.Attr) slog.Handler       { return h }
func (h logRecorder) WithGroup(string) slog.Handler            { return h }
func (h logRecorder) Handle(_ context.Context, r slog.Record) error {
	var sb strings.Builder
	sb.WriteString(r.Message)
	r.Attrs(func(a slog.Attr) bool {
		if a.Key != "file" && a.Key != "source" {
			fmt.Fprintf(&sb, " %s=%v", a.Key, a.Value)
		}
		return true
	})
	h.mu.Lock()
	*h.lines = append(*h.lines, sb.String())
	h.mu.Unlock()
	return nil
}

// streamResult is everything a read delivers, in order.
type streamResult struct {
	readings []collector.Reading
	rows     []string // ReadRows: one line per row
	st       Stats
	err      error
	logs     []string
}

// readWith reads data with the given worker count and chunk size, through
// ReadStream (rows false) or ReadRows.
func readWith(t *testing.T, s *site.Site, c site.TrendfileConfig, data []byte, workers, chunk int, rows bool) streamResult {
	t.Helper()
	rec := newLogRecorder()
	src, err := New(Config{Name: srcName, Site: s, File: c, Workers: workers, Logger: slog.New(rec)})
	if err != nil {
		t.Fatal(err)
	}
	src.fmt.chunkBytes = chunk
	src.fmt.batchReading = 13
	if workers == 3 {
		// Switch between parallel and solo windows every two chunks, so
		// both modes and their hand-overs meet every kind of row.
		src.fmt.modeChunks = 2
	}
	var res streamResult
	if rows {
		res.st, res.err = src.ReadRows(context.Background(), bytes.NewReader(data), "p.csv", func(r Row) error {
			var sb strings.Builder
			sb.WriteString(r.At.Format(time.RFC3339Nano))
			for i := range r.Points {
				fmt.Fprintf(&sb, " %s=%x/%v/%t", r.Points[i], math.Float64bits(r.Values[i]), r.Quality[i], r.Set[i])
			}
			res.rows = append(res.rows, sb.String())
			return nil
		})
	} else {
		res.st, res.err = src.ReadStream(context.Background(), bytes.NewReader(data), "p.csv", func(b []collector.Reading) error {
			res.readings = append(res.readings, b...)
			return nil
		})
	}
	res.logs = *rec.lines
	return res
}

// sameResult fails unless a and b delivered the same readings (bit for
// bit), rows, stats, error and log lines.
func sameResult(t *testing.T, what string, a, b streamResult) {
	t.Helper()
	if fmt.Sprint(a.err) != fmt.Sprint(b.err) {
		t.Fatalf("%s: error %v, sequential %v", what, a.err, b.err)
	}
	if a.st != b.st {
		t.Fatalf("%s: stats %+v, sequential %+v", what, a.st, b.st)
	}
	if len(a.readings) != len(b.readings) || len(a.rows) != len(b.rows) {
		t.Fatalf("%s: %d readings %d rows, sequential %d and %d", what, len(a.readings), len(a.rows), len(b.readings), len(b.rows))
	}
	for i := range a.readings {
		x, y := a.readings[i], b.readings[i]
		if x.Point != y.Point || !x.At.Equal(y.At) || math.Float64bits(x.Value) != math.Float64bits(y.Value) || x.Quality != y.Quality {
			t.Fatalf("%s: reading %d %+v, sequential %+v", what, i, x, y)
		}
	}
	for i := range a.rows {
		if a.rows[i] != b.rows[i] {
			t.Fatalf("%s: row %d\n%s\nsequential\n%s", what, i, a.rows[i], b.rows[i])
		}
	}
	if strings.Join(a.logs, "\n") != strings.Join(b.logs, "\n") {
		t.Fatalf("%s: logs\n%s\nsequential\n%s", what, strings.Join(a.logs, "\n"), strings.Join(b.logs, "\n"))
	}
}

// compareParallel checks the parallel reader against the sequential one
// on data, for chunk sizes from one byte (every chunk grows to a record)
// to larger than the file, both APIs.
func compareParallel(t *testing.T, s *site.Site, c site.TrendfileConfig, data []byte) {
	t.Helper()
	for _, rows := range []bool{false, true} {
		want := readWith(t, s, c, data, 1, 0, rows)
		for _, chunk := range []int{1, 5, 64, 333, 4096} {
			for _, w := range []int{2, 3} {
				got := readWith(t, s, c, data, w, chunk, rows)
				sameResult(t, fmt.Sprintf("rows=%t chunk=%d workers=%d", rows, chunk, w), got, want)
			}
		}
	}
}

// messyWide is a wide file of a 2-terminal site with every kind of row
// trouble: wrong field counts, unreadable and backward times, unknown
// text, markers, blanks, quoted cells with delimiters and line breaks,
// CRLF endings, blank lines and an unterminated last line.
func messyWide(s *site.Site) []byte {
	pts := columns(s)
	var b bytes.Buffer
	b.WriteString("timestamp")
	for _, p := range pts {
		b.WriteString("," + p.Column)
	}
	b.WriteString("\r\n")
	for r := 0; r < 120; r++ {
		at := start.Add(time.Duration(r) * time.Minute)
		switch {
		case r%17 == 3:
			at = at.Add(-time.Hour) // backwards: a bad row
		case r%29 == 5:
			b.WriteString("not a time")
		}
		if r%29 != 5 {
			b.WriteString(at.Format(time.RFC3339))
		}
		for k, p := range pts {
			b.WriteByte(',')
			switch {
			case r%23 == 7 && k == 1:
				b.WriteString("bogus") // a bad cell
			case r%19 == 2 && k == 2:
				b.WriteString("---")
			case (r+k)%5 == 0:
				// blank
			case r%31 == 4 && k == 0:
				b.WriteString("\"7\n2\"") // quoted line break: an unknown cell
			case r%13 == 6 && k == 3:
				b.WriteString("\"12.5\"")
			default:
				fmt.Fprintf(&b, "%g", rawValue(p, k, r))
			}
		}
		switch {
		case r%37 == 8:
			b.WriteString(",1,2") // extra fields: a bad row
		case r%41 == 9:
			b.WriteString("\n") // blank line
		}
		if r%2 == 0 {
			b.WriteString("\r")
		}
		if r < 119 {
			b.WriteString("\n")
		}
	}
	return b.Bytes()
}

func TestParallelMatchesSequentialMessyFile(t *testing.T) {
	s := genSite(2)
	compareParallel(t, s, site.TrendfileConfig{Path: "x"}, messyWide(s))
}

func TestParallelMatchesSequentialRepeatedHour(t *testing.T) {
	// Chicago 2024 fall back (IANA tz database: 3 Nov 02:00 CDT → 01:00
	// CST): times without offset; chunk boundaries fall inside the
	// repeated hour, where a worker cannot know the row before its chunk.
	s := genSite(1)
	loc, err := time.LoadLocation("America/Chicago")
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	b.WriteString("timestamp,VAV-000.DAT col,VAV-000.VLV col\n")
	times := append(wallRows("2024-11-03", "00:00", "01:55"), wallRows("2024-11-03", "01:00", "03:00")...)
	for i, ts := range times {
		fmt.Fprintf(&b, "%s,%d,%d\n", ts, 60+i, i%100)
	}
	for _, layout := range []string{"2006-01-02 15:04", FormatRFC3339} {
		compareParallel(t, s, site.TrendfileConfig{Path: "x", TimeFormat: layout, TimeZone: loc}, []byte(b.String()))
	}
}

func TestParallelMatchesSequentialOptions(t *testing.T) {
	s := genSite(1)
	// Decimal comma with ';', two rows to skip, the time column last.
	data := "export of building 7\nunits: degF;%\nVAV-000.DAT col;VAV-000.VLV col;timestamp\n"
	for r := 0; r < 60; r++ {
		data += fmt.Sprintf("%d,%d;%d;%s\n", 60+r%9, r%7, r, start.Add(time.Duration(r)*time.Minute).Format(time.RFC3339))
	}
	compareParallel(t, s, site.TrendfileConfig{Path: "x", Delimiter: ';', DecimalComma: true, SkipRows: 2}, []byte(data))
}

func TestParallelManyWarningsRateLimited(t *testing.T) {
	// More bad cells than the warning burst: the merge applies the rate
	// limit in file order as the sequential reader does.
	s := genSite(1)
	data := "timestamp,VAV-000.DAT col\n"
	for r := 0; r < 50; r++ {
		data += start.Add(time.Duration(r)*time.Minute).Format(time.RFC3339) + ",x\n"
	}
	compareParallel(t, s, site.TrendfileConfig{Path: "x"}, []byte(data))
}

func TestParallelRecordTooLongAndCancel(t *testing.T) {
	s := genSite(1)
	head := "timestamp,VAV-000.DAT col\n2024-01-15T00:00:00Z,1\n"
	data := []byte(head + "2024-01-15T00:01:00Z,\"" + strings.Repeat("x", MaxRecordBytes) + "\n")
	got := readWith(t, s, site.TrendfileConfig{Path: "x"}, data, 2, 4096, false)
	want := readWith(t, s, site.TrendfileConfig{Path: "x"}, data, 1, 0, false)
	if got.err == nil || !strings.Contains(got.err.Error(), "line 3") {
		t.Fatalf("error %v, want record too long at line 3", got.err)
	}
	sameResult(t, "too long", got, want)

	// A consumer error stops the read; every goroutine ends (go test
	// -race and the leak of a blocked reader would show).
	big := messyWide(s)
	src, err := New(Config{Name: srcName, Site: s, File: site.TrendfileConfig{Path: "x"}, Workers: 2, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	src.fmt.chunkBytes, src.fmt.batchReading = 64, 1
	stop := fmt.Errorf("enough")
	calls := 0
	_, err = src.ReadStream(context.Background(), bytes.NewReader(big), "p.csv", func([]collector.Reading) error {
		if calls++; calls == 3 {
			return stop
		}
		return nil
	})
	if err != stop || calls != 3 {
		t.Fatalf("error %v after %d calls, want %v after 3", err, calls, stop)
	}
	// The stopped read left parsed chunks unmerged; the source reuses its
	// slots, and a full read after it is still the sequential one.
	var again []collector.Reading
	for range 3 {
		again = again[:0]
		if _, err := src.ReadStream(context.Background(), bytes.NewReader(big), "p.csv", func(b []collector.Reading) error {
			again = append(again, b...)
			return nil
		}); err != nil {
			t.Fatal(err)
		}
	}
	want = readWith(t, s, site.TrendfileConfig{Path: "x"}, big, 1, 0, false)
	sameResult(t, "after a stopped read", streamResult{readings: again, st: want.st, logs: want.logs}, want)
}

// TestModeChooser drives the mode choice with a clock that makes each
// chunk take the given time in each mode: the faster mode runs, the
// other is measured again every exploreEvery windows, and a change of
// load turns the choice.
func TestModeChooser(t *testing.T) {
	at := time.Unix(0, 0)
	var perChunk [2]time.Duration // [parallel, solo]
	m := newModeChooser(8, nil)
	m.now, m.t0 = func() time.Time { return at }, at
	run := func(windows int) string {
		var trace []byte
		for range windows {
			trace = append(trace, "PS"[b2i(m.solo)])
			for range m.chunks {
				at = at.Add(perChunk[b2i(m.solo)])
				m.chunkDone(1000)
			}
		}
		return string(trace)
	}
	perChunk = [2]time.Duration{time.Millisecond, 2 * time.Millisecond}
	if got, want := run(20), "PSPPPPPPPPSPPPPPPPPS"; got != want {
		t.Errorf("parallel faster: windows %s, want %s", got, want)
	}
	// The parallel mode slows down (the other core is taken): two
	// measurements pull its mean below solo's, then solo runs, with one
	// parallel window after exploreEvery.
	perChunk = [2]time.Duration{5 * time.Millisecond, 2 * time.Millisecond}
	if got, want := run(12), "PPSSSSSSSSPS"; got != want {
		t.Errorf("parallel slower: windows %s, want %s", got, want)
	}
	if m.rate[0] >= m.rate[1] {
		t.Errorf("rates %v: want parallel below solo", m.rate)
	}
	// The rates go to the next read of the source.
	keep := &modeRates{}
	m.keep = keep
	m.save()
	if n := newModeChooser(8, keep); !n.solo || n.rate != m.rate {
		t.Errorf("next read starts solo=%t with rates %v, want solo with %v", n.solo, n.rate, m.rate)
	}
}

// TestParallelCancelEndsGoroutines cancels the context during a parallel
// read: the read returns the context's error and leaves no goroutine.
func TestParallelCancelEndsGoroutines(t *testing.T) {
	s := genSite(2)
	data := messyWide(s)
	src, err := New(Config{Name: srcName, Site: s, File: site.TrendfileConfig{Path: "x"}, Workers: 3, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	src.fmt.chunkBytes, src.fmt.batchReading, src.fmt.modeChunks = 64, 1, 2
	base := runtime.NumGoroutine()
	for _, stopAt := range []int{1, 5, 40} {
		ctx, cancel := context.WithCancel(context.Background())
		calls := 0
		_, err = src.ReadStream(ctx, bytes.NewReader(data), "p.csv", func([]collector.Reading) error {
			if calls++; calls == stopAt {
				cancel()
			}
			return nil
		})
		cancel()
		if !errors.Is(err, context.Canceled) {
			t.Fatalf("stop at %d: error %v, want %v", stopAt, err, context.Canceled)
		}
		// Helpers have returned (the read waits for them); let the
		// runtime retire them (and any goroutine an earlier test left
		// winding down), waiting up to 10 s on a loaded machine.
		for end := time.Now().Add(10 * time.Second); runtime.NumGoroutine() > base && time.Now().Before(end); {
			time.Sleep(time.Millisecond)
		}
		if n := runtime.NumGoroutine(); n > base {
			t.Fatalf("stop at %d: %d goroutines after the read, %d before", stopAt, n, base)
		}
	}
}
