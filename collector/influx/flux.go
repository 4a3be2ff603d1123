package influx

import (
	"sort"
	"strings"
	"time"

	"risewatch/site"
)

// fluxString quotes s as a Flux string literal (Flux language specification,
// "String literals": escapes \" \\ \n \r \t and \${ for a literal "${").
func fluxString(s string) string {
	var b strings.Builder
	b.Grow(len(s) + 2)
	b.WriteByte('"')
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch c {
		case '"':
			b.WriteString(`\"`)
		case '\\':
			b.WriteString(`\\`)
		case '\n':
			b.WriteString(`\n`)
		case '\r':
			b.WriteString(`\r`)
		case '\t':
			b.WriteString(`\t`)
		case '$':
			if i+1 < len(s) && s[i+1] == '{' {
				b.WriteString(`\$`)
			} else {
				b.WriteByte('$')
			}
		default:
			b.WriteByte(c)
		}
	}
	b.WriteByte('"')
	return b.String()
}

// pageQuery is the Flux query for one point over [start, stop).
func pageQuery(bucket string, ref *site.InfluxRef, start, stop time.Time) string {
	var b strings.Builder
	b.WriteString("from(bucket: ")
	b.WriteString(fluxString(bucket))
	b.WriteString(")\n  |> range(start: ")
	b.WriteString(start.UTC().Format(time.RFC3339Nano))
	b.WriteString(", stop: ")
	b.WriteString(stop.UTC().Format(time.RFC3339Nano))
	b.WriteString(")\n  |> filter(fn: (r) => r._measurement == ")
	b.WriteString(fluxString(ref.Measurement))
	b.WriteString(" and r._field == ")
	b.WriteString(fluxString(ref.Field))
	keys := make([]string, 0, len(ref.Tags))
	for k := range ref.Tags {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		b.WriteString(" and r[")
		b.WriteString(fluxString(k))
		b.WriteString("] == ")
		b.WriteString(fluxString(ref.Tags[k]))
	}
	b.WriteString(")\n  |> keep(columns: [\"_time\", \"_value\"])\n  |> sort(columns: [\"_time\"])\n")
	return b.String()
}
