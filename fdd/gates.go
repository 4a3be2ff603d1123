package fdd

import (
	"math"

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

// Zone sensor runs: gate follows how long a terminal's zone temperature and
// heating setpoint have been implausible (data-quality evidence; the zone
// readings never gate a sample) and sets inputs.zoneOK when both are
// present and plausible: only then do they enter the zone-deficit evidence
// (outside the ranges they are treated as missing, as in every consumer).
// A reading counts as implausible when it is present (flag clear, not NaN)
// but outside its range of collector.ZoneOK or ZoneSetOK (an open or
// shorted room sensor, a setpoint in the wrong unit), or missing while the
// terminal's point is configured and the box's airflow and valve arrive:
// the controller reports, this point does not. A plausible reading ends
// the run; a missing one of a point that is not configured, or while the
// box's own points are missing too (the controller or the trend log is
// down: input-data-quality's case), holds it.
//
// The common case, both readings present and plausible, is tested on the
// readings' IEEE 754 bit patterns: non-negative floats order like their
// patterns (as unsigned integers) and every negative one and NaN lies
// above the pattern of ZoneMaxC, so bits(z) ≤ bits(45) is 0 ≤ z ≤ 45 for
// every z but −0, and bits(zs) − bits(5) ≤ bits(35) − bits(5) (unsigned)
// is 5 ≤ zs ≤ 35. Every other sample (−0 among them) takes zoneRuns, which
// tests with collector.ZoneOK and ZoneSetOK.
const (
	zoneMaxBits     = 0x4046800000000000                  // math.Float64bits(collector.ZoneMaxC), 45
	zoneSetMinBits  = 0x4014000000000000                  // math.Float64bits(collector.ZoneSetMinC), 5
	zoneSetSpanBits = 0x4041800000000000 - zoneSetMinBits // math.Float64bits(collector.ZoneSetMaxC) − zoneSetMinBits, 35
)

// zoneStaleMinutes is how long the zone readings may stay implausible
// before the zone deficit they last gave is forgotten: two time constants of
// its 15-minute EWMA [I]. A loop is then judged as for a terminal without
// zone points (the deficit unknown), not on a room condition an hour old.
const zoneStaleMinutes = 30

// zoneRuns updates the zone runs of a sample that failed the bit-pattern
// test and reports whether both readings are plausible. A run reaching
// termStatic.zoneStaleRun clears the zone deficit.
func zoneRuns(s *collector.Sample, t *termStatic, st *termState) bool {
	zok, sok := s.ZoneOK(), s.ZoneSetOK()
	reporting := s.Flags&(collector.FlagAirflow|collector.FlagValve) == 0
	switch {
	case zok:
		st.zoneBadRun = 0
	case implausible(s.Flags&collector.FlagZone == 0, s.ZoneC, t.zonePoint, reporting):
		st.zoneBadRun++
	}
	switch {
	case sok:
		st.zoneSetBadRun = 0
	case implausible(s.Flags&collector.FlagZoneSet == 0, s.ZoneSetC, t.zoneSetPoint, reporting):
		st.zoneSetBadRun++
	}
	if r := int(t.zoneStaleRun); st.zoneBadRun == r || st.zoneSetBadRun == r {
		st.zoneDef = newEWMA()
	}
	return zok && sok
}

// implausible reports whether a zone reading that failed its range test
// counts toward its run (zoneRuns): present (not flagged, not NaN), or
// missing from a configured point while the controller reports.
func implausible(unflagged bool, x float64, configured, reporting bool) bool {
	return unflagged && x == x || configured && reporting
}

// gatedFlags are the sample flags gate looks at.
const gatedFlags = collector.FlagAirflow | collector.FlagDischarge | collector.FlagSupply | collector.FlagValve |
	collector.FlagHotWater | collector.FlagPlant | collector.FlagFan

// inputs are a sample's values after gating, with derived states.
type inputs struct {
	v, dat, sat, u, hw float64
	fanOn, plantOn     bool
	hwAssumed          bool // HW temperature is the loop design value
	datOK              bool // DAT itself is present and in range
	zoneOK             bool // zone temperature and heating setpoint present and plausible
}

// gate checks one sample against the data-quality rules and returns the
// gate mask and the cleaned inputs; it also follows the zone sensor runs in
// st (see zoneMaxBits), which never gate. Required points: airflow,
// discharge, valve (GateMissing); AHU supply air (GateNoAHU); loop supply
// temperature when the loop defines one (GateNoLoop; otherwise the design
// value is used).
// Fan and plant status fall back to inference when the site defines no point:
// fan on when airflow exceeds a third of the box minimum, plant on when the
// hot water is at least 8 K above the supply air [I].
func gate(s *collector.Sample, t *termStatic, st *termState, in *inputs) Gate {
	f := s.Flags
	zoneOK := true
	if f&(collector.FlagZone|collector.FlagZoneSet) != 0 || math.Float64bits(s.ZoneC) > zoneMaxBits ||
		math.Float64bits(s.ZoneSetC)-zoneSetMinBits > zoneSetSpanBits {
		zoneOK = zoneRuns(s, t, st)
	} else {
		st.zoneBadRun, st.zoneSetBadRun = 0, 0
	}
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
		in.fanOn, in.plantOn, in.hwAssumed, in.datOK, in.zoneOK = s.FanOn, s.PlantOn, false, true, zoneOK
		return 0
	}
	var g Gate
	*in = inputs{v: v, dat: dat, sat: sat, u: u, hw: hw, zoneOK: zoneOK}
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
