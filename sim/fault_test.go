package sim

import (
	"context"
	"math"
	"testing"

	"risewatch/units"
)

// testScenario is a small winter campus for the fault tests: each fault on
// its own terminal, the cold-loop fault on a loop of its own.
const testScenario = `
name: fault-bench
seed: 42
start: "2025-01-13"
days: 3
time_zone: Etc/GMT+6
weather: {annual_mean_c: 8, annual_amplitude_k: 12, daily_amplitude_k: 4, synoptic_sd_k: 2}
loops:
  - {id: HW-A, design_supply_f: 180}
  - {id: HW-B, design_supply_f: 180}
ahus:
  - id: AHU-1
    loop: HW-A
    weekday: "07:00-18:00"
    terminals:
      - {id: T-LEAK, inlet_in: 10, exposure: south}
      - {id: T-BIAS, inlet_in: 10, exposure: south}
      - {id: T-STUCK, inlet_in: 10, exposure: north}
      - {id: T-REV, inlet_in: 10, exposure: north}
      - {id: T-HUNT, inlet_in: 12, exposure: west}
      - {id: T-FAIL, inlet_in: 8, exposure: east}
      - {id: T-STARVE, inlet_in: 12, rows: 2, exposure: west}
  - id: AHU-2
    loop: HW-B
    terminals:
      - {id: T-COLD, inlet_in: 10, exposure: south}
faults:
  - {target: T-LEAK, kind: leaking-valve, severity: 0.08}
  - {target: T-BIAS, kind: dat-offset, severity: 2.0}
  - {target: T-STUCK, kind: stuck-valve, severity: 0.3}
  - {target: T-REV, kind: reversed-valve}
  - {target: T-HUNT, kind: hunting, severity: 8}
  - {target: T-FAIL, kind: dat-failed, start: 24h}
  - {target: T-STARVE, kind: starved-coil, severity: 100, circuit: 0}
  - {target: HW-B, kind: cold-loop, severity: 15, start: 24h}
`

func loadTest(t *testing.T, yml string) *Scenario {
	t.Helper()
	sc, err := ParseScenario([]byte(yml), "test.yaml")
	if err != nil {
		t.Fatal(err)
	}
	return sc
}

// runPair runs a scenario and its fault-free twin step by step.
func runPair(t *testing.T, sc *Scenario, fn func(f, h *Step)) {
	t.Helper()
	var hs []Step
	err := Run(context.Background(), sc.WithoutFaults(), func(s *Step) error {
		c := *s
		c.Loops = append([]LoopStep(nil), s.Loops...)
		c.AHUs = append([]AHUStep(nil), s.AHUs...)
		c.Terminals = append([]TerminalStep(nil), s.Terminals...)
		hs = append(hs, c)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	k := 0
	err = Run(context.Background(), sc, func(s *Step) error {
		fn(s, &hs[k])
		k++
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

func termIndex(t *testing.T, sc *Scenario, id string) int {
	i := 0
	for _, a := range sc.AHUs {
		for _, ts := range a.Terminals {
			if ts.ID == id {
				return i
			}
			i++
		}
	}
	t.Fatalf("no terminal %s", id)
	return -1
}

func TestFaultDirections(t *testing.T) {
	sc := loadTest(t, testScenario)
	ix := func(id string) int { return termIndex(t, sc, id) }
	leak, bias, stuck, rev, hunt, fail, cold := ix("T-LEAK"), ix("T-BIAS"), ix("T-STUCK"), ix("T-REV"), ix("T-HUNT"), ix("T-FAIL"), ix("T-COLD")
	var (
		leakRise, leakN          float64 // DAT − SAT, valve commanded 0, fan and plant on
		biasOff, biasN           float64 // measured − twin measured DAT, plant off or valve shut
		stuckDev                 float64
		revErr, revN             float64
		huntTV, twinTV           float64
		lastH, lastTw            float64
		failVals                 = map[float64]bool{}
		failTrueMin, failTrueMax = math.Inf(1), math.Inf(-1)
		coldDrop, coldN          float64
	)
	runPair(t, sc, func(f, h *Step) {
		a := f.AHUs[0]
		if a.FanOn && f.Loops[0].PlantOn {
			ft := f.Terminals[leak]
			if ft.ValveCmd == 0 && ft.True.ValvePos == 0 && ft.True.AirflowM3s > 0.05 {
				leakRise += ft.True.DischargeC - ft.True.EnteringAirC
				leakN++
			}
		}
		bt, bh := f.Terminals[bias], h.Terminals[bias]
		if a.FanOn && bt.ValveCmd == 0 && bh.ValveCmd == 0 && math.Abs(bt.True.DischargeC-bh.True.DischargeC) < 0.05 {
			biasOff += bt.DischargeC - bh.DischargeC
			biasN++
		}
		stuckDev = math.Max(stuckDev, math.Abs(f.Terminals[stuck].True.ValvePos-0.3))
		if rt := f.Terminals[rev]; a.FanOn && rt.ValveCmd > 0.1 && rt.ValveCmd < 0.9 && f.Index > 0 {
			revErr += math.Abs(rt.True.ValvePos - (1 - rt.ValveCmd))
			revN++
		}
		if a.FanOn {
			vh, vt := f.Terminals[hunt].ValveCmd, h.Terminals[hunt].ValveCmd
			huntTV += math.Abs(vh - lastH)
			twinTV += math.Abs(vt - lastTw)
			lastH, lastTw = vh, vt
		}
		if f.At.Sub(sc.StartTime()).Hours() >= 25 {
			failVals[f.Terminals[fail].DischargeC] = true
			failTrueMin = math.Min(failTrueMin, f.Terminals[fail].True.DischargeC)
			failTrueMax = math.Max(failTrueMax, f.Terminals[fail].True.DischargeC)
			if f.Loops[1].PlantOn {
				coldDrop += h.Loops[1].TrueSupplyC - f.Loops[1].TrueSupplyC
				coldN++
			}
		}
		_ = cold
	})
	// Leak: with the valve commanded shut, the plant on and the fan on the
	// coil still heats (G36 §5.6.6 leaking-valve alarm condition: DAT above
	// SAT by 3 °C with the valve at 0 %).
	if leakN < 60 || leakRise/leakN < 3 {
		t.Errorf("leaking valve: mean true rise %.2f K over %.0f closed-valve minutes, want > 3 K", leakRise/max(leakN, 1), leakN)
	}
	// Bias: measured DAT offset from the twin by the bias (2 K) when the coil
	// does the same in both runs; noise averages out.
	if biasN < 60 || math.Abs(biasOff/biasN-2.0) > 0.2 {
		t.Errorf("dat-offset: mean offset %.2f K over %.0f minutes, want 2.0 ± 0.2", biasOff/max(biasN, 1), biasN)
	}
	if stuckDev > 1e-12 {
		t.Errorf("stuck valve moved by %.3f", stuckDev)
	}
	// Reversed: position follows 1 − command within dead band and stroke lag.
	if revN < 20 || revErr/revN > 0.1 {
		t.Errorf("reversed valve: mean |pos − (1 − cmd)| %.3f over %.0f minutes", revErr/max(revN, 1), revN)
	}
	// Hunting: the valve command travels far more than the twin's (total
	// variation; the twin's comes from sensor noise and load changes).
	if huntTV < 3*twinTV {
		t.Errorf("hunting: valve travel %.1f strokes, twin %.1f", huntTV, twinTV)
	}
	t.Logf("valve travel: hunting %.1f strokes, twin %.1f", huntTV, twinTV)
	if len(failVals) != 1 || failTrueMax-failTrueMin < 5 {
		t.Errorf("failed DAT: %d distinct readings while the true DAT spans %.1f K", len(failVals), failTrueMax-failTrueMin)
	}
	if coldN < 60 || math.Abs(coldDrop/coldN-15) > 1 {
		t.Errorf("cold loop: supply %.2f K below the twin, want 15 ± 1", coldDrop/max(coldN, 1))
	}
}

// coilAt is the steady coil heat of terminal design d at valve lift y.
func coilAt(t *testing.T, d terminalDesign, mult []float64, foul coilFaults, y float64) float64 {
	g, err := newCoilGeom(d.coil, coilSegments)
	if err != nil {
		t.Fatal(err)
	}
	h := newCoilHydraulics(g)
	if mult != nil {
		h.setMultipliers(mult)
	}
	s := newCoilSolver(g, airSideCalibration)
	s.setFaults(foul)
	tw := units.FToC(170)
	circ := make([]float64, g.circuits)
	h.installedFlow(newValveModel(d.valve), y, d.valve.LeakageFrac, units.PSIToPa(5)*1.2, tw, circ)
	for i := range circ {
		circ[i] *= waterDensity(tw)
	}
	return s.solveExact(d.heatMax*stdAirDensity, units.FToC(58), circ, tw).HeatW
}

// TestCoilFaultShortfalls: a starved circuit (one circuit's resistance
// raised) costs more capacity as the valve opens, because at low lift the
// valve, not the coil, limits the flow; fouling costs capacity at every
// lift (physical expectation; fdd reference signatures).
func TestCoilFaultShortfalls(t *testing.T) {
	sc := loadTest(t, testScenario)
	a, l := &sc.AHUs[0], &sc.Loops[0]
	ts := &a.Terminals[termIndex(t, sc, "T-STARVE")]
	d, err := designTerminal(ts, a, l, coilSegments, airSideCalibration)
	if err != nil {
		t.Fatal(err)
	}
	if d.coil.Circuits < 2 {
		t.Fatalf("want a multi-circuit coil, got %d", d.coil.Circuits)
	}
	mult := make([]float64, d.coil.Circuits)
	for i := range mult {
		mult[i] = 1
	}
	mult[0] = 100
	var shorts []float64
	for _, y := range []float64{0.2, 0.4, 0.6, 0.8, 1.0} {
		healthy := coilAt(t, d, nil, coilFaults{}, y)
		starved := coilAt(t, d, mult, coilFaults{}, y)
		shorts = append(shorts, 1-starved/healthy)
		for _, f := range []coilFaults{{foulWater: 1e-3}, {foulAir: 0.01}} {
			if fouled := coilAt(t, d, nil, f, y); fouled >= healthy*0.97 {
				t.Errorf("fouled %+v at lift %.1f: %.0f W vs healthy %.0f W, want a shortfall > 3 %%", f, y, fouled, healthy)
			}
		}
	}
	t.Logf("starved-circuit shortfall at lift 0.2..1.0: %.3f", shorts)
	// Rising through the modulating range; at the top the coil side
	// saturates, so only require the open-valve loss to stay well above the
	// low-lift loss.
	for i := 1; i < 4; i++ {
		if shorts[i] <= shorts[i-1] {
			t.Errorf("starved: shortfall %.3f at step %d not above %.3f", shorts[i], i, shorts[i-1])
		}
	}
	if shorts[4] < shorts[0]+0.04 {
		t.Errorf("starved: open-valve shortfall %.3f not well above low-lift %.3f", shorts[4], shorts[0])
	}
	// A single-circuit coil with its circuit's resistance raised (plugged
	// strainer or air-bound coil): almost no loss while the valve throttles,
	// a large one wide open.
	one := &TerminalSpec{ID: "one", InletIn: 8, Rows: 1, Circuits: 1, FPI: 10, LoadFrac: 0.75, Exposure: "south"}
	d1, err := designTerminal(one, a, l, coilSegments, airSideCalibration)
	if err != nil {
		t.Fatal(err)
	}
	lo := 1 - coilAt(t, d1, []float64{50}, coilFaults{}, 0.2)/coilAt(t, d1, nil, coilFaults{}, 0.2)
	hi := 1 - coilAt(t, d1, []float64{50}, coilFaults{}, 1)/coilAt(t, d1, nil, coilFaults{}, 1)
	t.Logf("single circuit ×50 resistance: shortfall %.3f at lift 0.2, %.3f open", lo, hi)
	if lo > 0.03 || hi < 0.08 {
		t.Errorf("single-circuit starved: shortfall %.3f at lift 0.2 (want < 0.03), %.3f open (want > 0.08)", lo, hi)
	}
}
