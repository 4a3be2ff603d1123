package assess

import (
	"testing"

	"risewatch/units"
)

// BenchmarkEvaluate is the per-terminal assessment at one supply
// temperature: full-open flow, capacity, needed flow, minimum supply.
func BenchmarkEvaluate(b *testing.B) {
	s := oneBox(b, 1, 10, false, units.BtuhToW(25000))
	u := Prepare(s, nil, Options{})[0]
	c := Conditions{SupplyC: units.FToC(120)}
	opt := Options{NoRemedies: true}
	b.ReportAllocs()
	for b.Loop() {
		_ = u.Evaluate(c, opt)
	}
}

// BenchmarkEvaluateWithOptions adds the six options for a short coil.
func BenchmarkEvaluateWithOptions(b *testing.B) {
	s := oneBox(b, 1, 10, false, units.BtuhToW(25000))
	u := Prepare(s, nil, Options{})[0]
	c := Conditions{SupplyC: units.FToC(120)}
	b.ReportAllocs()
	for b.Loop() {
		_ = u.Evaluate(c, Options{})
	}
}
