package trendfile

import (
	"bytes"
	"encoding/binary"
	"math/bits"

	"risewatch/collector"
)

// colPoints returns, per header column, the point it feeds or -1, and
// fills p.colM (column → index in p.cols); built on first use.
func (p *parser) colPoints() []int32 {
	if p.colPt == nil {
		p.colPt, p.colM = make([]int32, p.ncols), make([]int32, p.ncols)
		for i := range p.colPt {
			p.colPt[i], p.colM[i] = -1, -1
		}
		for k, m := range p.cols {
			p.colPt[m.col], p.colM[m.col] = m.pt, int32(k)
		}
	}
	return p.colPt
}

// wideFast handles the common wide row — no quotes, time in the first
// column — in one pass: it finds each delimiter and parses a plain decimal
// cell while scanning it, falling back to parseCell for anything else
// (exponents, text states, markers, spaces, decimal commas). It computes
// exactly what parseNumber computes for plain decimals, so both paths give
// identical values. A bad row appends nothing.
func (p *parser) wideFast(rec []byte, line int64) {
	j := bytes.IndexByte(rec, p.f.delim)
	if j < 0 {
		p.badRow(line, "1 field, the header has more")
		return
	}
	at, ok := p.rowTime(rec[:j], line)
	if !ok {
		return
	}
	colPt := p.colPoints()
	p.ensureRow()
	rowV, rowQ, rowSet := p.rowV, p.rowQ, p.rowSet
	pts := p.pts.points
	delim := p.f.delim
	i, c := j+1, 1
	for {
		if c >= len(colPt) {
			// More fields than the header: fine only if the rest is blank.
			if !allBlank(splitFields(p.fields[:0], rec[i-1:], delim)[1:]) {
				p.badRow(line, "more fields than the header")
				return
			}
			break
		}
		pt := colPt[c]
		if pt < 0 {
			k := bytes.IndexByte(rec[i:], delim)
			if k < 0 {
				i = len(rec)
				c++
				break
			}
			i += k + 1
			c++
			continue
		}
		// Plain decimal [-]digits[.digits], 8 bytes at a time where possible.
		s := i
		neg := false
		if i < len(rec) && rec[i] == '-' {
			neg = true
			i++
		}
		mant, nd, frac, next := plainDecimal(rec, i)
		i = next
		pi := &pts[pt]
		if nd > 0 && nd <= 15 && (i == len(rec) || rec[i] == delim) {
			v := float64(mant)
			if frac > 0 {
				v /= pow10[frac]
			}
			if neg {
				v = -v
			}
			if pi.binary {
				if v != 0 {
					v = 1
				}
			} else {
				v = v*pi.scale + pi.offset
			}
			m := p.colM[c]
			rowV[m], rowQ[m], rowSet[m] = v, collector.Good, true
		} else {
			k := bytes.IndexByte(rec[s:], delim)
			end := len(rec)
			if k >= 0 {
				end = s + k
			}
			m := p.colM[c]
			rowV[m], rowQ[m], rowSet[m] = p.cell(rec[s:end], pt, line, c)
			i = end
		}
		c++
		if i >= len(rec) {
			break
		}
		i++ // past the delimiter
	}
	if c < len(colPt) {
		p.badRow(line, "fewer fields than the header")
		return
	}
	p.commitRow(at)
}

const (
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
