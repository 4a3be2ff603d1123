// Package sim simulates a campus of VAV terminals with hot-water reheat, its
// air handlers and hot-water plants, with faults injected from a list in
// the scenario. It is the detector's test bench and demo data, so it is
// deliberately finer than, and independent of, the detector's lumped coil
// model (package coilmodel): each coil is solved segment by segment along
// every water circuit and row, with its own air- and water-side
// correlations and the water split over circuits by their hydraulic
// resistance. A second set of inputs for the same segment march
// (physicsRateInputs: the detector's correlations, coded here and evaluated
// per segment) exists only to cross-check the two solution methods; the
// simulation itself always runs on the simulator's own physics.
//
// The simulator is deterministic: a scenario and its seed give the same
// output bit for bit. Each entity draws from its own random stream, so the
// fault-free twin of a scenario sees the same weather and sensor noise.
package sim

import (
	"context"
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"time"
)

// Segments per tube pass of the segment coil model.
const coilSegments = 3

// airSideCalibration is the one constant factor on the air-side h of the
// simulator's coil (Gray & Webb j). It was fitted once, at a single
// reference point, so that the segment model reproduces coilmodel.Rate
// there: 12 in box, 1 row, 10 fpi, 710 cfm standard air at 58 °F, 2.31 gpm
// of 180 °F water (7.04 kW). Elsewhere the two models differ by their
// correlations' Reynolds, row and laminar-flow dependences (see
// TestSimulatorCoilAgainstRate). The method cross-check (physicsRateInputs,
// TestSegmentMethodAgreesWithRate) uses no factor at all.
const airSideCalibration = 0.927

// Terminal dynamics (common practice): coil and water thermal lag on heat
// output, the box airflow loop, and the discharge air without airflow.
const (
	coilLagTauS    = 75.0
	airflowTauS    = 20.0
	stagnantTauS   = 600.0
	actuatorStroke = 90.0
)

// Step is the state of the whole campus after one step. Slices are reused
// between steps: copy what you keep.
type Step struct {
	At        time.Time
	Index     int
	OutdoorC  float64
	SolarWm2  float64
	Loops     []LoopStep
	AHUs      []AHUStep
	Terminals []TerminalStep
}

// LoopStep is one hot-water loop.
type LoopStep struct {
	ID             string
	SupplyC        float64 // as reported
	PlantOn        bool
	TrueSupplyC    float64
	SetpointC      float64
	ReturnC        float64
	FlowM3s        float64
	HeatW          float64
	DifferentialPa float64
}

// AHUStep is one air handler.
type AHUStep struct {
	ID          string
	SupplyC     float64 // as reported
	FanOn       bool
	Occupied    bool
	TrueSupplyC float64
}

// TerminalStep is one terminal: what the BAS reports (SI; valve and flows as
// commanded/measured) and the truth behind it.
type TerminalStep struct {
	ID            string
	AirflowM3s    float64
	AirflowSetM3s float64
	DischargeC    float64
	ValveCmd      float64 // 0..1
	ZoneC         float64
	ZoneSetC      float64 // active heating setpoint
	True          TerminalTruth
	// Faults has bit i set when FaultKinds[i] is active on this terminal
	// (cold-loop: on its loop).
	Faults uint32
}

// TerminalTruth are the simulator's true values.
type TerminalTruth struct {
	AirflowM3s     float64
	EnteringAirC   float64
	DischargeC     float64
	ZoneC          float64
	ValvePos       float64
	WaterFlowM3s   float64
	EnteringWaterC float64
	LeavingWaterC  float64
	HeatW          float64 // heat the coil delivers to the air
	ZoneLoadW      float64 // heat the supply air must bring to hold the heating setpoint (negative: surplus)
	CoilLoadW      float64 // heat the coil must deliver at the current airflow to hold the heating setpoint, ≥ 0
	DATSetC        float64
	BranchDPPa     float64
	// Occupied is the terminal's air handler in its occupied period (not
	// warm-up, not setback or night cycling): the hours a load assessment
	// sizes for.
	Occupied bool
}

type terminal struct {
	spec   *TerminalSpec
	ahu    int
	loop   int
	design terminalDesign
	geom   *coilGeom
	solver *coilSolver
	hyd    *coilHydraulics
	valve  valveModel
	act    actuator
	ctl    vavControl
	zone   zoneModel
	datS   tempSensor
	zoneS  tempSensor
	flowS  flowSensor

	branchFactor, ductGainK float64
	airM3s, heatW, datC     float64
	riseK                   float64
	datMeas, zoneMeas       float64
	circQ, circKg           []float64
	mods                    terminalMods
	faults                  []int // indices into Scenario.Faults targeting this terminal or its loop
	active                  []bool
}

// Simulator runs one scenario.
type Simulator struct {
	sc        *Scenario
	weather   *weather
	loops     []loopState
	ahus      []ahuState
	terms     []terminal
	loopFault [][]int
	step      Step
}

func stream(seed uint64, name string) *rand.Rand {
	h := fnv.New64a()
	h.Write([]byte(name))
	return rand.New(rand.NewPCG(seed, h.Sum64()))
}

// New builds a simulator for sc.
func New(sc *Scenario) (*Simulator, error) {
	s := &Simulator{sc: sc}
	s.weather = newWeather(sc.Weather, stream(sc.Seed, "weather"))
	s.loops = make([]loopState, len(sc.Loops))
	s.loopFault = make([][]int, len(sc.Loops))
	for i := range sc.Loops {
		l := &s.loops[i]
		l.spec = &sc.Loops[i]
		l.supplyC = mechRoomC
		r := stream(sc.Seed, "loop/"+l.spec.ID)
		l.sensor = tempSensor{tauS: 30, biasK: 0.4 * (r.Float64() - 0.5), noiseK: 0.1, quantF: 0.1, rng: r}
	}
	for fi := range sc.Faults {
		f := &sc.Faults[fi]
		if f.loopTarget {
			for li := range sc.Loops {
				if sc.Loops[li].ID == f.Target {
					s.loopFault[li] = append(s.loopFault[li], fi)
				}
			}
		}
	}
	for ai := range sc.AHUs {
		a := &sc.AHUs[ai]
		r := stream(sc.Seed, "ahu/"+a.ID)
		st := ahuState{spec: a, rng: r, satC: mechRoomC - 3}
		st.sensor = tempSensor{tauS: 20, biasK: 0.3 * (r.Float64() - 0.5), noiseK: 0.08, quantF: 0.1, rng: r}
		for ti := range a.Terminals {
			t, err := s.newTerminal(&a.Terminals[ti], ai)
			if err != nil {
				return nil, err
			}
			st.terminals = append(st.terminals, len(s.terms))
			s.terms = append(s.terms, t)
		}
		s.ahus = append(s.ahus, st)
	}
	s.step.Loops = make([]LoopStep, len(s.loops))
	s.step.AHUs = make([]AHUStep, len(s.ahus))
	s.step.Terminals = make([]TerminalStep, len(s.terms))
	return s, nil
}

func (s *Simulator) newTerminal(ts *TerminalSpec, ai int) (terminal, error) {
	sc := s.sc
	a := &sc.AHUs[ai]
	l := &sc.Loops[a.loop]
	d, err := designTerminal(ts, a, l, coilSegments, airSideCalibration)
	if err != nil {
		return terminal{}, fmt.Errorf("%s:%d: %w", sc.file, ts.Line, err)
	}
	g, _ := newCoilGeom(d.coil, coilSegments)
	r := stream(sc.Seed, "terminal/"+ts.ID)
	t := terminal{
		spec: ts, ahu: ai, loop: a.loop, design: d, geom: g,
		solver: newCoilSolver(g, airSideCalibration),
		hyd:    newCoilHydraulics(g),
		valve:  newValveModel(d.valve),
		act:    actuator{strokeS: actuatorStroke, deadBand: 0.01 + 0.02*r.Float64(), stickBand: 0.005 * r.Float64()},
		ctl:    newVAVControl(),
		zone:   newZoneModel(d.areaM2, d.uaEnv, d.solarAper, a.heatSetC-1),
		circQ:  make([]float64, g.circuits), circKg: make([]float64, g.circuits),
		branchFactor: 1 + 0.6*r.Float64(),
		ductGainK:    a.ductGainK + 0.3*(r.Float64()-0.5),
	}
	// Healthy sensors: calibration spread and noise (common practice for BAS
	// thermistors, ±0.2–0.5 °C; the airflow transducer offset ±0.4 Pa).
	t.datS = tempSensor{tauS: 15, biasK: 0.5 * (r.Float64() - 0.5), noiseK: 0.1, quantF: 0.1, rng: stream(sc.Seed, "dat/"+ts.ID)}
	t.zoneS = tempSensor{tauS: 90, biasK: 0.5 * (r.Float64() - 0.5), noiseK: 0.04, quantF: 0.1, rng: stream(sc.Seed, "zone/"+ts.ID)}
	rad := ts.InletIn / 2 * 0.0254
	t.flowS = flowSensor{areaM2: math.Pi * rad * rad, amp: 2.5, offsetPa: 0.8 * (r.Float64() - 0.5),
		noisePa: 0.25, gainErr: 0.06 * (r.Float64() - 0.5), quantCFM: 1, rng: stream(sc.Seed, "flow/"+ts.ID)}
	t.mods.reset(g.circuits)
	for fi := range sc.Faults {
		f := &sc.Faults[fi]
		if f.Target == ts.ID || (f.loopTarget && f.Target == l.ID) {
			t.faults = append(t.faults, fi)
		}
	}
	t.active = make([]bool, len(t.faults))
	t.datMeas, t.zoneMeas, t.datC = t.zone.airC, t.zone.airC, t.zone.airC
	return t, nil
}

// Scenario returns the scenario being simulated.
func (s *Simulator) Scenario() *Scenario { return s.sc }

// Run simulates the whole period, calling fn after every step. fn's error
// stops the run and is returned; so is ctx's.
func (s *Simulator) Run(ctx context.Context, fn func(*Step) error) error {
	sc := s.sc
	dt := sc.step.Seconds()
	n := int(sc.EndTime().Sub(sc.start) / sc.step)
	for k := 0; k < n; k++ {
		if k%1440 == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		at := sc.start.Add(time.Duration(k) * sc.step)
		s.advance(at, k, dt)
		if err := fn(&s.step); err != nil {
			return err
		}
	}
	return nil
}

// Run is a convenience: build a simulator for sc and run it.
func Run(ctx context.Context, sc *Scenario, fn func(*Step) error) error {
	s, err := New(sc)
	if err != nil {
		return err
	}
	return s.Run(ctx, fn)
}

// Terminals is the number of simulated terminals.
func (s *Simulator) Terminals() int { return len(s.terms) }
