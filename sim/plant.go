package sim

import (
	"math"
	"math/rand/v2"
	"time"
)

// loopState is one hot-water loop and its plant: supply temperature on an
// outdoor-air reset, the plant enabled below an outdoor lockout with
// hysteresis, the pump holding a differential-pressure setpoint.
type loopState struct {
	spec     *LoopSpec
	enabled  bool
	supplyC  float64 // true supply temperature
	setC     float64
	dpPa     float64
	sensor   tempSensor
	coldK    float64 // fault: supply setpoint depressed by this many K
	flowM3s  float64 // this step, summed over terminals
	heatW    float64
	returnC  float64
	retNumer float64
}

// Plant time constants (common practice): boiler plant warm-up, and the
// loop's cool-down toward the mechanical room when off.
const (
	plantWarmTauS = 900.0
	plantCoolTauS = 3 * 3600.0
	mechRoomC     = 21.0
	plantHystK    = 1.1 // 2 °F enable/disable hysteresis (common practice)
)

// resetC is the linear outdoor reset of the supply setpoint between the
// design outdoor point and the mild point, clamped outside.
func resetC(oatC, oatLoC, atLoC, oatHiC, atHiC float64) float64 {
	if oatHiC <= oatLoC {
		return atLoC
	}
	w := clamp01((oatC - oatLoC) / (oatHiC - oatLoC))
	return atLoC + w*(atHiC-atLoC)
}

func (l *loopState) step(dt, oatC float64) {
	s := l.spec
	switch {
	case !l.enabled && oatC < s.enableBelowC-plantHystK/2:
		l.enabled = true
	case l.enabled && oatC > s.enableBelowC+plantHystK/2:
		l.enabled = false
	}
	l.setC = resetC(oatC, s.designOutdoorC, s.supplyAtDesignC, s.mildOutdoorC, s.supplyAtMildC) - l.coldK
	if l.enabled {
		l.supplyC += (l.setC - l.supplyC) * (1 - math.Exp(-dt/plantWarmTauS))
		l.dpPa = s.dpSetpointPa
	} else {
		l.supplyC += (mechRoomC - l.supplyC) * (1 - math.Exp(-dt/plantCoolTauS))
		l.dpPa = 0
	}
	l.flowM3s, l.heatW, l.retNumer = 0, 0, 0
}

// ahuState is an air handler: supply fan on its schedule (with night
// low-limit cycling), discharge air temperature on an outdoor reset, and a
// slow wander of the real SAT around its setpoint.
type ahuState struct {
	spec      *AHUSpec
	fanOn     bool
	occupied  bool
	nightRun  bool
	satC      float64
	wander    float64
	sensor    tempSensor
	rng       *rand.Rand
	terminals []int
}

const (
	satTauS        = 300.0
	satWanderSDK   = 0.25
	satWanderTauS  = 1200.0
	ductOffTempTau = 3600.0
)

// schedule returns (occupied, fan scheduled) at local time t.
func (a *ahuState) schedule(t time.Time) (occ, fan bool) {
	d := a.spec.weekday
	switch t.Weekday() {
	case time.Saturday:
		d = a.spec.saturday
	case time.Sunday:
		d = a.spec.sunday
	}
	if d.empty() {
		return false, false
	}
	m := t.Hour()*60 + t.Minute()
	occ = m >= d.startMin && m < d.endMin
	fan = m >= d.startMin-a.spec.warmupMin && m < d.endMin
	return occ, fan
}

func (a *ahuState) step(t time.Time, dt, oatC, minZoneC, unoccHeatC float64) {
	occ, fan := a.schedule(t)
	a.occupied = occ
	if !fan {
		// Night low limit: run when the coldest zone drops 1 K below the
		// unoccupied heating setpoint, stop 1 K above it (common practice).
		if !a.nightRun && minZoneC < unoccHeatC-1 {
			a.nightRun = true
		} else if a.nightRun && minZoneC > unoccHeatC+1 {
			a.nightRun = false
		}
		fan = a.nightRun
	} else {
		a.nightRun = false
	}
	a.fanOn = fan
	s := a.spec
	set := resetC(oatC, s.satOATLowC, s.satAtLowC, s.satOATHighC, s.satAtHighC)
	aw := math.Exp(-dt / satWanderTauS)
	a.wander = aw*a.wander + satWanderSDK*math.Sqrt(1-aw*aw)*a.rng.NormFloat64()
	if fan {
		a.satC += (set + a.wander - a.satC) * (1 - math.Exp(-dt/satTauS))
	} else {
		a.satC += (mechRoomC - 3 - a.satC) * (1 - math.Exp(-dt/ductOffTempTau))
	}
}
