package sim

import "math"

// piLoop is a discrete PI controller in velocity (incremental) form with
// output limits, so it cannot wind up: u += Kp·(e − e_prev) + Kp·dt/Ti·e
// (Åström & Hägglund, Advanced PID Control, ISA 2006, §3.3, incremental form).
type piLoop struct {
	kp, tiS  float64
	lo, hi   float64
	u, ePrev float64
	primed   bool
}

func (p *piLoop) reset(u float64) { p.u, p.primed = u, false }

// step returns the new output for error e after dt seconds; gainMult scales
// the proportional gain and divides the integral time (a mistuned loop).
func (p *piLoop) step(e, dt, gainMult float64) float64 {
	kp := p.kp * gainMult
	ti := p.tiS / gainMult
	if !p.primed {
		p.ePrev, p.primed = e, true
	}
	p.u += kp*(e-p.ePrev) + kp*dt/ti*e
	p.u = math.Max(p.lo, math.Min(p.hi, p.u))
	p.ePrev = e
	return p.u
}

// vavControl is the terminal sequence of a single-duct VAV box with hot
// water reheat, in the common "dual maximum" form (ASHRAE Guideline 36-2021
// §5.6.5, simplified): a zone cooling loop raises airflow from minimum to the
// cooling maximum; in the dead band the box holds minimum airflow with the
// valve shut; the first half of the zone heating loop resets the discharge
// setpoint from supply air temperature up to the maximum discharge
// temperature at minimum airflow, the second half raises airflow to the
// heating maximum; a discharge-temperature PI loop positions the valve.
type vavControl struct {
	cool, heat, dat piLoop
	datSetC         float64
	mode            int // -1 cooling, 0 dead band, 1 heating
}

// vavOutputs are what the controller commands this step.
type vavOutputs struct {
	AirflowSetM3s float64
	ValveCmd      float64 // 0..1
	DATSetC       float64
	HeatLoop      float64
}

func newVAVControl() vavControl {
	return vavControl{
		// Zone loops: output 0..1 per K of zone error (common practice gains).
		cool: piLoop{kp: 0.5, tiS: 1200, lo: 0, hi: 1},
		heat: piLoop{kp: 0.5, tiS: 1200, lo: 0, hi: 1},
		// Discharge loop: valve fraction per K of DAT error.
		dat: piLoop{kp: 0.02, tiS: 300, lo: 0, hi: 1},
	}
}

// step runs the sequence. fanOn false closes everything (box off with the AHU).
func (v *vavControl) step(dt, zoneC, heatSetC, coolSetC, satC, datC float64,
	minM3s, coolMaxM3s, heatMaxM3s, datMaxC, datGain float64, fanOn bool) vavOutputs {
	if !fanOn {
		v.cool.reset(0)
		v.heat.reset(0)
		v.dat.reset(0)
		v.mode = 0
		return vavOutputs{DATSetC: satC}
	}
	c := v.cool.step(zoneC-coolSetC, dt, 1)
	h := v.heat.step(heatSetC-zoneC, dt, 1)
	out := vavOutputs{AirflowSetM3s: minM3s, DATSetC: satC, HeatLoop: h}
	switch {
	case c > 0 && c >= h:
		out.AirflowSetM3s = minM3s + c*(coolMaxM3s-minM3s)
		v.heat.reset(0)
	case h > 0:
		v.cool.reset(0)
		if h <= 0.5 {
			out.DATSetC = satC + h/0.5*math.Max(0, datMaxC-satC)
		} else {
			out.DATSetC = math.Max(datMaxC, satC)
			out.AirflowSetM3s = minM3s + (h-0.5)/0.5*(heatMaxM3s-minM3s)
		}
	}
	if h > 0 {
		out.ValveCmd = v.dat.step(out.DATSetC-datC, dt, datGain)
	} else {
		v.dat.reset(0)
	}
	v.datSetC = out.DATSetC
	return out
}
