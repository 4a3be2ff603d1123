package fdd

import (
	"risewatch/collector"
)

// Physical plausibility ranges for gating [I]: wide enough for any working
// HVAC system, narrow enough to catch open/short-circuited sensors (which
// read like −40 °C or +150 °C) and unit mistakes (°F read as °C).
const (
	datMinC, datMaxC = -30.0, 95.0
	satMinC, satMaxC = -10.0, 50.0
	hwMinC, hwMaxC   = 0.0, 110.0
	valveMin         = -0.05
	valveMax         = 1.05
	airflowNegM3s    = -0.01 // small negative readings are zero-offset noise
)

// zonePlausible reports whether a sample's zone temperature and heating
// setpoint are both present and inside the plausibility ranges
// (collector.ZoneMinC..., NaN fails). They do not gate a sample; outside
// the ranges they are treated as missing (an open or shorted room sensor, a
// setpoint in the wrong unit), as in every consumer.
func zonePlausible(s *collector.Sample) bool { return s.ZoneOK() && s.ZoneSetOK() }

// gatedFlags are the sample flags gate looks at.
const gatedFlags = collector.FlagAirflow | collector.FlagDischarge | collector.FlagSupply | collector.FlagValve |
	collector.FlagHotWater | collector.FlagPlant | collector.FlagFan

// inputs are a sample's values after gating, with derived states.
type inputs struct {
	v, dat, sat, u, hw float64
	fanOn, plantOn     bool
	hwAssumed          bool // HW temperature is the loop design value
	datOK              bool // DAT itself is present and in range
}

// gate checks one sample against the data-quality rules and returns the
// gate mask and the cleaned inputs. Required points: airflow, discharge,
// valve (GateMissing); AHU supply air (GateNoAHU); loop supply temperature
// when the loop defines one (GateNoLoop; otherwise the design value is used).
// Fan and plant status fall back to inference when the site defines no point:
// fan on when airflow exceeds a third of the box minimum, plant on when the
// hot water is at least 8 K above the supply air [I].
func gate(s *collector.Sample, t *termStatic, in *inputs) Gate {
	f := s.Flags
	v, dat, sat, u, hw := s.AirflowM3s, s.DischargeC, s.SupplyC, s.ValveFrac, s.HotWaterC
	// Fast path: every point the gate reads present and in range (a NaN or
	// ±Inf fails the range comparisons and takes the full path). Zone,
	// occupancy, airflow setpoint and outdoor flags do not gate.
	if f&gatedFlags == 0 && sat >= satMinC && sat <= satMaxC && hw >= hwMinC && hw <= hwMaxC &&
		dat >= datMinC && dat <= datMaxC && v >= airflowNegM3s && v <= t.maxAirM3s &&
		u >= valveMin && u <= valveMax {
		// Field by field: a composite literal is built in a temporary
		// and copied.
		in.v, in.dat, in.sat, in.u, in.hw = fmax(v, 0), dat, sat, fmax(0, fmin(1, u)), hw
		in.fanOn, in.plantOn, in.hwAssumed, in.datOK = s.FanOn, s.PlantOn, false, true
		return 0
	}
	var g Gate
	*in = inputs{v: v, dat: dat, sat: sat, u: u, hw: hw}
	if f&(collector.FlagAirflow|collector.FlagDischarge|collector.FlagValve) != 0 {
		g |= GateMissing
	}
	if f&collector.FlagSupply != 0 || !finite(in.sat) {
		g |= GateNoAHU
	} else if in.sat < satMinC || in.sat > satMaxC {
		g |= GateRange
	}
	if f&collector.FlagHotWater != 0 || !finite(in.hw) {
		if t.hwPoint {
			g |= GateNoLoop
		} else {
			in.hw, in.hwAssumed = t.designHWC, true
		}
	} else if in.hw < hwMinC || in.hw > hwMaxC {
		g |= GateRange
	}
	in.datOK = f&collector.FlagDischarge == 0 && finite(in.dat) && in.dat >= datMinC && in.dat <= datMaxC
	if f&collector.FlagDischarge == 0 && !in.datOK {
		if finite(in.dat) {
			g |= GateRange
		} else {
			g |= GateMissing
		}
	}
	if f&collector.FlagAirflow == 0 {
		switch {
		case !finite(in.v):
			g |= GateMissing
		case in.v < airflowNegM3s || in.v > t.maxAirM3s:
			g |= GateRange
		case in.v < 0:
			in.v = 0
		}
	}
	if f&collector.FlagValve == 0 {
		switch {
		case !finite(in.u):
			g |= GateMissing
		case in.u < valveMin || in.u > valveMax:
			g |= GateRange
		default:
			in.u = fmax(0, fmin(1, in.u))
		}
	}
	// Fan.
	switch {
	case f&collector.FlagFan == 0:
		in.fanOn = s.FanOn
	case t.fanPoint:
		g |= GateMissing
	default:
		in.fanOn = finite(in.v) && in.v > t.fanOnM3s
	}
	// Plant.
	switch {
	case f&collector.FlagPlant == 0:
		in.plantOn = s.PlantOn
	case t.plantPoint:
		g |= GateMissing
	case in.hwAssumed:
		in.plantOn = true
	default:
		in.plantOn = finite(in.hw) && finite(in.sat) && in.hw-in.sat >= 8
	}
	return g
}
