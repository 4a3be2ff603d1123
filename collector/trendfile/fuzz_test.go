package trendfile

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// FuzzReadStream feeds arbitrary files through both layouts: no panic, and
// the counts stay consistent (every data line is a row, a bad row or blank).
func FuzzReadStream(f *testing.F) {
	f.Add([]byte("timestamp,VAV-000.DAT col,AHU.FAN col\n2024-01-15T00:00:00Z,70.5,On\n2024-01-15T00:01:00Z,,---\n"))
	f.Add([]byte("timestamp,point,value\n2024-01-15T00:00:00-06:00,VAV-000.DAT col,71\n2024-01-15 00:01,AHU.FAN col,\"inactive\"\n"))
	f.Add([]byte("\xef\xbb\xbftimestamp,\"VAV-000.DAT col\"\r\n2024-01-15T00:00:00Z,\"7\"\"1\"\r\n2024-01-15T00:00:00Z,\"a\nb\"\r\nx"))
	f.Add([]byte("timestamp,VAV-000.DAT col\n2024-13-45T99:99:99Z,1e400\n2024-01-15T00:00:00Z,-0.000000000000000000001\n2024-01-15T00:00:01Z,12345678901234567890.5\n"))
	f.Add([]byte("timestamp,VAV-000.DAT col,VAV-000.VLV col\n2024-01-15T00:00:00Z,1.25,\n2024-01-15T00:00:00Z,12.3456789,99999999.9,extra\n"))
	f.Add([]byte("timestamp,VAV-000.DAT col,VAV-000.VLV col\n2024-01-15T00:00:00Z,1,2\r\n2024-01-15T00:01:00Z,\"3\n\",4\n" +
		"2024-01-15T00:00:30Z,5,6\n\n2024-01-15T00:02:00Z,\"\"\"7\",x\n2024-01-15T00:03:00Z,8,9,\n2024-01-15T00:04:00Z,\"1\n0\n\",2"))
	s := genSite(1)
	wide := newSource(f, s, site.TrendfileConfig{Path: "x"})
	long := newSource(f, s, site.TrendfileConfig{Path: "x", Layout: LayoutLong})
	f.Fuzz(func(t *testing.T, data []byte) {
		lines := int64(bytes.Count(data, []byte{'\n'}) + 1)
		for _, src := range []*Source{wide, long} {
			var n int64
			st, err := src.ReadStream(context.Background(), bytes.NewReader(data), "fuzz.csv", func(b []collector.Reading) error {
				for _, r := range b {
					if r.Quality == collector.Good && (math.IsNaN(r.Value) || math.IsInf(r.Value, 0)) {
						t.Fatalf("good reading with value %v", r.Value)
					}
				}
				n += int64(len(b))
				return nil
			})
			if err != nil {
				continue // header problems are errors, not panics
			}
			if n != st.Readings || st.Rows+st.BadRows > lines {
				t.Fatalf("readings %d vs stats %+v, %d lines", n, st, lines)
			}
		}
		// The parallel reader, in chunks of a few bytes, gives what the
		// sequential one gives: readings, rows, counts and warnings.
		chunk := 1 + len(data)%61
		for _, rows := range []bool{false, true} {
			want := readWith(t, s, site.TrendfileConfig{Path: "x"}, data, 1, 0, rows)
			got := readWith(t, s, site.TrendfileConfig{Path: "x"}, data, 2, chunk, rows)
			sameResult(t, fmt.Sprintf("chunk %d rows %t", chunk, rows), got, want)
		}
	})
}

// FuzzSplitQuoted checks the RFC 4180 field splitter against encoding/csv
// on single-line records: where encoding/csv accepts a record, the fields
// are the same; and the fast path agrees on records without quotes.
func FuzzSplitQuoted(f *testing.F) {
	for _, s := range []string{`a,b,c`, `"a,b",c`, `"a""b",,"",x`, `a"b,c`, `"a"b,c`, `,,`, `"unterminated`, `x,"y"`} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, rec string) {
		if rec == "" || strings.ContainsAny(rec, "\r\n") {
			return
		}
		r := csv.NewReader(strings.NewReader(rec))
		r.FieldsPerRecord = -1
		want, werr := r.Read()
		got, _, gerr := splitQuoted(nil, nil, []byte(rec), ',', '"')
		if !strings.Contains(rec, `"`) {
			fast := splitFields(nil, []byte(rec), ',')
			if len(fast) != len(got) {
				t.Fatalf("fast path %d fields, quoted path %d", len(fast), len(got))
			}
		}
		if werr != nil {
			return // encoding/csv rejects it; ours may be stricter or equal
		}
		if gerr != nil {
			t.Fatalf("%q: encoding/csv accepts %q, we fail: %v", rec, want, gerr)
		}
		if len(got) != len(want) {
			t.Fatalf("%q: %d fields, encoding/csv %d", rec, len(got), len(want))
		}
		for i := range want {
			if string(got[i]) != want[i] {
				t.Fatalf("%q field %d: %q, encoding/csv %q", rec, i, got[i], want[i])
			}
		}
	})
}

// FuzzNumbers checks both number parsers against strconv.ParseFloat
// (the reference for correctly rounded decimal conversion).
func FuzzNumbers(f *testing.F) {
	for _, s := range []string{"0", "-1.5", "72.25", "1e3", "12345678.123456", ".5", "5.", "-.5", "1.2.3", "-", "7\x00", "12345678", "-1234567.", "0.1", "99999999999999999999", "1.7976931348623157e308"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		if s == "" {
			return
		}
		ref, rerr := strconv.ParseFloat(s, 64)
		if v, ok := parseNumber([]byte(s), false); ok {
			if rerr != nil || v != ref {
				t.Fatalf("parseNumber(%q) = %v, strconv %v %v", s, v, ref, rerr)
			}
		}
		// The wide fast path: a one-column row "t,<s>".
		rec := []byte("x," + s + ",")
		neg := rec[2] == '-'
		i := 2
		if neg {
			i++
		}
		// The one-word path (both forms), with slack after the cell and
		// without: a plain decimal is strconv's value exactly.
		for _, r := range [][]byte{[]byte("x," + s + ",........"), []byte("x," + s + ",")} {
			if strings.ContainsRune(s, ',') {
				break
			}
			for _, scan := range []scanFunc{scanWordsGo, scanWordsAsm} {
				memo := new([1 << memoBits]memoEntry)
				for _, m := range []*[1 << memoBits]memoEntry{nil, memo, memo} { // the last one hits
					vals, st, pos := make([]float64, 3), make([]uint8, 3), make([]int32, 3)
					_, c, _, _, _ := scan(r, 2, 1, 2, ','*ones8, vals, st, pos, m)
					if c == 2 && st[1] == cellValue && (rerr != nil || math.Float64bits(vals[1]) != math.Float64bits(ref)) {
						t.Fatalf("scanWords(%q) = %v, strconv %v %v", s, vals[1], ref, rerr)
					}
				}
			}
		}
		mant, nd, frac, next := plainDecimal(rec, i)
		if nd > 0 && nd <= 15 && rec[next] == ',' && next == len(rec)-1 {
			v := float64(mant) / pow10[frac]
			if neg {
				v = -v
			}
			if rerr != nil || v != ref {
				t.Fatalf("plainDecimal(%q) = %v, strconv %v %v", s, v, ref, rerr)
			}
		}
	})
}

// FuzzTimes: the RFC 3339 parser never panics, and where Go's time.Parse
// accepts RFC 3339 the instants agree.
func FuzzTimes(f *testing.F) {
	for _, s := range []string{"2024-01-15T08:00:00-06:00", "2024-11-03T01:30:00", "2024-02-29T23:59:60Z", "2024-01-15 08:00:00.123+0530", "0000-01-01T00:00:00Z"} {
		f.Add(s)
	}
	p, _ := newTimeParser(FormatRFC3339, nil)
	f.Fuzz(func(t *testing.T, s string) {
		ns, err := p.parseRFC3339([]byte(s))
		ref, rerr := timeParseRFC3339(s)
		if rerr == nil && err == nil && ns != ref {
			t.Fatalf("%q: %d, time.Parse %d", s, ns, ref)
		}
	})
}

func timeParseRFC3339(s string) (int64, error) {
	t, err := time.Parse(time.RFC3339Nano, s)
	if err != nil || t.Second() == 59 && strings.Contains(s, ":60") {
		return 0, fmt.Errorf("skip")
	}
	return t.UnixNano(), nil
}
