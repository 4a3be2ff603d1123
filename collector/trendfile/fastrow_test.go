package trendfile

import (
	"bytes"
	"context"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// TestWideFastPathMatchesCellParser writes a wide file of mixed cells
// (plain decimals of every length with and without sign and point, ".5",
// "5.", exponents, text states, markers, blanks, a NUL byte after a value
// seen just before) and checks each reading against parseCell, the
// general cell parser, and the plain decimals against strconv.ParseFloat
// (the reference for correctly rounded conversion).
func TestWideFastPathMatchesCellParser(t *testing.T) {
	s := genSite(2)
	pts := columns(s)
	rng := rand.New(rand.NewPCG(1, 2))
	gen := func() string {
		switch rng.IntN(12) {
		case 0:
			return ""
		case 1:
			return []string{"On", "off", "---", "NaN", "5\x00", "1.2.3", "-", ".", "+4", " 7 "}[rng.IntN(10)]
		case 2:
			return strconv.FormatFloat(rng.NormFloat64()*1e5, 'e', rng.IntN(6), 64)
		case 3:
			return []string{".5", "5.", "-.25", "-0", "007"}[rng.IntN(5)]
		}
		v := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(9)-2))
		return strconv.FormatFloat(v, 'f', rng.IntN(6), 64)
	}
	var buf bytes.Buffer
	buf.WriteString("timestamp")
	for _, p := range pts {
		buf.WriteString("," + p.Column)
	}
	buf.WriteString("\n")
	var cells [][]string
	for r := 0; r < 2000; r++ {
		buf.WriteString(start.Add(time.Duration(r) * time.Minute).Format("2006-01-02T15:04:05Z07:00"))
		row := make([]string, len(pts))
		for k := range pts {
			row[k] = gen()
			if r%50 == 1 && k == 0 {
				row[k] = "5" // then "5\x00" below, which is not a number
			}
			if r%50 == 2 && k == 0 {
				row[k] = "5\x00"
			}
			buf.WriteString("," + row[k])
		}
		buf.WriteString("\n")
		cells = append(cells, row)
	}
	for _, mode := range []string{"stream", "parallel", "rows"} {
		src := newSource(t, s, site.TrendfileConfig{Path: "mixed.csv"})
		src.fmt.workers = 1
		if mode == "parallel" {
			src.fmt.workers, src.fmt.chunkBytes = 2, 4096
		}
		var got []collector.Reading
		var err error
		if mode == "rows" {
			_, err = src.ReadRows(context.Background(), bytes.NewReader(buf.Bytes()), "mixed.csv", func(r Row) error {
				for i, ok := range r.Set {
					if ok {
						got = append(got, collector.Reading{Point: r.Points[i], At: r.At, Value: r.Values[i], Quality: r.Quality[i]})
					}
				}
				return nil
			})
		} else {
			_, err = src.ReadStream(context.Background(), bytes.NewReader(buf.Bytes()), "mixed.csv", func(b []collector.Reading) error {
				got = append(got, b...)
				return nil
			})
		}
		if err != nil {
			t.Fatal(err)
		}
		checkMixed(t, mode, src, pts, cells, got)
	}
}

func checkMixed(t *testing.T, mode string, src *Source, pts []site.PointRef, cells [][]string, got []collector.Reading) {
	t.Helper()
	pi := map[string]int{}
	for k, p := range pts {
		pi[p.Name] = k
	}
	i := 0
	for r, row := range cells {
		for k, c := range row {
			raw, kind := parseCell([]byte(c), false)
			if kind == cellBlank {
				continue
			}
			if i >= len(got) {
				t.Fatalf("%s: row %d: readings end early", mode, r)
			}
			rd := got[i]
			i++
			if pi[rd.Point] != k {
				t.Fatalf("row %d col %d: reading for %s", r, k, rd.Point)
			}
			want := raw
			p := src.pts.points[src.pts.byName[rd.Point]]
			switch {
			case p.binary && (kind == cellNumber || kind == cellState):
				want = 0
				if raw != 0 {
					want = 1
				}
			case kind == cellNumber:
				want = raw*p.scale + p.offset
			}
			if kind == cellNumber {
				if ref, err := strconv.ParseFloat(string(trimSpace([]byte(c))), 64); err != nil || ref != raw {
					t.Fatalf("row %d %q: parseCell %v, strconv %v %v", r, c, raw, ref, err)
				}
			}
			if rd.Quality != kind.quality() || (rd.Quality == collector.Good && rd.Value != want) {
				t.Fatalf("%s: row %d col %d %q: got %v %v, want %v %v", mode, r, k, c, rd.Value, rd.Quality, want, kind.quality())
			}
		}
	}
	if i != len(got) {
		t.Fatalf("%d readings, want %d", len(got), i)
	}
}

// TestMemoUseSwitchesOff checks the memo's on/off rule: a window with
// fewer hits than half its lookups leaves the memo out for a span that
// doubles while windows stay poor, and a good window resets it.
func TestMemoUseSwitchesOff(t *testing.T) {
	var m memoUse
	row := 100
	poor := func() {
		for looked := 0; looked < memoWindow; looked += row {
			if !m.on(row) {
				t.Fatal("memo off inside a window")
			}
			m.count(row/2-1, row)
		}
	}
	offRows := func() int {
		n := 0
		for !m.on(row) {
			n++
		}
		return n
	}
	poor()
	if n := offRows(); n != (memoOffBase+row-1)/row {
		t.Fatalf("off for %d rows, want %d", n, (memoOffBase+row-1)/row)
	}
	poor()
	if n := offRows(); n != (2*memoOffBase+row-1)/row {
		t.Fatalf("second poor window: off for %d rows, want %d", n, (2*memoOffBase+row-1)/row)
	}
	for looked := 0; looked < memoWindow; looked += row {
		m.on(row)
		m.count(row/2, row) // half: good enough
	}
	if m.span != 0 || !m.on(row) {
		t.Fatalf("good window: span %d", m.span)
	}
}
