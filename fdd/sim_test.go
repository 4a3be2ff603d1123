package fdd

import (
	"context"
	"fmt"
	"os"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/sim"
	"risewatch/site"
)

// campusDays is the demo-campus length of the acceptance run: the last
// injected fault (the HW-1 cold loop, 480–552 h) lies inside 24 days.
const campusDays = 24

// campusRun is what one simulated campus run produced.
type campusRun struct {
	ids     []string
	loopOf  []string
	steps   []time.Time     // step times (index k)
	best    [][]Kind        // [terminal][step] Best, KindNone when the fan is off
	fanOn   [][]bool        // [terminal][step]
	base    []Baseline      // at the end
	elapsed time.Duration   // engine time only
	samples int             // terminal-samples through the engine
	loops   map[string]bool // loop IDs
}

// runCampus simulates sc and feeds every step through a fresh engine.
// It may run on its own goroutine, so it reports errors instead of failing.
func runCampus(t *testing.T, sc *sim.Scenario) (*campusRun, error) {
	sm, err := sim.New(sc)
	if err != nil {
		return nil, err
	}
	s := sm.Site(t.TempDir())
	en, err := NewEngine(s, DefaultConfig())
	if err != nil {
		return nil, err
	}
	for i, e := range en.TerminalErrors() {
		if e != nil {
			t.Errorf("terminal %s: %v", s.Terminals[i].ID, e)
		}
	}
	n := len(s.Terminals)
	r := &campusRun{ids: make([]string, n), loopOf: make([]string, n), best: make([][]Kind, n), fanOn: make([][]bool, n), loops: map[string]bool{}}
	for i := range s.Terminals {
		r.ids[i], r.loopOf[i] = s.Terminals[i].ID, s.Terminals[i].Loop
	}
	for _, l := range s.Loops {
		r.loops[l.ID] = true
	}
	samples := make([]collector.Sample, n)
	var out []Evidence
	err = sm.Run(context.Background(), func(st *sim.Step) error {
		simSamples(s, st, samples)
		t0 := time.Now()
		out = en.Step(samples, out[:0])
		r.elapsed += time.Since(t0)
		r.samples += len(out)
		r.steps = append(r.steps, st.At)
		for _, e := range out {
			r.best[e.Terminal] = append(r.best[e.Terminal], e.Best)
			r.fanOn[e.Terminal] = append(r.fanOn[e.Terminal], e.FanOn)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	r.base = en.Baselines()
	return r, nil
}

// histogram counts Best kinds of terminal i over [from, to) with the fan on.
func (r *campusRun) histogram(i int, from, to time.Time, h *[kindCount]int) {
	for k, at := range r.steps {
		if at.Before(from) || !at.Before(to) || !r.fanOn[i][k] {
			continue
		}
		h[r.best[i][k]]++
	}
}

// top is the most frequent kind other than KindNone in h.
func top(h *[kindCount]int) (Kind, int) {
	best, n := KindNone, 0
	for k := KindLeakingValve; k < kindCount; k++ {
		if h[k] > n {
			best, n = k, h[k]
		}
	}
	return best, n
}

func fmtHist(h *[kindCount]int) string {
	var b strings.Builder
	for k := KindLeakingValve; k < kindCount; k++ {
		if h[k] > 0 {
			fmt.Fprintf(&b, " %s:%d", k, h[k])
		}
	}
	return b.String()
}

// TestDemoCampusAcceptance runs the demo campus of package sim (its own,
// finer coil model, realistic sensor bias and noise) and its fault-free twin
// through the engine. Pass/fail:
//
//   - every injected fault's most frequent Best (other than none) while it is
//     active is the injected kind (a loop fault: over the loop's terminals);
//   - the fault-free twin gives no Best other than data-quality, ever.
//
// The demo scenario and its faults are the sim package's invented campus;
// the expected kinds are its ground truth. RISEWATCH_SIM_DAYS overrides the
// length (faults starting later than the run are then not checked).
func TestDemoCampusAcceptance(t *testing.T) {
	if testing.Short() {
		t.Skip("demo-campus acceptance run skipped in -short mode")
	}
	days := campusDays
	if d, err := strconv.Atoi(os.Getenv("RISEWATCH_SIM_DAYS")); err == nil && d > 0 {
		days = d
	}
	sc, err := sim.DemoScenario()
	if err != nil {
		t.Fatal(err)
	}
	if sc, err = sc.With(days, 1); err != nil {
		t.Fatal(err)
	}
	var faulted, twin *campusRun
	var errF, errT error
	var wg sync.WaitGroup
	wg.Add(2)
	go func() { defer wg.Done(); faulted, errF = runCampus(t, sc) }()
	go func() { defer wg.Done(); twin, errT = runCampus(t, sc.WithoutFaults()) }()
	wg.Wait()
	if errF != nil || errT != nil {
		t.Fatalf("campus run: %v; fault-free twin: %v", errF, errT)
	}

	// Isolation per injected fault.
	faultedTerm := map[string]bool{}
	passed, total := 0, 0
	for _, f := range sc.GroundTruth() {
		var h [kindCount]int
		for i, id := range faulted.ids {
			if id == f.Entity || (faulted.loops[f.Entity] && faulted.loopOf[i] == f.Entity) {
				faulted.histogram(i, f.Start, f.End, &h)
			}
		}
		if !faulted.loops[f.Entity] {
			faultedTerm[f.Entity] = true
		}
		want, ok := ParseKind(f.Kind)
		if !ok {
			t.Errorf("%s: ground-truth kind %q is not an fdd kind", f.Entity, f.Kind)
			continue
		}
		got, n := top(&h)
		total++
		verdict := "ok"
		if got == want {
			passed++
		} else {
			verdict = "WRONG"
			t.Errorf("%s %s (from %s): most frequent Best %v (%d steps), want %v;%s", f.Entity, f.Kind,
				f.Start.Sub(sc.StartTime()), got, n, want, fmtHist(&h))
		}
		t.Logf("%-6s %-10s %-15s from %5s  top %-15s n=%5d %s", verdict, f.Entity, f.Kind, f.Start.Sub(sc.StartTime()), got, n, fmtHist(&h))
	}
	t.Logf("isolation: %d of %d injected faults have the injected kind as most frequent Best", passed, total)

	// False alarms on the twin: any Best other than data-quality.
	falseSteps := 0
	for i, id := range twin.ids {
		var h [kindCount]int
		twin.histogram(i, sc.StartTime(), sc.EndTime(), &h)
		n := 0
		for k := KindLeakingValve; k < kindCount; k++ {
			if k != KindDataQuality {
				n += h[k]
			}
		}
		if n > 0 {
			falseSteps += n
			t.Errorf("fault-free twin %s: %d steps with a fault Best:%s", id, n, fmtHist(&h))
		}
	}
	// Fault-free terminals of the faulted run, outside loop-fault windows, for the record.
	otherSteps := 0
	for i, id := range faulted.ids {
		if faultedTerm[id] {
			continue
		}
		var h [kindCount]int
		faulted.histogram(i, sc.StartTime(), sc.EndTime(), &h)
		for _, f := range sc.GroundTruth() {
			if f.Entity == faulted.loopOf[i] {
				var in [kindCount]int
				faulted.histogram(i, f.Start, f.End, &in)
				for k := range h {
					h[k] -= in[k]
				}
			}
		}
		n := 0
		for k := KindLeakingValve; k < kindCount; k++ {
			if k != KindDataQuality {
				n += h[k]
			}
		}
		if n > 0 {
			otherSteps += n
			t.Logf("faulted run, fault-free %s outside loop faults: %d steps:%s", id, n, fmtHist(&h))
		}
	}
	t.Logf("false-alarm steps: twin %d, fault-free terminals of the faulted run %d", falseSteps, otherSteps)
	ns := float64(faulted.elapsed.Nanoseconds()+twin.elapsed.Nanoseconds()) / float64(faulted.samples+twin.samples)
	t.Logf("engine %.0f ns/terminal-sample over %d terminal-samples (incl. learning and start-up)", ns, faulted.samples+twin.samples)
	for i, b := range faulted.base {
		if b.Rejected != "" || b.Source != "learned" {
			t.Logf("baseline %s: %s UA %.2f flow %.2f %s", faulted.ids[i], b.Source, b.UAFactor, b.FlowFactor, b.Rejected)
		}
	}
}

// simSamples fills samples (one per terminal of s) from a simulator step:
// each terminal's own points with its AHU's and loop's.
func simSamples(s *site.Site, st *sim.Step, samples []collector.Sample) {
	for i := range st.Terminals {
		ts := &st.Terminals[i]
		tm := &s.Terminals[i]
		a := st.AHUs[s.AHUIndex[tm.AHU]]
		l := st.Loops[s.LoopIndex[tm.Loop]]
		samples[i] = collector.Sample{Terminal: i, At: st.At, AirflowM3s: ts.AirflowM3s, AirflowSetM3s: ts.AirflowSetM3s,
			DischargeC: ts.DischargeC, SupplyC: a.SupplyC, ValveFrac: ts.ValveCmd, HotWaterC: l.SupplyC,
			ZoneC: ts.ZoneC, ZoneSetC: ts.ZoneSetC, PlantOn: l.PlantOn, FanOn: a.FanOn, Occupied: a.Occupied}
	}
}
