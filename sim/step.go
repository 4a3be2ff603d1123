package sim

import (
	"math"
	"time"
)

// advance computes step k at time at.
func (s *Simulator) advance(at time.Time, k int, dt float64) {
	sc := s.sc
	oat, solar := s.weather.step(at, dt)
	st := &s.step
	st.At, st.Index, st.OutdoorC, st.SolarWm2 = at, k, oat, solar

	for li := range s.loops {
		l := &s.loops[li]
		l.coldK = 0
		for _, fi := range s.loopFault[li] {
			f := &sc.Faults[fi]
			if !at.Before(f.start) && at.Before(f.end) {
				l.coldK += f.Severity
			}
		}
		l.step(dt, oat)
	}
	for ai := range s.ahus {
		a := &s.ahus[ai]
		minZ := math.Inf(1)
		for _, ti := range a.terminals {
			minZ = math.Min(minZ, s.terms[ti].zoneMeas)
		}
		a.step(at, dt, oat, minZ, a.spec.unoccHeatC)
		as := &st.AHUs[ai]
		as.ID, as.FanOn, as.Occupied, as.TrueSupplyC = a.spec.ID, a.fanOn, a.occupied, a.satC
		as.SupplyC = a.sensor.read(a.satC, dt, 0, failNone)
	}
	for ti := range s.terms {
		s.stepTerminal(ti, at, dt, oat, solar)
	}
	for li := range s.loops {
		l := &s.loops[li]
		ls := &st.Loops[li]
		l.returnC = l.supplyC
		if l.flowM3s > 0 {
			l.returnC = l.retNumer / l.flowM3s
		}
		*ls = LoopStep{ID: l.spec.ID, PlantOn: l.enabled, TrueSupplyC: l.supplyC, SetpointC: l.setC,
			ReturnC: l.returnC, FlowM3s: l.flowM3s, HeatW: l.heatW, DifferentialPa: l.dpPa}
		ls.SupplyC = l.sensor.read(l.supplyC, dt, 0, failNone)
	}
}

// updateFaults recomputes the terminal's fault modifiers when any of its
// faults starts or ends. This is the single place fault data becomes
// physics.
func (t *terminal) updateFaults(sc *Scenario, at time.Time) {
	changed := false
	for i, fi := range t.faults {
		f := &sc.Faults[fi]
		on := !at.Before(f.start) && at.Before(f.end)
		if on != t.active[i] {
			t.active[i], changed = on, true
		}
	}
	if !changed {
		return
	}
	t.mods.reset(t.geom.circuits)
	for i, fi := range t.faults {
		if t.active[i] {
			t.mods.applyFault(&sc.Faults[fi])
		}
	}
	t.solver.setFaults(t.mods.coil)
	t.hyd.setMultipliers(t.mods.circMult)
}

func (s *Simulator) stepTerminal(ti int, at time.Time, dt, oat, solar float64) {
	sc := s.sc
	t := &s.terms[ti]
	a := &s.ahus[t.ahu]
	as := &s.step.AHUs[t.ahu]
	l := &s.loops[t.loop]
	spec := a.spec
	t.updateFaults(sc, at)

	// Setpoints: occupied (and during warm-up) or setback.
	heatSet, coolSet := spec.unoccHeatC, spec.unoccCoolC
	if _, sched := a.schedule(at); sched {
		heatSet, coolSet = spec.heatSetC, spec.coolSetC
	}
	d := &t.design
	out := t.ctl.step(dt, t.zoneMeas, heatSet, coolSet, as.SupplyC, t.datMeas,
		d.minM3s, d.coolMaxM3s, d.heatMax, spec.datMaxC, t.mods.gainMult, a.fanOn)
	pos := t.act.step(out.ValveCmd, dt, t.mods.act)

	// Airflow: the box loop drives its (biased) reading to the setpoint.
	target := 0.0
	if a.fanOn {
		target = t.flowS.trueForSetpoint(out.AirflowSetM3s)
	}
	t.airM3s += (target - t.airM3s) * (1 - math.Exp(-dt/airflowTauS))
	mAir := t.airM3s * stdAirDensity

	// Water: valve and coil in series across the branch Δp.
	twIn := l.supplyC
	branch := l.dpPa * t.branchFactor
	leak := math.Max(t.valve.leakFrac, t.mods.leak)
	q := t.hyd.installedFlow(t.valve, pos, leak, branch, twIn, t.circQ)
	rho := waterDensity(twIn)
	for i, cq := range t.circQ {
		t.circKg[i] = cq * rho
	}
	eat := a.satC + t.ductGainK
	res := t.solver.solve(mAir, eat, t.circKg, twIn, true)
	// Coil, tube and water thermal mass: the air temperature rise follows
	// its steady value with a first-order lag.
	if mAir > 1e-6 {
		rise := res.HeatW / (mAir * airCp)
		t.riseK += (rise - t.riseK) * (1 - math.Exp(-dt/coilLagTauS))
		t.datC = eat + t.riseK
		t.heatW = t.riseK * mAir * airCp
	} else {
		t.riseK, t.heatW = 0, 0
		t.datC += (t.zone.airC - t.datC) * (1 - math.Exp(-dt/stagnantTauS))
	}
	occ := a.occupied
	zoneLoad := t.zone.heatingLoadW(heatSet, oat, occ)
	t.zone.step(dt, mAir, t.datC, oat, solar, occ)

	// Sensors.
	t.datMeas = t.datS.read(t.datC, dt, t.mods.datBiasK, t.mods.datFail)
	t.zoneMeas = t.zoneS.read(t.zone.airC, dt, 0, failNone)
	flowMeas := t.flowS.read(t.airM3s)
	lwt := twIn
	if q > 0 && t.heatW > 0 {
		lwt = twIn - t.heatW/(q*rho*waterCp(twIn))
	}
	l.flowM3s += q
	l.heatW += t.heatW
	l.retNumer += q * lwt

	ts := &s.step.Terminals[ti]
	coilLoad := 0.0
	if mAir > 0 {
		coilLoad = math.Max(0, mAir*airCp*(heatSet-eat)+zoneLoad)
	}
	*ts = TerminalStep{
		ID: t.spec.ID, AirflowM3s: flowMeas, AirflowSetM3s: quantCFM(out.AirflowSetM3s),
		DischargeC: t.datMeas, ValveCmd: quantPct(out.ValveCmd), ZoneC: t.zoneMeas, ZoneSetC: heatSet,
		True: TerminalTruth{AirflowM3s: t.airM3s, EnteringAirC: eat, DischargeC: t.datC, ZoneC: t.zone.airC,
			ValvePos: pos, WaterFlowM3s: q, EnteringWaterC: twIn, LeavingWaterC: lwt, HeatW: t.heatW,
			ZoneLoadW: zoneLoad, CoilLoadW: coilLoad, DATSetC: out.DATSetC, BranchDPPa: branch, Occupied: occ},
		Faults: t.mods.mask,
	}
}
