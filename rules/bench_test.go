package rules

import (
	"testing"

	"risewatch/fdd"
)

// BenchmarkStep measures the rules layer alone over healthy evidence with
// the full built-in rule set; ns/op is per terminal-sample.
func BenchmarkStep(b *testing.B) { benchStep(b, 0) }

// BenchmarkStepFaulted is BenchmarkStep with one terminal in twenty
// leaking (both leaking-valve rules open, then held open): the cost of
// the per-rule path for busy trackers.
func BenchmarkStepFaulted(b *testing.B) { benchStep(b, 20) }

func benchStep(b *testing.B, leakEvery int) {
	const n = 1000
	e := mustEval(b, testSite(10, n/10))
	ev := make([]fdd.Evidence, n)
	for k := range ev {
		ev[k] = quiet(k, minute(0))
		ev[k].LeakRiseK, ev[k].LeakSigmaK, ev[k].UAFactor, ev[k].FlowFactor = 0.1, 0.3, 1, 1
		ev[k].ValveSpan, ev[k].RiseSpanK, ev[k].ExpectedSpanK, ev[k].RiseValveCorr = 0.6, 8, 9, 0.9
		if leakEvery > 0 && k%leakEvery == 0 {
			ev[k].ClosedMinutes, ev[k].DATMinusSATK, ev[k].DischargeC = 60, 4, ev[k].SupplyC+4
			ev[k].LeakRiseK, ev[k].Scores[fdd.KindLeakingValve] = 4, 0.9
		}
	}
	out := make([]Transition, 0, 16)
	// Open the faults before timing (persistence 30 min).
	steps := 0
	for ; steps < 40; steps++ {
		for k := range ev {
			ev[k].At = minute(steps)
		}
		out = e.Step(ev, nil, out[:0])
	}
	if leakEvery > 0 && len(e.Open()) < n/leakEvery {
		b.Fatalf("%d faults open, want %d", len(e.Open()), n/leakEvery)
	}
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := cpuTime()
	done := 0
	for ; done < b.N; done += n {
		at := minute(steps)
		for k := range ev {
			ev[k].At = at
		}
		out = e.Step(ev, nil, out[:0])
		steps++
	}
	if cpu := cpuTime() - cpu0; cpu > 0 {
		b.ReportMetric(float64(cpu.Nanoseconds())/float64(done), "cpu-ns/sample")
	}
	b.ReportMetric(float64(done)/b.Elapsed().Seconds(), "samples/s")
}
