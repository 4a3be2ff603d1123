package site

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzParse: Parse never panics, every error has a position, and whatever
// Parse accepts Marshal writes back and Parse accepts again.
func FuzzParse(f *testing.F) {
	files, _ := filepath.Glob("../configs/*.yaml")
	for _, fn := range files {
		if b, err := os.ReadFile(fn); err == nil {
			f.Add(b)
		}
	}
	f.Add([]byte(base))
	f.Add([]byte("a: &x [*x]\n"))
	f.Add([]byte("site: {name: x, time_zone: UTC}\nterminals: [{id: a, template: a}]\ntemplates: {a: {template: a}}\n"))
	f.Add([]byte(strings.Replace(base, "5 psi", "5e999 psi", 1)))
	f.Add([]byte("site:\n\tname: x\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := Parse("fuzz.yaml", data)
		if err != nil {
			list, ok := err.(ErrorList)
			if !ok || len(list) == 0 {
				t.Fatalf("error %T %v is not a non-empty ErrorList", err, err)
			}
			for _, e := range list {
				if e.Line < 1 || e.Col < 1 || e.Msg == "" {
					t.Fatalf("error without position: %+v", e)
				}
			}
			return
		}
		out, err := Marshal(s)
		if err != nil {
			t.Fatalf("accepted input does not round-trip: %v\ninput:\n%s\noutput:\n%s", err, data, out)
		}
	})
}
