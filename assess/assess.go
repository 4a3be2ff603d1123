package assess

import (
	"context"
	"math"
	"sort"

	"risewatch/site"
)

// Status of a terminal at the candidate conditions.
const (
	StatusMeets      = "meets"
	StatusMeetsLowDT = "meets-low-dt" // meets, but needs more water than the loop's ΔT plan gives it
	StatusShort      = "short"
	StatusNoData     = "not-assessed"
)

// Result is one terminal at the candidate conditions.
type Result struct {
	Terminal  string
	Loop      string
	Building  string
	LoadBasis string
	LoadUncW  float64
	DeltaK    float64 // the loop's planned ΔT
	// PlanFlowM3s is the water flow the planned ΔT gives the load:
	// load / (ρ·cp·ΔT) at the supply temperature.
	PlanFlowM3s float64
	Performance
	Status string
	// MinSupplyC is the lowest supply temperature at which the existing coil
	// carries its load with the valve fully open; NaN when it does not even
	// at 110 °C (230 °F).
	MinSupplyC float64
	Remedies   []Remedy
	Error      string `json:",omitempty"`
}

// LoopSummary is one loop's readiness.
type LoopSummary struct {
	Loop      string
	Terminals int // on the loop
	Assessed  int // with a load and a coil model
	// Pass counts the assessed terminals that meet their load at each
	// Options.SummaryC supply temperature.
	Pass []PassCount
	// MinSupplyC is the lowest supply temperature at which every assessed
	// terminal meets its load (the largest terminal minimum); NaN if some
	// terminal never does. Limiting names the terminal that sets it.
	MinSupplyC float64
	Limiting   string
	NeverMet   []string // terminals that do not meet the load at any supply temperature searched
	Curve      []PassCount
}

// PassCount is the number of terminals meeting load at one supply temperature.
type PassCount struct {
	SupplyC float64
	Pass    int
	Total   int
}

// Assessment is the whole site at one candidate condition.
type Assessment struct {
	Site       string
	Conditions Conditions
	Options    Options  `json:"-"`
	Results    []Result // worst shortfall first; terminals not assessed last
	Loops      []LoopSummary
}

// Assess rates every unit at c and builds the loop summaries. It stops
// early with ctx's error.
func Assess(ctx context.Context, s *site.Site, units []*Unit, c Conditions, opt Options) (*Assessment, error) {
	opt = opt.withDefaults()
	a := &Assessment{Site: s.Name, Conditions: c, Options: opt}
	for _, u := range units {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		a.Results = append(a.Results, u.Evaluate(c, opt))
	}
	sort.SliceStable(a.Results, func(i, j int) bool {
		ri, rj := &a.Results[i], &a.Results[j]
		if (ri.Error == "") != (rj.Error == "") {
			return ri.Error == ""
		}
		if ri.MarginFrac != rj.MarginFrac {
			return ri.MarginFrac < rj.MarginFrac
		}
		return ri.Terminal < rj.Terminal
	})
	for _, lp := range s.Loops {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		a.Loops = append(a.Loops, loopSummary(lp.ID, units, c, opt, a.Results))
	}
	return a, nil
}

// Evaluate rates the unit at c: capacity with the full-open flow, the flow
// needed, the minimum supply temperature and, when it falls short, the
// options.
func (u *Unit) Evaluate(c Conditions, opt Options) Result {
	opt = opt.withDefaults()
	supplyC, deltaK, dp := u.conditionsFor(c)
	res := Result{Terminal: u.ID, Loop: u.Loop, Building: u.Building, LoadBasis: u.LoadBasis, LoadUncW: u.LoadUncW,
		DeltaK: deltaK, Status: StatusNoData, MinSupplyC: math.NaN()}
	res.SupplyC, res.BranchDPPa, res.LoadW = supplyC, dp, u.LoadW
	if u.Err != nil {
		res.Error = u.Err.Error()
		return res
	}
	cc := u.unitCase()
	p, err := cc.perform(supplyC, dp, u.LoadW)
	res.Performance = p
	if err != nil {
		res.Error = "terminal " + u.ID + ": " + err.Error()
		return res
	}
	res.PlanFlowM3s = planFlow(u.LoadW, supplyC, deltaK)
	switch {
	case !p.Met:
		res.Status = StatusShort
	case p.NeedFlowM3s > res.PlanFlowM3s*1.0001:
		res.Status = StatusMeetsLowDT
	default:
		res.Status = StatusMeets
	}
	if m, ok := cc.minSupply(dp, u.LoadW); ok {
		res.MinSupplyC = m
	}
	if !p.Met && !opt.NoRemedies {
		res.Remedies = u.remedies(supplyC, deltaK, dp, opt)
	}
	return res
}

// planFlow is load / (ρ·cp·ΔT), water properties at the supply temperature.
func planFlow(loadW, supplyC, deltaK float64) float64 {
	if deltaK <= 0 {
		return math.NaN()
	}
	return loadW / (waterRhoCp(supplyC-deltaK/2) * deltaK)
}

// MeetsAt reports whether the unit's existing coil carries its load at
// supply temperature supplyC with the branch pressure of c.
func (u *Unit) MeetsAt(supplyC float64, c Conditions) bool {
	if u.Err != nil {
		return false
	}
	_, _, dp := u.conditionsFor(c)
	return u.unitCase().meets(supplyC, dp, u.LoadW)
}

func loopSummary(id string, units []*Unit, c Conditions, opt Options, results []Result) LoopSummary {
	ls := LoopSummary{Loop: id, MinSupplyC: math.Inf(-1)}
	var on []*Unit
	for _, u := range units {
		if u.Loop != id {
			continue
		}
		ls.Terminals++
		if u.Err == nil {
			ls.Assessed++
			on = append(on, u)
		}
	}
	count := func(t float64) PassCount {
		pc := PassCount{SupplyC: t, Total: len(on)}
		for _, u := range on {
			if u.MeetsAt(t, c) {
				pc.Pass++
			}
		}
		return pc
	}
	for _, t := range opt.SummaryC {
		ls.Pass = append(ls.Pass, count(t))
	}
	for _, t := range opt.CurveC {
		ls.Curve = append(ls.Curve, count(t))
	}
	for _, r := range results {
		if r.Loop != id || r.Error != "" {
			continue
		}
		if math.IsNaN(r.MinSupplyC) {
			ls.NeverMet = append(ls.NeverMet, r.Terminal)
			continue
		}
		if r.MinSupplyC > ls.MinSupplyC {
			ls.MinSupplyC, ls.Limiting = r.MinSupplyC, r.Terminal
		}
	}
	sort.Strings(ls.NeverMet)
	if len(ls.NeverMet) > 0 || len(on) == 0 {
		ls.MinSupplyC = math.NaN()
		if len(ls.NeverMet) > 0 {
			ls.Limiting = ls.NeverMet[0]
		}
	}
	return ls
}
