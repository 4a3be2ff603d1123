package collector

import "hash/maphash"

// nameIndex finds a point's index by name: an open-addressing hash table
// of int32 point indices (linear probing, at most half full) over the
// assembler's names slice. It holds 8 to 16 octets per point where a
// map[string]int32 holds about 35 (its own copy of each string header plus
// the value, control bytes and free slots).
type nameIndex struct {
	seed  maphash.Seed
	slots []int32 // point index + 1; 0 = empty
	mask  uint64
}

func newNameIndex(names []string) nameIndex {
	n := 8
	for n < 2*len(names) {
		n *= 2
	}
	x := nameIndex{seed: maphash.MakeSeed(), slots: make([]int32, n), mask: uint64(n - 1)}
	for i, name := range names {
		if _, dup := x.lookup(names, name); dup {
			continue // first wins, as with a map filled in order without overwrite
		}
		h := maphash.String(x.seed, name) & x.mask
		for x.slots[h] != 0 {
			h = (h + 1) & x.mask
		}
		x.slots[h] = int32(i) + 1
	}
	return x
}

// lookup returns the index of name in names.
func (x *nameIndex) lookup(names []string, name string) (int32, bool) {
	if len(x.slots) == 0 {
		return 0, false
	}
	for h := maphash.String(x.seed, name) & x.mask; ; h = (h + 1) & x.mask {
		s := x.slots[h]
		if s == 0 {
			return 0, false
		}
		if names[s-1] == name {
			return s - 1, true
		}
	}
}
