package fdd

import (
	"runtime"
	"testing"
	"time"

	"risewatch/collector"
)

// BenchmarkEngineStep measures the evidence engine over pre-assembled
// samples: 200 terminals with mixed faults, 2 days pre-generated at 1-min
// steps, replayed. Reports ns and allocations per terminal-sample.
func BenchmarkEngineStep(b *testing.B) {
	const nTerm = 200
	const steps = 2 * 24 * 60
	faults := []fault{fNone, fNone, fNone, fLeak, fFouled, fStarved, fNone, fHunting, fOffset, fNone}
	s := testSite(b, nTerm, true)
	gens := make([]*gen, nTerm)
	for i := range gens {
		gens[i] = newGen(b, faults[i%len(faults)], uint64(i+1), t0.Add(12*time.Hour))
	}
	pre := make([][]collector.Sample, steps)
	for k := range pre {
		at := t0.Add(time.Duration(k) * time.Minute)
		pre[k] = make([]collector.Sample, nTerm)
		for i, g := range gens {
			pre[k][i] = g.sample(i, at, i)
		}
	}
	cfg := DefaultConfig()
	en, err := NewEngine(s, cfg)
	if err != nil {
		b.Fatal(err)
	}
	out := make([]Evidence, 0, nTerm)
	// Warm up one pass (learning, first model evaluations) outside the timer.
	for k := range pre {
		out = en.Step(pre[k], out[:0])
	}
	// CPU time of this thread as well as wall time: on a shared machine the
	// wall clock also counts time spent waiting for a core.
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := threadCPU()
	k := 0
	day := time.Duration(0)
	for i := 0; i < b.N; i++ {
		if k == steps {
			k = 0
			day += 48 * time.Hour
		}
		smp := pre[k]
		if day > 0 {
			for j := range smp {
				smp[j].At = smp[j].At.Add(48 * time.Hour)
			}
		}
		out = benchStep(en, smp, out[:0])
		k++
	}
	cpu1 := threadCPU()
	b.StopTimer()
	perSample := float64(b.Elapsed().Nanoseconds()) / float64(b.N) / nTerm
	if cpu0 >= 0 && cpu1 >= cpu0 {
		b.ReportMetric(float64(cpu1-cpu0)/float64(b.N)/nTerm, "cpu-ns/sample")
	}
	b.ReportMetric(perSample, "ns/sample")
	b.ReportMetric(1e3/perSample, "Msamples/s")
	evals := 0
	for i := range en.state {
		evals += en.state[i].evalSteps
	}
	b.ReportMetric(float64(evals)/float64(nTerm*(b.N+steps)), "modelevals/sample")
}

// benchStep is the timed call of BenchmarkEngineStep, apart so that an
// instruction-counting profiler can be told to count only inside it
// (valgrind --tool=callgrind --toggle-collect='risewatch/fdd.benchStep').
//
//go:noinline
func benchStep(en *Engine, smp []collector.Sample, out []Evidence) []Evidence {
	return en.Step(smp, out)
}
