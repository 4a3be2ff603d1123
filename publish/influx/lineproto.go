package influx

import (
	"math"
	"strconv"
	"strings"
	"time"
)

// lineBuilder writes InfluxDB line protocol (InfluxDB 1.8 documentation,
// "Line protocol reference"):
//
//	measurement,tag=v,tag=v field=1.5,field=2i,field="s",field=t timestamp-ns
//
// Measurement names escape comma and space; tag keys, tag values and field
// keys escape comma, equals sign and space; string field values escape double
// quote and backslash. Line protocol cannot carry a newline in any name or
// value, so control characters become spaces. NaN and ±Inf cannot be represented and are left out;
// a line whose fields are all left out is dropped. Tags are written in the
// order given, which callers keep sorted by key (the server's canonical
// order), so the same point always encodes to the same bytes.
type lineBuilder struct {
	buf    []byte
	start  int // start of the current line
	fields int // fields written on the current line
}

var (
	measurementEscaper = strings.NewReplacer(",", `\,`, " ", `\ `)
	tagEscaper         = strings.NewReplacer(",", `\,`, "=", `\=`, " ", `\ `)
	stringEscaper      = strings.NewReplacer(`"`, `\"`, `\`, `\\`)
)

func needsEscape(s string, set string) bool { return strings.ContainsAny(s, set) }

// printable replaces control characters (newline, tab, ...) by spaces.
func printable(s string) string {
	for i := 0; i < len(s); i++ {
		if s[i] < 0x20 || s[i] == 0x7f {
			return strings.Map(func(r rune) rune {
				if r < 0x20 || r == 0x7f {
					return ' '
				}
				return r
			}, s)
		}
	}
	return s
}

func (b *lineBuilder) begin(measurement string) {
	b.start = len(b.buf)
	b.fields = 0
	measurement = printable(measurement)
	if needsEscape(measurement, ", ") {
		measurement = measurementEscaper.Replace(measurement)
	}
	b.buf = append(b.buf, measurement...)
}

// tag appends a tag; empty values are left out (line protocol has no empty tag).
func (b *lineBuilder) tag(key, value string) {
	if value == "" {
		return
	}
	b.buf = append(b.buf, ',')
	b.buf = appendTagText(b.buf, key)
	b.buf = append(b.buf, '=')
	b.buf = appendTagText(b.buf, value)
}

func appendTagText(buf []byte, s string) []byte {
	s = printable(s)
	if needsEscape(s, ",= ") {
		s = tagEscaper.Replace(s)
	}
	return append(buf, s...)
}

func (b *lineBuilder) fieldKey(key string) {
	if b.fields == 0 {
		b.buf = append(b.buf, ' ')
	} else {
		b.buf = append(b.buf, ',')
	}
	b.fields++
	b.buf = appendTagText(b.buf, key)
	b.buf = append(b.buf, '=')
}

// float appends a float field unless v is NaN or infinite.
func (b *lineBuilder) float(key string, v float64) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return
	}
	b.fieldKey(key)
	b.buf = strconv.AppendFloat(b.buf, v, 'g', -1, 64)
}

func (b *lineBuilder) int(key string, v int64) {
	b.fieldKey(key)
	b.buf = strconv.AppendInt(b.buf, v, 10)
	b.buf = append(b.buf, 'i')
}

func (b *lineBuilder) bool(key string, v bool) {
	b.fieldKey(key)
	if v {
		b.buf = append(b.buf, 't')
	} else {
		b.buf = append(b.buf, 'f')
	}
}

func (b *lineBuilder) string(key, v string) {
	b.fieldKey(key)
	b.buf = append(b.buf, '"')
	v = printable(v)
	if needsEscape(v, `"\`) {
		v = stringEscaper.Replace(v)
	}
	b.buf = append(b.buf, v...)
	b.buf = append(b.buf, '"')
}

// end finishes the line with its timestamp, or drops it when it has no
// fields. It reports whether the line was kept.
func (b *lineBuilder) end(at time.Time) bool {
	if b.fields == 0 {
		b.buf = b.buf[:b.start]
		return false
	}
	b.buf = append(b.buf, ' ')
	b.buf = strconv.AppendInt(b.buf, at.UnixNano(), 10)
	b.buf = append(b.buf, '\n')
	return true
}
