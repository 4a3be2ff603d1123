package rules

import (
	"fmt"
	"math"
	"testing"
	"time"

	"risewatch/fdd"
	"risewatch/site"
)

// testSite is a small invented campus: nLoops loops, each with per terminals
// on one AHU.
func testSite(nLoops, per int) *site.Site {
	s := &site.Site{Name: "test-campus", Location: time.UTC,
		Energy: site.EnergyPrices{HeatPerKWh: 0.05, CoolingPerKWh: 0.04, Currency: "USD"}}
	for l := 0; l < nLoops; l++ {
		s.Loops = append(s.Loops, site.Loop{ID: fmt.Sprintf("HW-%d", l+1), DesignSupplyC: 60})
	}
	s.AHUs = append(s.AHUs, site.AHU{ID: "AHU-1"})
	for l := 0; l < nLoops; l++ {
		for i := 0; i < per; i++ {
			s.Terminals = append(s.Terminals, site.Terminal{
				ID: fmt.Sprintf("VAV-%d-%02d", l+1, i+1), AHU: "AHU-1", Loop: s.Loops[l].ID,
				Location: "ceiling above room " + fmt.Sprint(100*(l+1)+i),
			})
		}
	}
	return s
}

// quiet is healthy evidence for terminal t at time at: fan and plant on,
// occupied, steady, valve closed with no rise; every other value NaN.
func quiet(t int, at time.Time) fdd.Evidence {
	nan := math.NaN()
	e := fdd.Evidence{Terminal: t, At: at, Usable: true, Steady: true, PlantOn: true, FanOn: true, Occupied: true}
	for _, p := range []*float64{
		&e.AirflowM3s, &e.DATSetC, &e.HotWaterC, &e.ExpectedRiseK, &e.SigmaK, &e.ResidualK, &e.PerfIndex,
		&e.UAFactor, &e.UAFactorSigma, &e.FlowFactor, &e.FlowFactorSigma, &e.ShortfallHighK, &e.ShortfallLowK,
		&e.LeakRiseK, &e.LeakFlowFrac, &e.OffsetK, &e.RiseValveCorr, &e.RiseSpanK, &e.ValveSpan,
		&e.CUSUMLowK, &e.EWMAResid, &e.WastedHeatW, &e.AddedCoolingW, &e.ShortfallW,
		&e.DATMinusSATK, &e.LeakSigmaK, &e.ExpectedSpanK, &e.DesignPerfIndex, &e.ZScore, &e.EWMALimit, &e.LeakFlowM3s,
	} {
		*p = nan
	}
	e.AirflowM3s = 0.14
	e.SupplyC, e.DischargeC, e.HotWaterC = 13, 13, 60
	e.ObservedRiseK, e.DATMinusSATK = 0, 0
	e.ValveFrac = 0
	return e
}

// clock steps minutes from a fixed start.
var t0 = time.Date(2025, 1, 13, 8, 0, 0, 0, time.UTC)

func minute(i int) time.Time { return t0.Add(time.Duration(i) * time.Minute) }

func mustEval(t testing.TB, s *site.Site, files ...*File) *Evaluator {
	t.Helper()
	rs, err := Build(files...)
	if err != nil {
		t.Fatal(err)
	}
	e, err := NewEvaluator(s, rs)
	if err != nil {
		t.Fatal(err)
	}
	return e
}

func mustParse(t testing.TB, y string) *File {
	t.Helper()
	f, err := Parse([]byte(y), "site-rules.yaml")
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// run steps the evaluator over minutes [from, to) with evidence built by mk,
// returning every transition.
func run(e *Evaluator, from, to int, mk func(i int) []fdd.Evidence) []Transition {
	var out []Transition
	for i := from; i < to; i++ {
		out = e.Step(mk(i), nil, out)
	}
	return out
}

func firstOf(trs []Transition, id string, to State) (Transition, bool) {
	for _, tr := range trs {
		if tr.FaultID == id && tr.To == to {
			return tr, true
		}
	}
	return Transition{}, false
}
