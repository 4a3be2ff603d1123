package collector

import (
	"fmt"
	"testing"
)

func TestNameIndex(t *testing.T) {
	for _, n := range []int{0, 1, 7, 1000} {
		names := make([]string, n)
		for i := range names {
			names[i] = fmt.Sprintf("VAV-%d.DAT", i)
		}
		x := newNameIndex(names)
		for i, name := range names {
			if got, ok := x.lookup(names, name); !ok || int(got) != i {
				t.Fatalf("%d names: %s -> %d %v, want %d", n, name, got, ok, i)
			}
		}
		for _, absent := range []string{"", "VAV-x.DAT", fmt.Sprintf("VAV-%d.DAT", n)} {
			if got, ok := x.lookup(names, absent); ok {
				t.Fatalf("%d names: absent %q found at %d", n, absent, got)
			}
		}
	}
	dup := []string{"a", "b", "a"}
	x := newNameIndex(dup)
	if got, ok := x.lookup(dup, "a"); !ok || got != 0 {
		t.Fatalf("duplicate name: %d %v, want the first (0)", got, ok)
	}
}
