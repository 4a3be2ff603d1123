package trendfile

import (
	"bytes"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// checkScanWords runs both forms of scanWords over rec (cells from byte
// 0, column 0) and checks they agree, and that every cell they call a
// plain decimal has strconv.ParseFloat's value exactly (bit for bit).
func checkScanWords(t *testing.T, rec []byte, delim byte) {
	t.Helper()
	n := bytes.Count(rec, []byte{delim}) + 2
	pat := uint64(delim) * ones8
	type out struct {
		vals         []float64
		st           []uint8
		pos          []int32
		i, c, others int
	}
	run := func(f func([]byte, int, int, int, uint64, []float64, []uint8, []int32) (int, int, int)) out {
		o := out{vals: make([]float64, n), st: make([]uint8, n), pos: make([]int32, n)}
		for k := range o.st {
			o.st[k] = 9
		}
		o.i, o.c, o.others = f(rec, 0, 0, n-1, pat, o.vals, o.st, o.pos)
		return o
	}
	a, g := run(scanWordsAsm), run(scanWordsGo)
	if a.i != g.i || a.c != g.c || a.others != g.others {
		t.Fatalf("%q: stopped at byte %d column %d (%d others), Go form at %d, %d (%d)", rec, a.i, a.c, a.others, g.i, g.c, g.others)
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
// blanks, text, exponents, stray bytes) and with strconv.ParseFloat.
func TestScanWordsForms(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
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
		for k := rng.IntN(30); k >= 0; k-- {
			b = append(b, cell()...)
			b = append(b, ',')
		}
		b = append(b, cell()...)
		checkScanWords(t, b, ',')
		checkScanWords(t, bytes.ReplaceAll(b, []byte{','}, []byte{';'}), ';')
	}
}

// FuzzScanWords: both forms agree on any row, and their plain decimals
// are strconv.ParseFloat's values exactly.
func FuzzScanWords(f *testing.F) {
	for _, s := range []string{"1,2.5,-3.25,,x,1234567,-123456,.5,5.,-.5", "9999999,-9999999,0.00001,-0,1.2.3,5\x00,", "12345678,1,-", "-,-.,.,..,+1"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		checkScanWords(t, []byte(s), ',')
	})
}
