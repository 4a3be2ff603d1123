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
	cpu0 := cpuTime()
	steps := 0
	for done := 0; done < b.N; done += n {
		at := minute(steps)
		for k := range ev {
			ev[k].At = at
		}
		out = e.Step(ev, nil, out[:0])
		steps++
	}
	if cpu := cpuTime() - cpu0; cpu > 0 {
		b.ReportMetric(float64(cpu.Nanoseconds())/float64(steps*n), "cpu-ns/sample")
	}
	b.ReportMetric(float64(steps*n)/b.Elapsed().Seconds(), "samples/s")
}
