package influx

import (
	"math"
	"strings"
	"testing"
	"time"

	protocol "github.com/influxdata/line-protocol"
)

func TestLineBuilderEscaping(t *testing.T) {
	at := time.Unix(0, 1465839830100400200)
	var b lineBuilder
	// Escaping rules and the example timestamp from the InfluxDB 1.8
	// documentation, "Line protocol reference", "Special characters".
	b.begin("wea ther,x")
	b.tag("location place", "us,midwest")
	b.tag("a=b", "c=d")
	b.tag("empty", "")
	b.float("temperature", 82)
	b.string("note", `too "hot" \ here`)
	b.int("count", -3)
	b.bool("ok", true)
	b.float("skipped", math.NaN())
	b.float("inf", math.Inf(1))
	if !b.end(at) {
		t.Fatal("line dropped")
	}
	want := `wea\ ther\,x,location\ place=us\,midwest,a\=b=c\=d temperature=82,note="too \"hot\" \\ here",count=-3i,ok=t 1465839830100400200` + "\n"
	if got := string(b.buf); got != want {
		t.Fatalf("encoded\n %s\nwant\n %s", got, want)
	}
	b.begin("m")
	b.tag("t", "v")
	b.float("x", math.NaN())
	if b.end(at) {
		t.Fatal("a line without fields was kept")
	}
	if string(b.buf) != want {
		t.Fatalf("dropped line left bytes behind: %q", b.buf)
	}
}

// FuzzLineBuilder checks that whatever names and strings come in, the
// encoded line parses back to the same measurement, tags and fields.
func FuzzLineBuilder(f *testing.F) {
	f.Add("risewatch_terminal", "terminal", "VAV-2-07", "message", `rise 4.2 K "closed"`, 1.5, int64(3))
	f.Add("m,x y", "k=v", "a,b c", "s", `\"\\`, math.Copysign(0, -1), int64(-1))
	f.Fuzz(func(t *testing.T, meas, tagK, tagV, strK, strV string, fv float64, iv int64) {
		// Names are site identifiers and code constants: printable, no
		// backslash (the parser reads "\\," ambiguously), not starting with
		// '#' (a comment) or '_' (reserved by InfluxDB).
		ok := func(s string) bool {
			if s == "" || s[0] == '#' || s[0] == '_' || strings.ContainsRune(s, '\\') {
				return false
			}
			for _, r := range s {
				if r < 0x20 || r == 0x7f {
					return false
				}
			}
			return true
		}
		if !ok(meas) || !ok(tagK) || !ok(tagV) || !ok(strK) || math.IsNaN(fv) || math.IsInf(fv, 0) {
			t.Skip()
		}
		if tagK == strK || strK == "x" || strK == "i" {
			t.Skip()
		}
		var b lineBuilder
		b.begin(meas)
		b.tag(tagK, tagV)
		b.float("x", fv)
		b.int("i", iv)
		b.string(strK, strV)
		b.end(time.Unix(0, 1700000000000000000))
		ms, err := protocol.NewParser(protocol.NewMetricHandler()).Parse(b.buf)
		if err != nil {
			t.Fatalf("parse %q: %v", b.buf, err)
		}
		if len(ms) != 1 {
			t.Fatalf("%d metrics from %q", len(ms), b.buf)
		}
		m := ms[0]
		tags, fields := map[string]string{}, map[string]any{}
		for _, tg := range m.TagList() {
			tags[tg.Key] = tg.Value
		}
		for _, fl := range m.FieldList() {
			fields[fl.Key] = fl.Value
		}
		if m.Name() != meas {
			t.Fatalf("measurement %q, want %q (%q)", m.Name(), meas, b.buf)
		}
		if v := tags[tagK]; v != tagV {
			t.Fatalf("tag %q=%q, want %q (%q)", tagK, v, tagV, b.buf)
		}
		if v := fields["x"]; v != fv {
			t.Fatalf("float %v, want %v (%q)", v, fv, b.buf)
		}
		if v := fields["i"]; v != iv {
			t.Fatalf("int %v, want %v (%q)", v, iv, b.buf)
		}
		if v := fields[strK]; v != printable(strV) {
			t.Fatalf("string %q, want %q (%q)", v, strV, b.buf)
		}
	})
}
