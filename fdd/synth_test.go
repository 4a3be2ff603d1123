package fdd

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"risewatch/coilmodel"
	"risewatch/collector"
	"risewatch/site"
)

// Synthetic sample streams generated from coilmodel itself (the engine's own
// model), so these tests check the engine's logic — gates, steady state,
// statistics, isolation — not model accuracy. Scenario values (box size,
// valve Cv, branch pressure, schedules) are an invented example of common
// practice.

type fault int

const (
	fNone fault = iota
	fLeak
	fStuck
	fFouled
	fStarved
	fColdLoop
	fOffset
	fFailed
	fReversed
	fHunting
)

var faultKind = map[fault]Kind{
	fNone: KindNone, fLeak: KindLeakingValve, fStuck: KindStuckValve, fFouled: KindFouledCoil,
	fStarved: KindStarvedCoil, fColdLoop: KindColdLoop, fOffset: KindDATOffset, fFailed: KindDATFailed,
	fReversed: KindReversedValve, fHunting: KindHunting,
}

const (
	designHWC   = 80.0
	branchDP    = 30000.0 // Pa, ≈ 4.4 psi, common practice for a terminal branch
	minAirM3s   = 0.07    // ≈ 150 cfm
	heatAirM3s  = 0.15    // ≈ 320 cfm
	maxAirM3s   = 0.33    // ≈ 700 cfm, 8 in inlet
	ductGain    = 0.5
	valveCv     = 1.0
	leakFrac    = 0.03 // design-severity leak: 3 % of full-open flow [I]
	stuckPos    = 0.40
	foulUA      = 0.55
	starveDP    = 0.10 // branch pressure fraction at a starved box
	coldLoopHWC = 55.0
	offsetK     = 2.5
)

func testCoil(t testing.TB) coilmodel.Coil {
	t.Helper()
	c, err := coilmodel.Preset(8, 2, 10, false)
	if err != nil {
		t.Fatalf("preset coil: %v", err)
	}
	return c
}

// testSite builds a site of n terminals on one loop and one AHU.
func testSite(t testing.TB, n int, hwMeasured bool) *site.Site {
	t.Helper()
	s := &site.Site{Name: "Test Campus", ElevationM: 200}
	l := site.Loop{ID: "HW-1", DesignSupplyC: designHWC, DesignDeltaK: 11, BranchDPPa: branchDP,
		PlantEnabled: site.PointRef{Name: "HW-1.EN", Kind: site.PointTrendColumn}}
	if hwMeasured {
		l.SupplyTemp = site.PointRef{Name: "HW-1.HWS", Kind: site.PointTrendColumn}
	}
	s.Loops = []site.Loop{l}
	s.AHUs = []site.AHU{{ID: "AHU-1", DuctGainK: ductGain, FanStatus: site.PointRef{Name: "AHU-1.FAN", Kind: site.PointTrendColumn}}}
	c := testCoil(t)
	for i := 0; i < n; i++ {
		s.Terminals = append(s.Terminals, site.Terminal{
			ID: "VAV-" + string(rune('A'+i%26)) + string(rune('0'+i/26)), AHU: "AHU-1", Loop: "HW-1",
			InletIn: 8, Coil: c, Valve: coilmodel.Valve{Cv: valveCv, Characteristic: coilmodel.EqualPercentage, Rangeability: 50},
			MinAirflowM3s: minAirM3s, MaxAirflowM3s: maxAirM3s, HeatingAirflowM3s: heatAirM3s,
		})
	}
	return s
}

// gen produces one terminal's samples.
type gen struct {
	t       testing.TB
	f       fault
	k       *coilmodel.Calibrated
	coil    coilmodel.Coil
	valve   coilmodel.Valve
	rng     *rand.Rand
	rise    float64 // lagged rise state
	hwOff   float64 // HW temperature while the plant is off
	design  float64 // full-open flow
	flatDAT float64
	onset   time.Time
	foulUA  float64 // UA factor of a fouled coil (0: foulUA)
}

func newGen(t testing.TB, f fault, seed uint64, onset time.Time) *gen {
	g := &gen{t: t, f: f, coil: testCoil(t), rng: rand.New(rand.NewPCG(seed, 7)), onset: onset}
	g.valve = coilmodel.Valve{Cv: valveCv, Characteristic: coilmodel.EqualPercentage, Rangeability: 50}
	c := g.coil
	k, err := coilmodel.NewCalibrated(c)
	if err != nil {
		t.Fatalf("calibrated: %v", err)
	}
	g.k = k
	g.design = g.flow(1, branchDP)
	return g
}

func (g *gen) flow(u, dp float64) float64 {
	q, err := coilmodel.InstalledFlowM3s(g.valve, g.coil, u, dp, designHWC)
	if err != nil {
		g.t.Fatalf("installed flow: %v", err)
	}
	return q
}

// schedule: fan 06:00–20:00, plant 05:00–17:00 (fan-on plant-off evenings
// give the no-heat periods a sensor offset shows in).
func schedule(at time.Time) (fan, plant bool) {
	h := at.Hour()
	return h >= 6 && h < 20, h >= 5 && h < 17
}

// command is a staircase through the command range, repeating.
func command(at time.Time, phase int) float64 {
	steps := [...]struct {
		u   float64
		min int
	}{{0, 60}, {0.15, 45}, {0.35, 45}, {0.6, 45}, {1.0, 60}, {0.8, 45}, {0.25, 45}}
	total := 0
	for _, s := range steps {
		total += s.min
	}
	m := (at.Hour()*60 + at.Minute() + phase*37) % total
	for _, s := range steps {
		if m < s.min {
			return s.u
		}
		m -= s.min
	}
	return 0
}

func (g *gen) sample(i int, at time.Time, phase int) collector.Sample {
	fan, plant := schedule(at)
	active := !at.Before(g.onset)
	u := 0.0
	if plant {
		u = command(at, phase)
	}
	if g.f == fColdLoop && active && u > 0 {
		u = math.Min(1, 2*u) // the zone loops open the valves further to make up for cold water
	}
	if g.f == fHunting && active && u > 0 {
		u = math.Max(0.02, math.Min(1, u+0.25*math.Sin(2*math.Pi*float64(at.Minute())/8)))
	}
	v := minAirM3s
	if u > 0 {
		v = minAirM3s + (heatAirM3s-minAirM3s)*u
	} else if at.Hour() >= 13 {
		v = 0.2 // afternoon cooling airflow
	}
	v *= 1 + 0.01*g.rng.NormFloat64()
	sat := 13 + 0.5*math.Sin(float64(at.Unix())/7200) + 0.08*g.rng.NormFloat64()
	hw := designHWC
	if g.f == fColdLoop && active {
		hw = coldLoopHWC
	}
	if !plant {
		if g.hwOff == 0 {
			g.hwOff = hw
		}
		g.hwOff += (22 - g.hwOff) * 0.03
		hw = g.hwOff
	} else {
		g.hwOff = 0
	}
	hwMeas := hw + 0.15*g.rng.NormFloat64()
	pos := u
	dp := branchDP
	ua := 1.0
	if active {
		switch g.f {
		case fStuck:
			pos = stuckPos
		case fReversed:
			pos = 1 - u
		case fStarved:
			dp *= starveDP
		case fFouled:
			ua = foulUA
			if g.foulUA > 0 {
				ua = g.foulUA
			}
		}
	}
	mw := g.flow(pos, dp)
	if g.f == fLeak && active && pos <= 0.001 {
		mw = leakFrac * g.design
	}
	if !plant && hw < 30 {
		mw = 0
	}
	target := 0.0
	if fan {
		target = g.k.ExpectedRiseWith(coilmodel.Operating{AirflowM3s: v, EnteringAirC: sat + ductGain, WaterFlowM3s: mw, EnteringWaterC: hw}, ua*g.k.UAMultiplier(), 1)
	}
	g.rise += (target - g.rise) * (1 - math.Exp(-1.0/2))
	dat := sat + ductGain + g.rise + 0.12*g.rng.NormFloat64()
	if g.f == fOffset && active {
		dat += offsetK
	}
	if g.f == fFailed && active {
		if g.flatDAT == 0 {
			g.flatDAT = math.Round(dat*10) / 10
		}
		dat = g.flatDAT
	}
	if !fan {
		v = 0
	}
	return collector.Sample{Terminal: i, At: at, AirflowM3s: v, AirflowSetM3s: v, DischargeC: dat, SupplyC: sat,
		ValveFrac: u, HotWaterC: hwMeas, PlantOn: plant, FanOn: fan, Occupied: fan,
		Flags: collector.FlagZone | collector.FlagZoneSet} // the generator has no zone
}

// runResult: per terminal, how often each Kind was Best (fan on), when the
// faulted kind was first Best, and the last plant-on evidence.
type runResult struct {
	hist     map[int]*[kindCount]int
	firstHit map[int]time.Time
	evidence map[int]Evidence
	loops    []LoopEvidence
	maxLoop  float64
}

// top returns the most frequent non-None Best of terminal i and its count.
func (r runResult) top(i int) (Kind, int) {
	h := r.hist[i]
	best, n := KindNone, 0
	if h == nil {
		return best, 0
	}
	for k := KindLeakingValve; k < kindCount; k++ {
		if h[k] > n {
			best, n = k, h[k]
		}
	}
	return best, n
}

func runSynthetic(t testing.TB, en *Engine, gens []*gen, start time.Time, days float64, countFrom time.Time) runResult {
	t.Helper()
	res := runResult{hist: map[int]*[kindCount]int{}, firstHit: map[int]time.Time{}, evidence: map[int]Evidence{}}
	samples := make([]collector.Sample, len(gens))
	var out []Evidence
	n := int(days * 24 * 60)
	for s := 0; s < n; s++ {
		at := start.Add(time.Duration(s) * time.Minute)
		for i, g := range gens {
			samples[i] = g.sample(i, at, i)
		}
		out = en.Step(samples, out[:0])
		for _, e := range out {
			for k := range e.Scores {
				if math.IsNaN(e.Scores[k]) {
					t.Fatalf("terminal %d at %v: NaN score for %v", e.Terminal, at, Kind(k))
				}
			}
		}
		if at.Before(countFrom) {
			continue
		}
		for _, e := range out {
			if !e.FanOn {
				continue
			}
			h := res.hist[e.Terminal]
			if h == nil {
				h = new([kindCount]int)
				res.hist[e.Terminal] = h
			}
			h[e.Best]++
			want := faultKind[gens[e.Terminal].f]
			if want != KindNone && e.Best == want {
				if _, ok := res.firstHit[e.Terminal]; !ok {
					res.firstHit[e.Terminal] = at
				}
			}
			if e.PlantOn {
				res.evidence[e.Terminal] = e
			}
		}
		for _, l := range en.Loops() {
			res.maxLoop = math.Max(res.maxLoop, l.Score)
		}
		res.loops = append(res.loops[:0], en.Loops()...)
	}
	return res
}
