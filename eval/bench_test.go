package eval

import (
	"context"
	"runtime"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/sim"
)

// BenchmarkAnalyze runs pre-assembled samples (one simulated day of the
// demo campus, produced before the timer starts) through the evidence
// engine and the built-in rules, single-threaded (the goroutine is locked
// to its thread); ns/op is per terminal-sample of the whole path. Metrics:
//
//   - thread-cpu-ns/sample: the thread's CPU time over the timed loop per
//     sample (on a shared machine steadier than wall time, which also
//     counts waiting for a core); cpu-ns/sample is the process's (adds the
//     runtime's own threads);
//   - rules-ns/sample, rules-cpu-ns/sample: the rules layer's share, wall
//     and thread CPU time read around one rules step (every terminal of the
//     campus) in rulesEvery, less the cost of reading the clocks (measured
//     after the loop), per sample of the steps read (reading the clocks
//     around every step would cost more than a tenth of what is measured);
//     the rules read evidence the engine has just written, as in the daemon;
//   - Msamples/s: terminal-samples per second of wall time.
//
// When the day is replayed its samples' times move on by a day, each step's
// samples just before that step (as an assembler stamps a step's samples
// just before the engine reads them), so time keeps moving forward.
func BenchmarkAnalyze(b *testing.B) {
	sc, err := sim.DemoScenario()
	if err != nil {
		b.Fatal(err)
	}
	if sc, err = sc.With(1, 0); err != nil {
		b.Fatal(err)
	}
	sm, err := sim.New(sc)
	if err != nil {
		b.Fatal(err)
	}
	s := sm.Site("")
	feed, err := NewFeeder(s)
	if err != nil {
		b.Fatal(err)
	}
	var steps [][]collector.Sample
	if err := sm.Run(context.Background(), func(st *sim.Step) error {
		steps = append(steps, feed.Samples(st, nil))
		return nil
	}); err != nil {
		b.Fatal(err)
	}
	eng, err := fdd.NewEngine(s, fdd.Config{})
	if err != nil {
		b.Fatal(err)
	}
	ev, err := rules.NewEvaluator(s, nil)
	if err != nil {
		b.Fatal(err)
	}
	var evid []fdd.Evidence
	var trs []rules.Transition
	n := len(steps[0])
	// rulesEvery is the sampling period of the rules-layer clocks, in steps.
	const rulesEvery = 16
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	b.ReportAllocs()
	b.ResetTimer()
	cpu0, th0 := cpuTime(), threadCPUTime()
	done, i := 0, 0
	var rulesCPU, rulesWall time.Duration
	var rulesSampled int
	for done < b.N {
		batch := steps[i%len(steps)]
		if i >= len(steps) {
			// One time per step, stamped on each sample as an assembler
			// does (a time.Time Add per sample costs more than a tenth
			// of the whole path; the feeder gives a step's samples one
			// time).
			at := batch[0].At.Add(24 * time.Hour)
			for k := range batch {
				batch[k].At = at
			}
		}
		evid = eng.StepView(batch)
		if i%rulesEvery == 0 {
			w0, c0 := time.Now(), threadCPUTime()
			trs = ev.Step(evid, eng.Loops(), trs[:0])
			rulesCPU += threadCPUTime() - c0
			rulesWall += time.Since(w0)
			rulesSampled += len(evid)
		} else {
			trs = ev.Step(evid, eng.Loops(), trs[:0])
		}
		done += n
		i++
	}
	th, cpu := threadCPUTime()-th0, cpuTime()-cpu0
	b.StopTimer()
	// Take off what reading the two clocks costs in a sampled interval.
	ow, oc := clockOverhead(threadCPUTime)
	if sampled := time.Duration(rulesSampled / n); sampled > 0 {
		rulesWall = max(0, rulesWall-sampled*ow)
		rulesCPU = max(0, rulesCPU-sampled*oc)
	}
	if th > 0 {
		b.ReportMetric(float64(th.Nanoseconds())/float64(done), "thread-cpu-ns/sample")
	}
	if cpu > 0 {
		b.ReportMetric(float64(cpu.Nanoseconds())/float64(done), "cpu-ns/sample")
	}
	if rulesSampled > 0 {
		if rulesCPU > 0 {
			b.ReportMetric(float64(rulesCPU.Nanoseconds())/float64(rulesSampled), "rules-cpu-ns/sample")
		}
		b.ReportMetric(float64(rulesWall.Nanoseconds())/float64(rulesSampled), "rules-ns/sample")
	}
	b.ReportMetric(float64(done)/b.Elapsed().Seconds()/1e6, "Msamples/s")
}

// clockOverhead is the mean wall and thread-CPU time that the clock reads
// around a sampled interval add to it: the interval between back-to-back
// reads of both clocks.
func clockOverhead(thread func() time.Duration) (wall, cpu time.Duration) {
	const reps = 256
	for range reps {
		w0, c0 := time.Now(), thread()
		cpu += thread() - c0
		wall += time.Since(w0)
	}
	return wall / reps, cpu / reps
}
