package influx

import (
	"strings"
	"testing"
	"time"

	"risewatch/site"
)

func TestFluxString(t *testing.T) {
	// Escapes from the Flux language specification, "String literals".
	cases := []struct{ in, want string }{
		{`VAV-2-07`, `"VAV-2-07"`},
		{`say "hi"`, `"say \"hi\""`},
		{`back\slash`, `"back\\slash"`},
		{"two\nlines", `"two\nlines"`},
		{"cost $5", `"cost $5"`},
		{"${x}", `"\${x}"`},
	}
	for _, c := range cases {
		if got := fluxString(c.in); got != c.want {
			t.Errorf("fluxString(%q) = %s, want %s", c.in, got, c.want)
		}
	}
}

func TestPageQuery(t *testing.T) {
	ref := &site.InfluxRef{Measurement: "vav", Field: "dat", Tags: map[string]string{"terminal": "VAV-2-07", "building": "B"}}
	start := time.Date(2025, 1, 14, 6, 0, 0, 0, time.UTC)
	q := pageQuery("bms/autogen", ref, start, start.Add(6*time.Hour))
	want := `from(bucket: "bms/autogen")
  |> range(start: 2025-01-14T06:00:00Z, stop: 2025-01-14T12:00:00Z)
  |> filter(fn: (r) => r._measurement == "vav" and r._field == "dat" and r["building"] == "B" and r["terminal"] == "VAV-2-07")
  |> keep(columns: ["_time", "_value"])
  |> sort(columns: ["_time"])
`
	if q != want {
		t.Fatalf("query\n%s\nwant\n%s", q, want)
	}
	if strings.Count(q, "|>") != 4 {
		t.Fatal("pipeline changed")
	}
}

func FuzzFluxString(f *testing.F) {
	f.Add(`a"b\c${d}`)
	f.Fuzz(func(t *testing.T, s string) {
		q := fluxString(s)
		// Decode the literal back and compare: the quoting must be lossless
		// and must never leave an unescaped quote or "${".
		body := q[1 : len(q)-1]
		var out strings.Builder
		for i := 0; i < len(body); i++ {
			c := body[i]
			if c == '"' {
				t.Fatalf("unescaped quote in %s", q)
			}
			if c == '$' && i+1 < len(body) && body[i+1] == '{' {
				t.Fatalf("unescaped ${ in %s", q)
			}
			if c != '\\' {
				out.WriteByte(c)
				continue
			}
			i++
			switch body[i] {
			case 'n':
				out.WriteByte('\n')
			case 'r':
				out.WriteByte('\r')
			case 't':
				out.WriteByte('\t')
			default:
				out.WriteByte(body[i])
			}
		}
		if out.String() != s {
			t.Fatalf("round trip %q -> %s -> %q", s, q, out.String())
		}
	})
}
