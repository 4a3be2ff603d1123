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
// engine and the built-in rules; ns/op is per terminal-sample. The
// rules-ns/sample and rules-cpu-ns/sample metrics are the share of the
// rules layer (wall time and the thread's CPU time read around each rules
// step, a step being every terminal of the campus; the goroutine is locked
// to its thread): its evidence is in cache there, as in the daemon, where
// the engine has just written it.
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
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := cpuTime()
	done, i := 0, 0
	var rulesCPU, rulesWall time.Duration
	for done < b.N {
		// Replay the day with a shifted clock so time keeps moving forward
		// (Add, not AddDate: a calendar computation per sample would cost
		// about a third as much as the engine step being measured).
		batch := steps[i%len(steps)]
		if i > 0 && i%len(steps) == 0 {
			for _, st := range steps {
				for k := range st {
					st[k].At = st[k].At.Add(24 * time.Hour)
				}
			}
		}
		evid = eng.Step(batch, evid[:0])
		w0, c0 := time.Now(), threadCPUTime()
		trs = ev.Step(evid, eng.Loops(), trs[:0])
		rulesCPU += threadCPUTime() - c0
		rulesWall += time.Since(w0)
		done += n
		i++
	}
	if cpu := cpuTime() - cpu0; cpu > 0 {
		b.ReportMetric(float64(cpu.Nanoseconds())/float64(done), "cpu-ns/sample")
		b.ReportMetric(float64(rulesCPU.Nanoseconds())/float64(done), "rules-cpu-ns/sample")
	}
	b.ReportMetric(float64(rulesWall.Nanoseconds())/float64(done), "rules-ns/sample")
	b.ReportMetric(float64(done)/b.Elapsed().Seconds(), "samples/s")
}
