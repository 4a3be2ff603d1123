package trendfile

import (
	"math"
	"strconv"

	"risewatch/collector"
)

// cellKind is what a cell holds.
type cellKind uint8

const (
	cellNumber  cellKind = iota // a number (value set, in the column's unit)
	cellState                   // a text state such as On/Off (value 0 or 1, no unit)
	cellBlank                   // empty: no sample at this time (no reading emitted)
	cellMissing                 // NaN, null, n/a: a Missing reading
	cellError                   // an error marker ("---", "?", "#N/A"): a Bad reading
	cellInvalid                 // text we do not know: a Bad reading, counted and warned
)

// textStates maps lower-case text states to values. Binary states follow
// the BACnet BinaryPV names (ASHRAE 135 §21: inactive = 0, active = 1) and
// the words BAS exports commonly use for them (common practice).
var textStates = map[string]float64{
	"on": 1, "off": 0, "active": 1, "inactive": 0, "true": 1, "false": 0,
	"yes": 1, "no": 0, "open": 1, "closed": 0, "occupied": 1, "unoccupied": 0,
	"enabled": 1, "disabled": 0, "enable": 1, "disable": 0, "run": 1, "stop": 0,
	"running": 1, "stopped": 0, "start": 1, "standby": 0, "occ": 1, "unocc": 0,
}

// missingWords are cells that mean "no value" (common export spellings).
var missingWords = map[string]bool{
	"nan": true, "-nan": true, "null": true, "none": true, "n/a": true, "na": true, "nil": true,
}

// errorMarkers are cells that mean the value is unreliable (common export
// spellings of a sensor fault, comm loss or spreadsheet error).
var errorMarkers = map[string]bool{
	"-": true, "--": true, "---": true, "----": true, "?": true, "??": true, "???": true,
	"#n/a": true, "#value!": true, "#div/0!": true, "#ref!": true, "#num!": true, "#name?": true,
	"error": true, "err": true, "fault": true, "***": true, "****": true, "offline": true,
	"comm": true, "commfail": true, "comm fail": true, "unreliable": true, "bad": true, "inf": true,
}

// parseCell classifies and converts one cell. decComma accepts ',' as the
// decimal separator (then '.' is accepted too, one separator per number).
func parseCell(b []byte, decComma bool) (float64, cellKind) {
	b = trimSpace(b)
	if len(b) == 0 {
		return 0, cellBlank
	}
	c := b[0]
	if c >= '0' && c <= '9' || c == '-' || c == '+' || c == '.' || (decComma && c == ',') {
		if v, ok := parseNumber(b, decComma); ok {
			return v, cellNumber
		}
	}
	if len(b) > 16 {
		return 0, cellInvalid
	}
	var low [16]byte
	for i, x := range b {
		if x >= 'A' && x <= 'Z' {
			x += 'a' - 'A'
		}
		low[i] = x
	}
	s := low[:len(b)]
	if v, ok := textStates[string(s)]; ok {
		return v, cellState
	}
	if missingWords[string(s)] {
		return 0, cellMissing
	}
	if errorMarkers[string(s)] {
		return 0, cellError
	}
	return 0, cellInvalid
}

// quality maps a non-number cell kind to the reading quality.
func (k cellKind) quality() collector.Quality {
	switch k {
	case cellNumber, cellState:
		return collector.Good
	case cellMissing:
		return collector.Missing
	}
	return collector.Bad
}

func trimSpace(b []byte) []byte {
	for len(b) > 0 && (b[0] == ' ' || b[0] == '\t') {
		b = b[1:]
	}
	for len(b) > 0 && (b[len(b)-1] == ' ' || b[len(b)-1] == '\t') {
		b = b[:len(b)-1]
	}
	return b
}

// pow10 holds the powers of ten exactly representable in float64.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// parseNumber parses a decimal number without allocating. When the decimal
// mantissa is below 2⁵³ and the power of ten is at most 22 in magnitude,
// one multiplication or division of exact values is correctly rounded
// (Clinger, "How to read floating point numbers accurately", PLDI 1990,
// the fast path); other inputs go to strconv.ParseFloat.
func parseNumber(b []byte, decComma bool) (float64, bool) {
	i, neg := 0, false
	if b[0] == '-' || b[0] == '+' {
		neg = b[0] == '-'
		i++
	}
	var mant uint64
	digits, frac, exp := 0, 0, 0
	seenPoint, seenDigit := false, false
	for ; i < len(b); i++ {
		c := b[i]
		switch {
		case c >= '0' && c <= '9':
			seenDigit = true
			if digits < 19 {
				if mant != 0 || c != '0' {
					digits++
				}
				mant = mant*10 + uint64(c-'0')
				if seenPoint {
					frac++
				}
			} else if !seenPoint {
				exp++ // digits beyond 19 are dropped: fall back below
				digits++
			} else {
				digits++
			}
			continue
		case (c == '.' || (decComma && c == ',')) && !seenPoint:
			seenPoint = true
			continue
		case c == 'e' || c == 'E':
			if !seenDigit {
				return 0, false
			}
			e, ok := parseExp(b[i+1:])
			if !ok {
				return 0, false
			}
			exp += e
		default:
			return 0, false
		}
		break
	}
	if !seenDigit {
		return 0, false
	}
	e10 := exp - frac
	if digits <= 19 && mant < 1<<53 && e10 >= -22 && e10 <= 22 {
		v := float64(mant)
		if e10 < 0 {
			v /= pow10[-e10]
		} else {
			v *= pow10[e10]
		}
		if neg {
			v = -v
		}
		return v, true
	}
	return parseSlow(b, decComma)
}

func parseExp(b []byte) (int, bool) {
	if len(b) == 0 {
		return 0, false
	}
	i, neg := 0, false
	if b[0] == '-' || b[0] == '+' {
		neg = b[0] == '-'
		i++
	}
	if i == len(b) || len(b)-i > 4 {
		return 0, false
	}
	e := 0
	for ; i < len(b); i++ {
		if b[i] < '0' || b[i] > '9' {
			return 0, false
		}
		e = e*10 + int(b[i]-'0')
	}
	if neg {
		e = -e
	}
	return e, true
}

func parseSlow(b []byte, decComma bool) (float64, bool) {
	s := string(b)
	if decComma {
		buf := []byte(s)
		for i, c := range buf {
			if c == ',' {
				buf[i] = '.'
			}
		}
		s = string(buf)
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}
