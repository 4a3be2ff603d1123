package trendfile

import (
	"encoding/binary"
	"fmt"
	"math/bits"
	"time"

	"risewatch/collector"
)

// fastCol is one mapped column as the wide fast path needs it.
type fastCol struct {
	col           int    // header column
	m             int32  // index in p.cols (and Row)
	pt            int32  // point index
	name          string // point name
	scale, offset float64
	binary        bool
}

// fastCols returns the mapped columns with their conversions, built on
// first use.
func (p *parser) fastCols() []fastCol {
	if p.fcols == nil {
		p.fcols = make([]fastCol, len(p.cols))
		for k, m := range p.cols {
			pi := &p.pts.points[m.pt]
			p.fcols[k] = fastCol{col: m.col, m: int32(k), pt: m.pt, name: pi.name, scale: pi.scale, offset: pi.offset, binary: pi.binary}
		}
	}
	return p.fcols
}

// wideFast handles the common wide row (no quotes, time in the first
// column) in two passes. The first finds every delimiter of the row, eight
// bytes at a time (findDelims); with all cell bounds known, the second
// parses each mapped cell on its own, so the work on one cell does not wait
// for the one before it. A plain decimal cell of up to eight characters
// after its sign is converted without a branch on its digits (plainWord);
// longer plain decimals take plainDecimal, and anything else (exponents,
// text states, markers, spaces, decimal commas) parseCell, which gives the
// same values for plain decimals. Readings go straight into the batch (or
// the Row in row mode). A bad row adds nothing.
func (p *parser) wideFast(rec []byte, line int64) {
	delim := p.f.delim
	p.delims = findDelims(p.delims, rec, delim)
	pos := p.delims // pos[c] is the end of cell c; the last entry is len(rec)
	if nf := len(pos); nf != p.ncols {
		if nf < p.ncols {
			p.badRow(line, fmt.Sprintf("%d fields, the header has %d", nf, p.ncols))
			return
		}
		if !allBlank(splitFields(p.fields[:0], rec[pos[p.ncols-1]:], delim)[1:]) {
			p.badRow(line, fmt.Sprintf("%d fields, the header has %d", nf, p.ncols))
			return
		}
	}
	at, ok := p.rowTime(rec[:pos[0]], line)
	if !ok {
		return
	}
	cols := p.fastCols()
	if p.rowFn != nil {
		p.rowCells(rec, pos, cols, line)
		p.commitRow(at)
		return
	}
	p.ensureBatch(len(cols))
	memo := p.memo()
	if !p.memoUse.on(len(cols)) {
		p.wideCells(rec, pos, cols, at, line)
		return
	}
	hits, looked := 0, 0
	// Field by field into the batch's spare capacity (ensureBatch leaves
	// room for a whole row): no Reading is built elsewhere and copied.
	n := len(p.batch)
	b := p.batch[:n+len(cols)]
	for i := range cols {
		fc := &cols[i]
		s, e := int(pos[fc.col-1])+1, int(pos[fc.col])
		if s == e {
			continue // blank: no sample at this time
		}
		var v float64
		ok := false
		if n8 := e - s; n8 <= 8 && s+8 <= len(rec) {
			// Most cells repeat a string seen before: look it up.
			w := binary.LittleEndian.Uint64(rec[s:]) & keepBytes[n8]
			me := &memo[(w*memoMul)>>(64-memoBits)]
			looked++
			if me.key == w && rec[e-1] != 0 {
				v, ok = me.val, true
				hits++
			} else if v, ok = plainWord(rec, s, e); ok {
				*me = memoEntry{key: w, val: v}
			}
		} else {
			v, ok = plainWord(rec, s, e)
		}
		q := collector.Good
		switch {
		case !ok:
			var set bool
			if v, q, set = p.fastValue(rec, s, e, fc, line); !set {
				continue
			}
		case fc.binary:
			if v != 0 {
				v = 1
			}
		default:
			v = v*fc.scale + fc.offset
		}
		r := &b[n]
		r.Point, r.At, r.Value, r.Quality = fc.name, at, v, q
		n++
	}
	p.batch = b[:n]
	p.st.Rows++
	p.memoUse.count(hits, looked)
}

// rowCells is wideFast's cell loop in row mode: values into p.rowV,
// p.rowQ and p.rowSet.
func (p *parser) rowCells(rec []byte, pos []int32, cols []fastCol, line int64) {
	p.ensureRow()
	memo := p.memo()
	use := p.memoUse.on(len(cols))
	hits, looked := 0, 0
	for i := range cols {
		fc := &cols[i]
		s, e := int(pos[fc.col-1])+1, int(pos[fc.col])
		if s == e {
			p.rowV[fc.m], p.rowQ[fc.m], p.rowSet[fc.m] = 0, collector.Missing, false
			continue
		}
		var v float64
		ok := false
		if n8 := e - s; use && n8 <= 8 && s+8 <= len(rec) {
			w := binary.LittleEndian.Uint64(rec[s:]) & keepBytes[n8]
			me := &memo[(w*memoMul)>>(64-memoBits)]
			looked++
			if me.key == w && rec[e-1] != 0 {
				v, ok = me.val, true
				hits++
			} else if v, ok = plainWord(rec, s, e); ok {
				*me = memoEntry{key: w, val: v}
			}
		} else {
			v, ok = plainWord(rec, s, e)
		}
		switch {
		case !ok:
			p.rowV[fc.m], p.rowQ[fc.m], p.rowSet[fc.m] = p.fastValue(rec, s, e, fc, line)
			continue
		case fc.binary:
			if v != 0 {
				v = 1
			}
		default:
			v = v*fc.scale + fc.offset
		}
		p.rowV[fc.m], p.rowQ[fc.m], p.rowSet[fc.m] = v, collector.Good, true
	}
	if use {
		p.memoUse.count(hits, looked)
	}
}

// wideCells is wideFast's cell loop without the memo.
func (p *parser) wideCells(rec []byte, pos []int32, cols []fastCol, at time.Time, line int64) {
	n := len(p.batch)
	b := p.batch[:n+len(cols)]
	for i := range cols {
		fc := &cols[i]
		s, e := int(pos[fc.col-1])+1, int(pos[fc.col])
		if s == e {
			continue
		}
		v, ok := plainWord(rec, s, e)
		q := collector.Good
		switch {
		case !ok:
			var set bool
			if v, q, set = p.fastValue(rec, s, e, fc, line); !set {
				continue
			}
		case fc.binary:
			if v != 0 {
				v = 1
			}
		default:
			v = v*fc.scale + fc.offset
		}
		r := &b[n]
		r.Point, r.At, r.Value, r.Quality = fc.name, at, v, q
		n++
	}
	p.batch = b[:n]
	p.st.Rows++
}

// memoUse switches the memo off while it does not pay. A hit saves about
// a third of a cell's cost and a miss adds about a quarter (measured on
// BenchmarkTrendIngestVsCSV*), so below one hit in two lookups a file is
// read faster without it: exports that log every value with sensor noise
// and three or four decimals repeat few cell strings. After a window of
// lookups with fewer hits, the memo is left out for a span of cells that
// doubles with each poor window (up to maxOff) and is tried again.
type memoUse struct {
	hits, looked int // in the current window
	off          int // cells left to read without the memo
	span         int // next off span
}

const (
	memoWindow  = 4096     // lookups judged together
	memoOffBase = 16 << 10 // cells left out after the first poor window
	memoOffMax  = 4 << 20
)

// on says whether the memo is used for a row of cells cells.
func (m *memoUse) on(cells int) bool {
	if m.off > 0 {
		m.off -= cells
		return false
	}
	return true
}

// count adds a row's lookups and judges a full window.
func (m *memoUse) count(hits, looked int) {
	m.hits += hits
	m.looked += looked
	if m.looked < memoWindow {
		return
	}
	if 2*m.hits < m.looked {
		m.span = min(max(2*m.span, memoOffBase), memoOffMax)
		m.off = m.span
	} else {
		m.span = 0
	}
	m.hits, m.looked = 0, 0
}

// memoBits sizes the parsed-cell memo (2^memoBits entries, 24 bytes each).
const (
	memoBits = 14
	memoMul  = 0x9E3779B97F4A7C15 // 2⁶⁴/φ, Fibonacci hashing (Knuth, TAOCP vol. 3, §6.4)
)

// memoEntry is one remembered plain-decimal cell: its bytes as a word
// (zero above the cell) and its value before the unit conversion. Plain
// decimals hold no zero byte, so a key fixes its cell's length; a lookup
// also checks that the cell's last byte is not zero, so "5\x00" never
// matches the entry of "5".
type memoEntry struct {
	key uint64
	val float64
}

// memo returns the parser's direct-mapped cache of parsed cells. Trend
// values repeat: a sensor logged at 0.01 resolution over its range, a
// valve in whole percent, a state as 0/1 give a few thousand distinct
// strings in millions of cells, and a lookup costs a fraction of a parse.
// A miss parses (plainWord) and replaces the entry; values do not depend
// on the memo.
func (p *parser) memo() *[1 << memoBits]memoEntry {
	if p.cellMemo == nil {
		p.cellMemo = new([1 << memoBits]memoEntry)
	}
	return p.cellMemo
}

// fastValue converts cell rec[s:e] of column fc when plainWord did not.
func (p *parser) fastValue(rec []byte, s, e int, fc *fastCol, line int64) (float64, collector.Quality, bool) {
	v, ok := plainCell(rec, s, e)
	if !ok {
		return p.cell(rec[s:e], fc.pt, line, fc.col)
	}
	if fc.binary {
		if v != 0 {
			v = 1
		}
		return v, collector.Good, true
	}
	return v*fc.scale + fc.offset, collector.Good, true
}

// findDelims returns the index of every delim byte in rec followed by
// len(rec) (the end of each cell), reusing dst. Eight bytes at a time:
// x = w XOR delim·0x01…01 has a zero byte exactly where w holds delim, and
// ^(((x & 0x7F…7F) + 0x7F…7F) | x | 0x7F…7F) sets bit 7 of exactly those
// bytes (no borrow between bytes, unlike the shorter (x - 0x01…01) &^ x
// test); the set bits are read off with TrailingZeros.
func findDelims(dst []int32, rec []byte, delim byte) []int32 {
	dst = dst[:0]
	pat := uint64(delim) * ones8
	i := 0
	for ; i+8 <= len(rec); i += 8 {
		x := binary.LittleEndian.Uint64(rec[i:]) ^ pat
		m := ^(((x & low7) + low7) | x | low7)
		for m != 0 {
			dst = append(dst, int32(i+bits.TrailingZeros64(m)>>3))
			m &= m - 1
		}
	}
	for ; i < len(rec); i++ {
		if rec[i] == delim {
			dst = append(dst, int32(i))
		}
	}
	return append(dst, int32(len(rec)))
}

// keepBytes[n] keeps the low n bytes of a word.
var keepBytes = [9]uint64{0, 0xFF, 0xFFFF, 0xFFFFFF, 0xFFFFFFFF, 0xFFFFFFFFFF, 0xFFFFFFFFFFFF, 0xFFFFFFFFFFFFFF, 0xFFFFFFFFFFFFFFFF}

// plainWord parses rec[s:e] when it is a plain decimal, [-]digits with at
// most one point (".5" and "5." too) and at most eight characters after
// the sign, reading it as one 64-bit word (it needs rec[s:s+8] to exist,
// else it falls back to plainCell). x = w XOR '0'·0x01…01 turns digits into
// 0..9 and the point into 0x1E; the point is found with the exact zero-byte
// test, squeezed out of the word (the bytes above it shift down one), the
// remaining bytes are checked to be digits (nonDigits' test) and combined
// with swarValue. No step branches on the digits: a word without a point
// squeezes at byte 8, a no-op, and divides by 10⁰. The value is mantissa /
// 10^(fraction digits), correctly rounded since both are exact in float64
// (Clinger's fast path, as parseNumber uses, so the paths agree bit for
// bit). ok is false for anything else; the caller falls back.
func plainWord(rec []byte, s, e int) (float64, bool) {
	neg := rec[s] == '-'
	if neg {
		s++
	}
	n := e - s
	if uint(n-1) > 7 || s+8 > len(rec) {
		return plainCell(rec, s-b2i(neg), e)
	}
	keep := keepBytes[n]
	x := binary.LittleEndian.Uint64(rec[s:]) ^ zeros8
	d := x ^ (0x1E * ones8)
	dots := ^(((d & low7) + low7) | d | low7) & keep
	pt := uint(bits.TrailingZeros64(dots)) >> 3 // 8 when there is no point
	low := keepBytes[pt]
	x = x&low | (x>>8)&^low
	hasDot := b2i(dots != 0)
	nd := n - hasDot
	keep >>= 8 * uint(hasDot)
	frac := (n - 1 - int(pt)) & -hasDot
	t := ((x &^ high8) + 0x76*ones8) | x
	if t&high8&keep != 0 || dots&(dots-1) != 0 || nd == 0 {
		return 0, false
	}
	v := float64(swarValue(x, nd)) / pow10[frac&7]
	if neg {
		v = -v
	}
	return v, true
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

// plainCell parses rec[s:e] when it is a plain decimal of up to 15 digits
// ([-]digits[.digits]) through plainDecimal; ok is false for anything else.
func plainCell(rec []byte, s, e int) (float64, bool) {
	neg := s < e && rec[s] == '-'
	if neg {
		s++
	}
	if s >= e || rec[s] == '.' {
		return 0, false
	}
	mant, nd, frac, next := plainDecimal(rec[:e], s)
	if nd == 0 || nd > 15 || next != e {
		return 0, false
	}
	v := float64(mant)
	if frac > 0 {
		v /= pow10[frac]
	}
	if neg {
		v = -v
	}
	return v, true
}

const (
	low7   = 0x7F7F7F7F7F7F7F7F
	ones8  = 0x0101010101010101
	high8  = 0x8080808080808080
	zeros8 = 0x3030303030303030
)

// nonDigits returns the index (0..8) of the first byte of w (little
// endian, first character lowest) that is not an ASCII digit. Exact for
// every byte value: x = b XOR '0' is 0..9 for a digit; for x < 128,
// x + 0x76 sets bit 7 iff x ≥ 10, without carrying into the next byte.
func nonDigits(w uint64) int {
	x := w ^ zeros8
	t := ((x &^ high8) + 0x76*ones8) | x
	return bits.TrailingZeros64(t&high8) / 8
}

// swarValue converts the low k (1..8) digit bytes of x = w XOR '0' to
// their value: shift them to the top (zeros below are leading zeros), then
// combine pairs, quads and halves with multiplications (the SWAR method of
// D. Lemire, "Fast parsing of 8-digit numbers", 2022).
func swarValue(x uint64, k int) uint64 {
	x <<= 8 * uint(8-k)
	x = (x * 10) + (x >> 8)
	x = (((x & 0x000000FF000000FF) * (100 + (1000000 << 32))) + (((x >> 16) & 0x000000FF000000FF) * (1 + (10000 << 32)))) >> 32
	return x
}

// plainDecimal reads digits[.digits] at rec[i:] and returns the decimal
// mantissa, its digit count, the digits after the point and the index of
// the first byte after the number. nd is 0 when there is no digit; nd > 15
// means "too long for the fast path" (the caller falls back).
func plainDecimal(rec []byte, i int) (mant uint64, nd, frac, next int) {
	if i+8 <= len(rec) {
		w := binary.LittleEndian.Uint64(rec[i:])
		k := nonDigits(w)
		if k > 0 && k < 8 {
			mant, nd = swarValue(w^zeros8, k), k
			i += k
			if rec[i] != '.' {
				return mant, nd, 0, i
			}
			if i+9 <= len(rec) {
				w = binary.LittleEndian.Uint64(rec[i+1:])
				f := nonDigits(w)
				if f < 8 {
					if f > 0 {
						mant = mant*uint64(pow10u[f]) + swarValue(w^zeros8, f)
					}
					return mant, nd + f, f, i + 1 + f
				}
			}
			return plainTail(rec, i, mant, nd, 0, true)
		}
	}
	return plainTail(rec, i, 0, 0, 0, false)
}

var pow10u = [...]uint64{1, 10, 100, 1000, 10000, 100000, 1000000, 10000000, 100000000}

// plainTail is the byte-at-a-time form of plainDecimal.
func plainTail(rec []byte, i int, mant uint64, nd, frac int, point bool) (uint64, int, int, int) {
	if point {
		i++ // rec[i] is the point
		frac = 0
	}
	for ; i < len(rec); i++ {
		d := rec[i] - '0'
		if d <= 9 {
			if nd < 19 {
				mant = mant*10 + uint64(d)
			}
			nd++
			if point {
				frac++
			}
			continue
		}
		if rec[i] == '.' && !point {
			point = true
			continue
		}
		break
	}
	return mant, nd, frac, i
}
