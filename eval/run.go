package eval

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"
	"time"

	"risewatch/collector"
	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/sim"
	"risewatch/site"
)

// Options configure a simulated evaluation.
type Options struct {
	Rules  *rules.Ruleset // nil: built-in rules
	Engine fdd.Config
	// Progress, when set, is called with the fraction done after each
	// simulated day (from either run; calls are serialised).
	Progress func(done float64)
}

// Report is the result for one campus and its fault-free twin.
type Report struct {
	Site    string
	Days    int
	Faulted Result
	Twin    Result
	// Samples is the number of terminal-samples analysed (both runs).
	Samples int64
	Elapsed time.Duration
}

// RunScenario simulates sc and its fault-free twin through the engine and
// rules and scores both. The two runs share nothing and go in parallel.
func RunScenario(ctx context.Context, sc *sim.Scenario, opt Options) (*Report, error) {
	t0 := time.Now()
	truths, err := FromSim(sc.GroundTruth())
	if err != nil {
		return nil, err
	}
	var mu sync.Mutex
	var frac [2]float64
	progress := func(run int) func(float64) {
		if opt.Progress == nil {
			return nil
		}
		return func(f float64) {
			mu.Lock()
			defer mu.Unlock()
			frac[run] = f
			opt.Progress((frac[0] + frac[1]) / 2)
		}
	}
	type out struct {
		res  Result
		n    int64
		name string
		err  error
	}
	var runs [2]out
	var wg sync.WaitGroup
	for i, c := range []struct {
		sc     *sim.Scenario
		truths []Truth
	}{{sc, truths}, {sc.WithoutFaults(), nil}} {
		wg.Add(1)
		go func() {
			defer wg.Done()
			r := &runs[i]
			r.res, r.n, r.name, r.err = runOne(ctx, c.sc, c.truths, opt, progress(i))
		}()
	}
	wg.Wait()
	if err := errors.Join(runs[0].err, runs[1].err); err != nil {
		return nil, err
	}
	return &Report{Days: sc.Days, Site: runs[0].name, Faulted: runs[0].res, Twin: runs[1].res,
		Samples: runs[0].n + runs[1].n, Elapsed: time.Since(t0)}, nil
}

func runOne(ctx context.Context, sc *sim.Scenario, truths []Truth, opt Options, progress func(float64)) (Result, int64, string, error) {
	sm, err := sim.New(sc)
	if err != nil {
		return Result{}, 0, "", err
	}
	s := sm.Site("")
	eng, err := fdd.NewEngine(s, opt.Engine)
	if err != nil {
		return Result{}, 0, "", err
	}
	ev, err := rules.NewEvaluator(s, opt.Rules)
	if err != nil {
		return Result{}, 0, "", err
	}
	feed, err := NewFeeder(s)
	if err != nil {
		return Result{}, 0, "", err
	}
	scorer := NewScorer(s, truths, sc.StepDuration())
	var samples []collector.Sample
	var evid []fdd.Evidence
	var trs []rules.Transition
	var n int64
	total := sc.EndTime().Sub(sc.StartTime()).Hours()
	lastDay := -1
	err = sm.Run(ctx, func(st *sim.Step) error {
		samples = feed.Samples(st, samples[:0])
		evid = eng.StepView(samples)
		trs = ev.Step(evid, eng.Loops(), trs[:0])
		scorer.Observe(st.At, evid, eng.Loops(), trs)
		n += int64(len(samples))
		if progress != nil {
			if d := int(st.At.Sub(sc.StartTime()).Hours() / 24); d != lastDay {
				lastDay = d
				progress(st.At.Sub(sc.StartTime()).Hours() / total)
			}
		}
		return nil
	})
	if err != nil {
		return Result{}, n, s.Name, fmt.Errorf("simulate %s: %w", s.Name, err)
	}
	return scorer.Result(), n, s.Name, nil
}

// Feeder turns simulator steps into assembled samples, as the trend-file
// path would (without the CSV rounding).
type Feeder struct {
	termAHU  []int
	termLoop []int
}

// NewFeeder maps each terminal of s to its AHU and loop.
func NewFeeder(s *site.Site) (*Feeder, error) {
	f := &Feeder{termAHU: make([]int, len(s.Terminals)), termLoop: make([]int, len(s.Terminals))}
	ahu, loop := map[string]int{}, map[string]int{}
	for i, a := range s.AHUs {
		ahu[a.ID] = i
	}
	for i, l := range s.Loops {
		loop[l.ID] = i
	}
	for i, t := range s.Terminals {
		a, ok1 := ahu[t.AHU]
		l, ok2 := loop[t.Loop]
		if !ok1 || !ok2 {
			return nil, fmt.Errorf("terminal %s: AHU %q or loop %q not in site", t.ID, t.AHU, t.Loop)
		}
		f.termAHU[i], f.termLoop[i] = a, l
	}
	return f, nil
}

// Samples appends one sample per terminal of st to out.
func (f *Feeder) Samples(st *sim.Step, out []collector.Sample) []collector.Sample {
	for i := range st.Terminals {
		if i >= len(f.termAHU) {
			break
		}
		t := &st.Terminals[i]
		a := &st.AHUs[f.termAHU[i]]
		l := &st.Loops[f.termLoop[i]]
		s := collector.Sample{Terminal: i, At: st.At, AirflowM3s: t.AirflowM3s, AirflowSetM3s: t.AirflowSetM3s,
			DischargeC: t.DischargeC, SupplyC: a.SupplyC, ValveFrac: t.ValveCmd, HotWaterC: l.SupplyC,
			ZoneC: t.ZoneC, ZoneSetC: t.ZoneSetC, OutdoorC: st.OutdoorC, PlantOn: l.PlantOn, FanOn: a.FanOn, Occupied: a.Occupied}
		for _, c := range []struct {
			v    float64
			flag collector.Flags
		}{{s.AirflowM3s, collector.FlagAirflow}, {s.DischargeC, collector.FlagDischarge}, {s.SupplyC, collector.FlagSupply},
			{s.ValveFrac, collector.FlagValve}, {s.HotWaterC, collector.FlagHotWater}, {s.ZoneC, collector.FlagZone},
			{s.ZoneSetC, collector.FlagZoneSet}, {s.AirflowSetM3s, collector.FlagAirflowSet}, {s.OutdoorC, collector.FlagOutdoor}} {
			if math.IsNaN(c.v) || math.IsInf(c.v, 0) {
				s.Flags |= c.flag
			}
		}
		out = append(out, s)
	}
	return out
}
