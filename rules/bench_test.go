package rules

import (
	"testing"

	"risewatch/fdd"
)

// BenchmarkStep measures the rules layer alone over healthy evidence with
// the full built-in rule set; ns/op is per terminal-sample.
func BenchmarkStep(b *testing.B) {
	const n = 1000
	e := mustEval(b, testSite(10, n/10))
	ev := make([]fdd.Evidence, n)
	for k := range ev {
		ev[k] = quiet(k, minute(0))
		ev[k].LeakRiseK, ev[k].LeakSigmaK, ev[k].UAFactor, ev[k].FlowFactor = 0.1, 0.3, 1, 1
		ev[k].ValveSpan, ev[k].RiseSpanK, ev[k].ExpectedSpanK, ev[k].RiseValveCorr = 0.6, 8, 9, 0.9
	}
	out := make([]Transition, 0, 16)
	b.ReportAllocs()
	b.ResetTimer()
	steps := 0
	for done := 0; done < b.N; done += n {
		at := minute(steps)
		for k := range ev {
			ev[k].At = at
		}
		out = e.Step(ev, nil, out[:0])
		steps++
	}
	b.ReportMetric(float64(steps*n)/b.Elapsed().Seconds(), "samples/s")
}
