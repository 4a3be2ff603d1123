package wire

import (
	"encoding/hex"
	"runtime"
	"testing"
)

// decodeAll runs every decoder that could see b on the wire.
func decodeAll(b []byte) {
	f, err := DecodeBVLC(b)
	npdu := b
	if err == nil {
		npdu = f.NPDU
	}
	_, apdu, err := DecodeNPDU(npdu)
	if err != nil {
		apdu = b
	}
	decodeAPDUBody(apdu)
	decodeAPDUBody(b)
}

func decodeAPDUBody(b []byte) {
	a, err := DecodeAPDU(b)
	if err != nil {
		return
	}
	d := a.Data
	_, _, _, _ = DecodeWhoIs(d)
	_, _ = DecodeIAm(d)
	_, _, _ = DecodeReadProperty(d)
	_, _ = DecodeReadPropertyMultiple(d)
	_, _ = DecodeReadRange(d)
	_, _ = DecodeReadPropertyACK(d)
	_, _ = DecodeReadPropertyMultipleACK(d)
	_, _ = DecodeReadRangeACK(d)
	_, _, _ = DecodeErrorBody(d)
	r := NewReader(d)
	for !r.Done() {
		if r.Skip() != nil {
			break
		}
	}
}

var fuzzSeeds = []string{
	// ASHRAE 135 Annex F examples (see annexf_test.go) and captured frames.
	"0000010C0C000000051955",
	"30010C0C0000000519553E444290999A3F",
	"0004F10E0C000000101E095509671F",
	"30F10E0C000000101E29554E444290999A4F29674E91004F1F",
	"30020E0C000000211E29554E44422933334F1F0C000000321E29555E9101911F5F1F0C000000231E29554E4443D9D99A4F1F",
	"0202011a0c0500000119837ea462031701b41334220031047f",
	"30011a0c0500000119833a05c049025e0ea462031701b413361b000f1e2c419000001f2a04000ea462031701b413381b000f1e2c4190cccd1f2a04005f6b013561",
	"50580B91019117",
	"1000C40200000322040091032163",
	"100809031903",
	"8104000ec0a8010abac001001008",
	"81050006003c",
	"810a0016012400050103ff0003010c0c000000051955",
	"810a001501001000c4020004d22205ca91032203e7",
	"3d0101031a0c0500000119833a05c04902",
	"40010305",
	"710104",
	"60010a",
}

// FuzzDecode feeds arbitrary octets to every decoder: none may panic, and
// none may allocate beyond the input (lengths are checked before slicing).
func FuzzDecode(f *testing.F) {
	for _, s := range fuzzSeeds {
		b, err := hex.DecodeString(s)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		decodeAll(b)
		runtime.ReadMemStats(&after)
		// Bound: a fixed allowance for error messages plus a constant factor of
		// the input; a length field believed without a check would exceed it.
		if got, limit := after.TotalAlloc-before.TotalAlloc, uint64(64<<10+64*len(b)); got > limit {
			t.Errorf("%d octets allocated for %d input octets (limit %d)", got, len(b), limit)
		}
	})
}

// FuzzTag checks DecodeTag never reports content beyond the input.
func FuzzTag(f *testing.F) {
	f.Add([]byte{0x55, 0xFE, 0xFF, 0xFF})
	f.Add([]byte{0xF5, 0x20, 0xFF, 0, 0, 0, 1, 9})
	f.Add([]byte{0x3E})
	f.Fuzz(func(t *testing.T, b []byte) {
		tag, n, err := DecodeTag(b)
		if err != nil {
			return
		}
		if n+tag.contentLen() > len(b) {
			t.Fatalf("tag %+v header %d exceeds %d octets", tag, n, len(b))
		}
	})
}
