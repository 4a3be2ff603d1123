package influx

import "testing"

// BenchmarkAppendEvidence is the per-terminal, per-step encoding cost.
func BenchmarkAppendEvidence(b *testing.B) {
	s := testSite()
	ev := stepEvidence(3, 1)
	var lb lineBuilder
	b.ReportAllocs()
	n := 0
	for b.Loop() {
		lb.buf = lb.buf[:0]
		appendEvidence(&lb, s, ev)
		n = len(lb.buf)
	}
	b.SetBytes(int64(n))
}

// BenchmarkEncodePayload is the gzip cost of one 2,000-line step chunk.
func BenchmarkEncodePayload(b *testing.B) {
	s := testSite()
	var lb lineBuilder
	for i := range 2000 {
		appendEvidence(&lb, s, stepEvidence(i, i%3))
	}
	b.SetBytes(int64(len(lb.buf)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := encodePayload(lb.buf); err != nil {
			b.Fatal(err)
		}
	}
}
