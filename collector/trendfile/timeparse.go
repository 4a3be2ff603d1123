package trendfile

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"time"
)

// Time formats.
const (
	FormatRFC3339 = "rfc3339" // 2024-01-15T08:00:00-06:00; offset optional ("Z", ±hh:mm, ±hhmm); 'T' or ' '
	FormatUnix    = "unix"    // seconds since 1970-01-01 UTC, fraction allowed
	FormatUnixMs  = "unixms"  // milliseconds since 1970-01-01 UTC
)

type timeFormat uint8

const (
	tfRFC3339 timeFormat = iota
	tfUnix
	tfUnixMs
	tfLayout
)

// timeParser turns timestamp cells into instants (Unix ns). Timestamps
// without an offset are wall-clock times in loc, resolved as follows:
//
//   - A time in a DST gap (spring forward: 02:30 does not exist) is read
//     with the offset in force before the gap, so it lands after the
//     change (02:30 CST → 03:30 CDT), as Go's time.Date does; counted.
//   - A time in a repeated hour (fall back: 01:30 happens twice) is
//     resolved by monotonic order in the file: the earlier instant while
//     it is not before the previous row's time, else the later one. A file
//     that runs 01:00…01:59 (CDT) then 01:00…01:59 (CST) is thus read as
//     two hours; counted.
//
// Timestamps with an offset are exact and need no zone.
type timeParser struct {
	format timeFormat
	layout string
	zoned  bool // layout carries its own offset or zone
	loc    *time.Location

	prev    int64 // last instant returned, for repeated hours
	hasPrev bool

	// Cache of the zone period of the last wall-clock time: while a time
	// falls well inside it, its offset is known without a zone lookup.
	segStart, segEnd int64
	segOff           int64
	segOK            bool

	lastRaw []byte // last cell parsed and its result (long layout repeats times)
	rawOK   bool   // lastRaw holds a parsed cell
	lastVal int64

	gaps, repeated int64
}

func newTimeParser(format string, loc *time.Location) (*timeParser, error) {
	p := &timeParser{loc: loc}
	if p.loc == nil {
		p.loc = time.UTC
	}
	switch strings.ToLower(format) {
	case "", FormatRFC3339, "iso8601":
		p.format = tfRFC3339
	case FormatUnix:
		p.format = tfUnix
	case FormatUnixMs:
		p.format = tfUnixMs
	default:
		p.format = tfLayout
		p.layout = format
		// Reference-time tokens that carry a zone: -07, Z07, MST.
		p.zoned = strings.Contains(format, "-07") || strings.Contains(format, "Z07") || strings.Contains(format, "MST")
		if _, err := time.Parse(format, time.Date(2006, 1, 2, 15, 4, 5, 0, time.UTC).Format(format)); err != nil {
			return nil, fmt.Errorf("time format %q is not a Go reference layout: %w", format, err)
		}
	}
	return p, nil
}

var errTime = errors.New("not a timestamp")

// parse returns the instant of cell b in Unix ns.
func (p *timeParser) parse(b []byte) (int64, error) {
	b = trimSpace(b)
	if len(b) > 1 && b[0] == '"' && b[len(b)-1] == '"' {
		b = b[1 : len(b)-1]
	}
	if p.rawOK && string(p.lastRaw) == string(b) {
		return p.lastVal, nil
	}
	var ns int64
	var err error
	switch p.format {
	case tfRFC3339:
		ns, err = p.parseRFC3339(b)
	case tfUnix, tfUnixMs:
		if len(b) == 0 {
			return 0, fmt.Errorf("empty cell: %w", errTime)
		}
		v, ok := parseNumber(b, false)
		if !ok || math.IsNaN(v) {
			return 0, fmt.Errorf("%q: %w (epoch)", b, errTime)
		}
		if p.format == tfUnixMs {
			v /= 1000
		}
		if math.Abs(v) > 1e11 {
			return 0, fmt.Errorf("%q: epoch seconds out of range", b)
		}
		sec, frac := math.Modf(v)
		ns = int64(sec)*1e9 + int64(math.Round(frac*1e9))
	default:
		ns, err = p.parseLayout(b)
	}
	if err != nil {
		return 0, err
	}
	p.lastRaw, p.rawOK = append(p.lastRaw[:0], b...), true
	p.lastVal = ns
	p.prev, p.hasPrev = ns, true
	return ns, nil
}

func (p *timeParser) parseLayout(b []byte) (int64, error) {
	t, err := time.ParseInLocation(p.layout, string(b), time.UTC)
	if err != nil {
		return 0, fmt.Errorf("%q does not match the time format %q", b, p.layout)
	}
	if p.zoned {
		return t.UnixNano(), nil
	}
	return p.resolve(t.UnixNano()), nil
}

// num parses n ASCII digits at b[i:].
func num(b []byte, i, n int) (int, bool) {
	if i+n > len(b) {
		return 0, false
	}
	v := 0
	for _, c := range b[i : i+n] {
		if c < '0' || c > '9' {
			return 0, false
		}
		v = v*10 + int(c-'0')
	}
	return v, true
}

// parseRFC3339 parses YYYY-MM-DD[T ]hh:mm[:ss[.fff…]][Z|±hh[:]mm] without
// allocating. Without an offset it is a wall-clock time in p.loc.
func (p *timeParser) parseRFC3339(b []byte) (int64, error) {
	bad := func() (int64, error) {
		return 0, fmt.Errorf("%q: %w (want RFC 3339, e.g. 2024-01-15T08:00:00-06:00)", b, errTime)
	}
	if len(b) < 16 || b[4] != '-' || b[7] != '-' || (b[10] != 'T' && b[10] != ' ' && b[10] != 't') || b[13] != ':' {
		return bad()
	}
	y, ok1 := num(b, 0, 4)
	mo, ok2 := num(b, 5, 2)
	d, ok3 := num(b, 8, 2)
	h, ok4 := num(b, 11, 2)
	mi, ok5 := num(b, 14, 2)
	if !(ok1 && ok2 && ok3 && ok4 && ok5) {
		return bad()
	}
	i, s, nsec := 16, 0, 0
	if i < len(b) && b[i] == ':' {
		var ok bool
		if s, ok = num(b, i+1, 2); !ok {
			return bad()
		}
		i += 3
		if i < len(b) && (b[i] == '.' || b[i] == ',') {
			i++
			scale, n := 100000000, 0
			for i < len(b) && b[i] >= '0' && b[i] <= '9' {
				nsec += int(b[i]-'0') * scale
				scale /= 10
				i++
				n++
			}
			if n == 0 {
				return bad()
			}
		}
	}
	if mo < 1 || mo > 12 || d < 1 || d > daysIn(y, mo) || h > 23 || mi > 59 || s > 60 {
		return bad()
	}
	if s == 60 { // leap second: hold the last second
		s, nsec = 59, 999999999
	}
	civil := (daysFromCivil(y, mo, d)*86400+int64(h*3600+mi*60+s))*1e9 + int64(nsec)
	if i == len(b) {
		return p.resolve(civil), nil
	}
	switch c := b[i]; c {
	case 'Z', 'z':
		if i+1 != len(b) {
			return bad()
		}
		return civil, nil
	case '+', '-':
		oh, ok1 := num(b, i+1, 2)
		j := i + 3
		if j < len(b) && b[j] == ':' {
			j++
		}
		om, ok2 := num(b, j, 2)
		if !ok1 || !ok2 || j+2 != len(b) || oh > 23 || om > 59 {
			return bad()
		}
		off := int64(oh*3600+om*60) * 1e9
		if c == '-' {
			off = -off
		}
		return civil - off, nil
	}
	return bad()
}

func daysIn(y, m int) int {
	switch m {
	case 2:
		if y%4 == 0 && (y%100 != 0 || y%400 == 0) {
			return 29
		}
		return 28
	case 4, 6, 9, 11:
		return 30
	}
	return 31
}

// daysFromCivil returns days since 1970-01-01 of a proleptic Gregorian
// date (H. Hinnant, "chrono-compatible low-level date algorithms", 2013).
func daysFromCivil(y, m, d int) int64 {
	if m <= 2 {
		y--
	}
	era := y / 400
	if y < 0 && y%400 != 0 {
		era--
	}
	yoe := y - era*400
	mp := (m + 9) % 12
	doy := (153*mp+2)/5 + d - 1
	doe := yoe*365 + yoe/4 - yoe/100 + doy
	return int64(era)*146097 + int64(doe) - 719468
}

const hourNs = int64(time.Hour)

// offsetAt returns the zone offset (ns) at instant x and caches its period.
func (p *timeParser) offsetAt(x int64) int64 {
	t := time.Unix(0, x).In(p.loc)
	_, off := t.Zone()
	start, end := t.ZoneBounds()
	p.segOff = int64(off) * 1e9
	p.segStart, p.segEnd = math.MinInt64, math.MaxInt64
	if !start.IsZero() {
		p.segStart = start.UnixNano()
	}
	if !end.IsZero() {
		p.segEnd = end.UnixNano()
	}
	p.segOK = true
	return p.segOff
}

// resolve turns a wall-clock time (civil ns, as if UTC) in p.loc into an
// instant, with the gap and repeated-hour rules in the type comment.
func (p *timeParser) resolve(civil int64) int64 {
	if p.segOK {
		x := civil - p.segOff
		// Far (3 h) from the period's ends no other offset can apply.
		if x-3*hourNs >= p.segStart && x+3*hourNs < p.segEnd {
			return x
		}
	}
	offA := p.offsetAt(civil - 24*hourNs)
	offB := p.offsetAt(civil + 24*hourNs)
	xa, xb := civil-offA, civil-offB
	va := p.offsetAt(xa) == offA
	vb := p.offsetAt(xb) == offB
	switch {
	case va && vb && xa != xb:
		p.repeated++
		lo, hi := min(xa, xb), max(xa, xb)
		if !p.hasPrev || lo >= p.prev {
			p.offsetAt(lo)
			return lo
		}
		p.offsetAt(hi)
		return hi
	case va:
		p.offsetAt(xa)
		return xa
	case vb:
		p.offsetAt(xb)
		return xb
	}
	p.gaps++
	p.offsetAt(xa)
	return xa
}

// formatNs is for messages.
func formatNs(ns int64) string { return time.Unix(0, ns).UTC().Format(time.RFC3339Nano) }
