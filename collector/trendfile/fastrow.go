package trendfile

import (
	"bytes"
	"encoding/binary"
	"math"
	"math/bits"

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

// What scanWords found in a cell (rowCells.st).
const (
	cellSkip  = 0 // blank: no sample
	cellValue = 1 // a plain decimal; rowCells.vals holds its value
	cellOther = 2 // anything else: fastValue decides
)

// rowCells is the per-column scratch of the wide fast path, reused row
// after row: each header column's start in the record (pos, one entry
// more for the end of the last), what scanWords made of it (st) and its
// value when plain (vals).
type rowCells struct {
	vals []float64
	st   []uint8
	pos  []int32
}

// wideFast handles the common wide row (no quotes, time in the first
// column) in two steps. scanWords walks the row cell by cell, finding
// each cell's end and converting a plain decimal from the same 64-bit
// word; the mapped columns are then turned into readings (or the Row in
// row mode). A row whose field count is not the header's takes the
// general path (wideRow's split), which words the warning.
func (p *parser) wideFast(rec []byte, line int64) {
	delim := p.f.delim
	t := bytes.IndexByte(rec, delim)
	last := p.ncols - 1
	if t < 0 || last < 1 {
		p.wideSplit(rec, line, false)
		return
	}
	rc := &p.rc
	if len(rc.pos) != p.ncols+1 {
		rc.vals, rc.st, rc.pos = make([]float64, p.ncols), make([]uint8, p.ncols), make([]int32, p.ncols+1)
	}
	vals, st, pos := rc.vals, rc.st, rc.pos
	pat := uint64(delim) * ones8
	var memo *[1 << memoBits]memoEntry
	if memoPays && p.memoUse.on(last) {
		memo = p.memo()
	}
	i, c, others, hits, looked := t+1, 1, 0, 0, 0
	for {
		var o, h, l int
		i, c, o, h, l = scanWords(rec, i, c, last, pat, vals, st, pos, memo)
		others, hits, looked = others+o, hits+h, looked+l
		if c >= last {
			break
		}
		// A cell of eight bytes or more, or one near the row's end.
		j := bytes.IndexByte(rec[i:], delim)
		if j < 0 {
			p.wideSplit(rec, line, false) // fewer fields than the header
			return
		}
		pos[c] = int32(i)
		others += p.rc.plain(rec, i, i+j, c)
		i += j + 1
		c++
	}
	if bytes.IndexByte(rec[i:], delim) >= 0 {
		p.wideSplit(rec, line, false) // more fields than the header
		return
	}
	pos[last], pos[last+1] = int32(i), int32(len(rec)+1)
	others += p.rc.plain(rec, i, len(rec), last)
	if memo != nil {
		p.memoUse.count(hits, looked)
	}
	at, ok := p.rowTime(rec[:t], line)
	if !ok {
		return
	}
	cols := p.fastCols()
	if p.rowFn != nil {
		p.ensureRow()
		for k := range cols {
			fc := &cols[k]
			c := fc.col
			var v float64
			switch st[c] {
			case cellSkip:
				p.rowV[k], p.rowQ[k], p.rowSet[k] = 0, collector.Missing, false
				continue
			case cellValue:
				v = fc.convert(vals[c])
			default:
				p.rowV[k], p.rowQ[k], p.rowSet[k] = p.fastValue(rec, int(pos[c]), int(pos[c+1])-1, fc, line)
				continue
			}
			p.rowV[k], p.rowQ[k], p.rowSet[k] = v, collector.Good, true
		}
		p.commitRow(at)
		return
	}
	// Field by field into the batch's spare capacity (ensureBatch leaves
	// room for a whole row): no Reading is built elsewhere and copied.
	p.ensureBatch(len(cols))
	n := len(p.batch)
	b := p.batch[:n+len(cols)]
	if others == 0 && p.inOrder() {
		// Only plain decimals, and every column a point's: reading k is
		// column k+1.
		row, vals := b[n:], vals[1:len(cols)+1]
		for k := range row {
			fc := &cols[k]
			r := &row[k]
			r.Point, r.At, r.Value, r.Quality = fc.name, at, fc.convert(vals[k]), collector.Good
		}
		p.batch = b
		p.st.Rows++
		return
	}
	for k := range cols {
		fc := &cols[k]
		c := fc.col
		var v float64
		q := collector.Good
		switch st[c] {
		case cellSkip:
			continue
		case cellValue:
			v = fc.convert(vals[c])
		default:
			var set bool
			if v, q, set = p.fastValue(rec, int(pos[c]), int(pos[c+1])-1, fc, line); !set {
				continue
			}
		}
		r := &b[n]
		r.Point, r.At, r.Value, r.Quality = fc.name, at, v, q
		n++
	}
	p.batch = b[:n]
	p.st.Rows++
}

// plain records cell rec[s:e] of column c (one scanWords stopped at)
// and returns 1 when it is not a plain decimal.
func (rc *rowCells) plain(rec []byte, s, e, c int) int {
	if s == e {
		rc.st[c] = cellSkip
		return 1
	}
	v, ok := plainCell(rec, s, e)
	if !ok {
		rc.st[c] = cellOther
		return 1
	}
	rc.vals[c], rc.st[c] = v, cellValue
	return 0
}

// inOrder says whether column k+1 feeds fcols[k] for every column.
func (p *parser) inOrder() bool {
	if p.order == 0 {
		p.order = 1
		for k, fc := range p.fastCols() {
			if fc.col != k+1 {
				p.order = 2
			}
		}
		if len(p.fcols) != p.ncols-1 {
			p.order = 2
		}
	}
	return p.order == 1
}

// convert turns a number read in column fc's unit into SI (0/1 for a
// binary point).
func (fc *fastCol) convert(v float64) float64 {
	if fc.binary {
		return float64(b2i(v != 0))
	}
	return v*fc.scale + fc.offset
}

// fastValue converts cell rec[s:e] of column fc when scanWords did not.
func (p *parser) fastValue(rec []byte, s, e int, fc *fastCol, line int64) (float64, collector.Quality, bool) {
	v, ok := plainCell(rec, s, e)
	if !ok {
		return p.cell(rec[s:e], fc.pt, line, fc.col)
	}
	return fc.convert(v), collector.Good, true
}

// scanWords reads the cells of rec from column c, which starts at byte
// i, while each lies with its delimiter in the 64-bit word at its start
// (at most seven bytes), up to column last (exclusive), and returns the
// byte and column where it stopped (at a longer cell, at one in the
// record's last eight bytes, or at last) and how many of the cells it
// read are not plain decimals. For each cell it records its
// start (pos) and, when the cell is a plain decimal ([-]digits with at
// most one point, ".5" and "5." too), its value (st cellValue, vals);
// else st is cellSkip for a blank cell and cellOther for the rest.
//
// With x = w XOR delim·0x01…01, the lowest set bit of
// (x − 0x01…01) &^ x & 0x80…80 marks the first delimiter byte exactly (a
// borrow only sets bits above a true zero byte; A. Mycroft's zero-byte
// test, Hacker's Delight §6-1). The cell is then converted without a
// branch on its digits or sign: the sign is shifted off; x = w XOR
// '0'·0x01…01 turns digits into 0..9 and the point into 0x1E; the point
// is found with the exact zero-byte test ^(((d & 0x7F…) + 0x7F…) | d |
// 0x7F…) and squeezed out of the word; the remaining bytes are checked to
// be digits (x + 0x76 sets bit 7 of a byte exactly when it is not 0..9)
// and combined with swarValue. The value is mantissa / 10^(fraction
// digits), both exact in float64, so the quotient is correctly rounded
// (Clinger's fast path, as parseNumber uses): it equals
// strconv.ParseFloat's result bit for bit.
//
// On amd64 the loop runs as scanWordsAsm (scanwords_amd64.s) with the
// same results: it finds the delimiters 64 bytes at a time (SSE2), so a
// cell's end does not wait for the cell before, and converts in an XMM
// register; scanWordsGo is the reference both are tested against.
func scanWords(rec []byte, i, c, last int, pat uint64, vals []float64, st []uint8, pos []int32, memo *[1 << memoBits]memoEntry) (i1, c1, others, hits, looked int) {
	if haveScanWordsAsm && last <= len(vals) && last <= len(st) && last <= len(pos) && i >= 0 && c >= 0 {
		return scanWordsAsm(rec, i, c, last, pat, vals, st, pos, memo)
	}
	return scanWordsGo(rec, i, c, last, pat, vals, st, pos, memo)
}

// scanWordsGo is scanWords in Go.
func scanWordsGo(rec []byte, i, c, last int, pat uint64, vals []float64, st []uint8, pos []int32, memo *[1 << memoBits]memoEntry) (i1, c1, others, hits, looked int) {
	vals, st, pos = vals[:last], st[:last], pos[:last]
	for ; c < last && i+8 <= len(rec); c++ {
		w := binary.LittleEndian.Uint64(rec[i:])
		x := w ^ pat
		dm := (x - ones8) &^ x & high8
		if dm == 0 {
			break
		}
		k := bits.TrailingZeros64(dm) >> 3
		pos[c] = int32(i)
		i += k + 1
		if k == 0 {
			st[c] = cellSkip
			others++
			continue
		}
		var me *memoEntry
		var key uint64
		if memo != nil {
			key = w&keepBytes[k] | uint64(k)<<56
			me = &memo[(key*memoMul)>>(64-memoBits)]
			looked++
			if me.key == key {
				hits++
				vals[c], st[c] = me.val, cellValue
				continue
			}
		}
		sh := b2i(w&0xFF == '-')
		x = (w >> (8 * uint(sh))) ^ zeros8
		nb := k - sh
		d := x ^ (0x1E * ones8)
		dots := ^(((d & low7) + low7) | d | low7) & keepBytes[nb&7]
		pt := uint(bits.TrailingZeros64(dots|1<<63)) >> 3 // 7 when there is no point: above the digits
		low := keepBytes[pt&7]
		x = x&low | (x>>8)&^low
		hasDot := b2i(dots != 0)
		nd := nb - hasDot
		frac := (nb - 1 - int(pt)) & -hasDot
		// A second point is left in the digits and fails their test.
		tt := ((x & low7) + 0x76*ones8) | x
		if nd <= 0 || tt&high8&keepBytes[nd&7] != 0 {
			st[c] = cellOther
			others++
			continue
		}
		v := float64(swarValue(x, nd)) / pow10[frac&7]
		v = math.Float64frombits(math.Float64bits(v) ^ uint64(sh)<<63)
		if me != nil {
			*me = memoEntry{key: key, val: v}
		}
		vals[c], st[c] = v, cellValue
	}
	return i, c, others, hits, looked
}

// memoUse switches the memo off while it does not pay: below one hit in
// two lookups a file is read faster without it (exports that log every
// value with sensor noise and three or four decimals repeat few cell
// strings). After a window of lookups with fewer hits, the memo is left
// out for a span of cells that doubles with each poor window (up to
// memoOffMax) and is tried again.
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

// memoPays says whether wideFast uses the memo: with the Go form, where
// a lookup costs a fraction of a conversion. The assembly converts a
// cell in less than the time of a lookup (the memo's 256 KiB lie in L2),
// so on amd64 the memo is left out (measured on the benchmark file with
// repeating values: its cells scanned about a third slower with it).
const memoPays = !haveScanWordsAsm

// memoBits sizes the parsed-cell memo (2^memoBits entries, 16 bytes each).
const (
	memoBits = 14
	memoMul  = 0x9E3779B97F4A7C15 // 2⁶⁴/φ, Fibonacci hashing (Knuth, TAOCP vol. 3, §6.4)
)

// memoEntry is one remembered plain-decimal cell of up to seven bytes:
// its key, the cell's bytes as a word (zero above the cell) with its
// length in the top byte (so "5\x00" is not "5"; a real key is never
// zero), and its value before the unit conversion.
type memoEntry struct {
	key uint64
	val float64
}

// memo returns the parser's direct-mapped cache of parsed cells. Trend
// values repeat: a sensor logged at 0.01 resolution over its range, a
// valve in whole percent, a state as 0/1 give a few thousand distinct
// strings in millions of cells, and a lookup costs a fraction of a parse.
// A miss parses and replaces the entry; values do not depend on the
// memo.
func (p *parser) memo() *[1 << memoBits]memoEntry {
	if p.cellMemo == nil {
		p.cellMemo = new([1 << memoBits]memoEntry)
	}
	return p.cellMemo
}

// keepBytes[n] keeps the low n bytes of a word.
var keepBytes = [9]uint64{0, 0xFF, 0xFFFF, 0xFFFFFF, 0xFFFFFFFF, 0xFFFFFFFFFF, 0xFFFFFFFFFFFF, 0xFFFFFFFFFFFFFF, 0xFFFFFFFFFFFFFFFF}

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
