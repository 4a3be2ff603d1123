package trendfile

import (
	"bytes"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

type scanFunc = func([]byte, int, int, int, uint64, []float64, []uint8, []int32, *[1 << memoBits]memoEntry) (int, int, int, int, int)

// checkScanWords runs both forms of scanWords over rec (cells from byte
// 0, column 0), each with its memo (or none), and checks they agree, and
// that every cell they call a plain decimal has strconv.ParseFloat's
// value exactly (bit for bit).
func checkScanWords(t *testing.T, rec []byte, delim byte, memoA, memoG *[1 << memoBits]memoEntry) {
	t.Helper()
	n := bytes.Count(rec, []byte{delim}) + 2
	pat := uint64(delim) * ones8
	type out struct {
		vals         []float64
		st           []uint8
		pos          []int32
		i, c, others int
		hits, looked int
	}
	run := func(f scanFunc, memo *[1 << memoBits]memoEntry) out {
		o := out{vals: make([]float64, n), st: make([]uint8, n), pos: make([]int32, n)}
		for k := range o.st {
			o.st[k] = 9
		}
		o.i, o.c, o.others, o.hits, o.looked = f(rec, 0, 0, n-1, pat, o.vals, o.st, o.pos, memo)
		return o
	}
	a, g := run(scanWordsAsm, memoA), run(scanWordsGo, memoG)
	if a.i != g.i || a.c != g.c || a.others != g.others || a.hits != g.hits || a.looked != g.looked {
		t.Fatalf("%q: stopped at byte %d column %d (%d others, memo %d/%d), Go form at %d, %d (%d, %d/%d)",
			rec, a.i, a.c, a.others, a.hits, a.looked, g.i, g.c, g.others, g.hits, g.looked)
	}
	if memoG == nil && g.looked != 0 {
		t.Fatalf("%q: %d memo lookups without a memo", rec, g.looked)
	}
	others := 0
	for c := 0; c < g.c; c++ {
		if a.st[c] != g.st[c] || a.pos[c] != g.pos[c] || (g.st[c] == cellValue && math.Float64bits(a.vals[c]) != math.Float64bits(g.vals[c])) {
			t.Fatalf("%q column %d: %d %v at %d, Go form %d %v at %d", rec, c, a.st[c], a.vals[c], a.pos[c], g.st[c], g.vals[c], g.pos[c])
		}
		others += b2i(g.st[c] != cellValue)
		end := bytes.IndexByte(rec[g.pos[c]:], delim)
		cell := string(rec[g.pos[c] : int(g.pos[c])+end])
		switch g.st[c] {
		case cellSkip:
			if cell != "" {
				t.Fatalf("%q column %d: %q taken as blank", rec, c, cell)
			}
		case cellValue:
			ref, err := strconv.ParseFloat(cell, 64)
			if err != nil || math.Float64bits(ref) != math.Float64bits(g.vals[c]) {
				t.Fatalf("%q column %d: %q = %v, strconv %v %v", rec, c, cell, g.vals[c], ref, err)
			}
		}
	}
	if others != g.others {
		t.Fatalf("%q: %d cells not plain decimals, counted %d", rec, others, g.others)
	}
}

// TestScanWordsForms: the assembly and Go forms of scanWords agree on
// rows of random cells (plain decimals of every length, signs, points,
// blanks, text, exponents, stray bytes, many repeated), without and with
// the memo (hits and lookups too), and with strconv.ParseFloat.
func TestScanWordsForms(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	memoA, memoG := new([1 << memoBits]memoEntry), new([1 << memoBits]memoEntry)
	cell := func() string {
		switch rng.IntN(10) {
		case 0:
			return ""
		case 1:
			return []string{"On", "-", ".", "-.", "..", "1.2.3", "5\x00", "+4", " 7", "1e3", "-0", ".5", "5.", "-.25", "0000000", "9999999", "-999999", "\xff"}[rng.IntN(18)]
		case 2:
			b := make([]byte, rng.IntN(9))
			for i := range b {
				b[i] = "0123456789.-,x\x00 "[rng.IntN(16)]
			}
			return string(b)
		}
		v := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(8)-2))
		return strconv.FormatFloat(v, 'f', rng.IntN(5), 64)
	}
	for r := 0; r < 3000; r++ {
		var b []byte
		n := rng.IntN(30)
		if r%4 == 0 {
			n = 30 + rng.IntN(200) // long rows: the assembly's 64-byte windows, renewed and at the record's end
		}
		for k := n; k >= 0; k-- {
			b = append(b, cell()...)
			b = append(b, ',')
		}
		b = append(b, cell()...)
		checkScanWords(t, b, ',', nil, nil)
		checkScanWords(t, bytes.ReplaceAll(b, []byte{','}, []byte{';'}), ';', nil, nil)
		checkScanWords(t, b, ',', memoA, memoG)
	}
	// The memo is used: a row of repeated cells hits.
	b := []byte("1.5,22.25,-3.125,1.5,22.25,-3.125,x")
	checkScanWords(t, b, ',', memoA, memoG)
	if _, _, _, h, l := scanWordsGo(b, 0, 0, 6, ','*ones8, make([]float64, 7), make([]uint8, 7), make([]int32, 7), memoG); h != 6 || l != 6 {
		t.Fatalf("memo: %d hits in %d lookups, want 6 and 6", h, l)
	}
}

// FuzzScanWords: both forms agree on any row, and their plain decimals
// are strconv.ParseFloat's values exactly.
func FuzzScanWords(f *testing.F) {
	for _, s := range []string{"1,2.5,-3.25,,x,1234567,-123456,.5,5.,-.5", "9999999,-9999999,0.00001,-0,1.2.3,5\x00,", "12345678,1,-", "-,-.,.,..,+1"} {
		f.Add(s)
	}
	memoA, memoG := new([1 << memoBits]memoEntry), new([1 << memoBits]memoEntry)
	f.Fuzz(func(t *testing.T, s string) {
		checkScanWords(t, []byte(s), ',', nil, nil)
		checkScanWords(t, []byte(s), ',', memoA, memoG)
		checkScanWords(t, []byte(s), ',', memoA, memoG) // hits
	})
}
