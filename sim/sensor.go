package sim

import (
	"math"
	"math/rand/v2"

	"risewatch/units"
)

// failMode says how a failed sensor reads.
type failMode int

const (
	failNone     failMode = iota
	failFlatline          // frozen at the last value (controller input stuck)
	failOpen              // open circuit: a thermistor input reads the bottom of its range
	failShort             // short circuit: reads the top of its range
)

// Range ends a typical BAS thermistor input reports on an open or shorted
// sensor (−40 °F and 250 °F; common practice).
var (
	sensorOpenC  = units.FToC(-40)
	sensorShortC = units.FToC(250)
)

// tempSensor is a temperature transmitter: first-order element lag, fixed
// calibration bias, white noise, and the export resolution in °F.
type tempSensor struct {
	tauS, biasK, noiseK, quantF float64
	lagC                        float64
	primed                      bool
	last                        float64
	rng                         *rand.Rand
}

// read returns what the BAS reports for true temperature tC after dt
// seconds, with an extra bias (fault) and failure mode.
func (s *tempSensor) read(tC, dt, extraBiasK float64, fail failMode) float64 {
	if !s.primed {
		s.lagC, s.primed = tC, true
	} else if s.tauS > 0 {
		s.lagC += (tC - s.lagC) * (1 - math.Exp(-dt/s.tauS))
	} else {
		s.lagC = tC
	}
	noise := s.noiseK * s.rng.NormFloat64() // drawn every step so faults do not shift the random stream
	switch fail {
	case failFlatline:
		return s.last
	case failOpen:
		return sensorOpenC
	case failShort:
		return sensorShortC
	}
	v := s.lagC + s.biasK + extraBiasK + noise
	if s.quantF > 0 {
		v = units.FToC(math.Round(units.CToF(v)/s.quantF) * s.quantF)
	}
	s.last = v
	return v
}

// flowSensor is a VAV box airflow measurement from a velocity-pressure
// pickup: the pickup amplifies the inlet velocity pressure by amp, the
// transducer adds an offset and noise (Pa), and the k-factor has a gain
// error. The flow reading q = (1+g)·A·sqrt(2·VP_meas/(amp·ρ)) so a fixed
// pressure error weighs more at low velocity pressure: the error grows as
// flow falls (ASHRAE RP-1353, Liu et al. 2013, on low-flow accuracy).
type flowSensor struct {
	areaM2, amp, offsetPa, noisePa, gainErr, quantCFM float64
	rng                                               *rand.Rand
}

func (f *flowSensor) vpOffsetFlow2() float64 {
	return 2 * f.offsetPa * f.areaM2 * f.areaM2 / (f.amp * stdAirDensity)
}

// trueForSetpoint is the true airflow at which the (noise-free) reading
// equals setM3s: the box's flow loop trusts its sensor.
func (f *flowSensor) trueForSetpoint(setM3s float64) float64 {
	if setM3s <= 0 {
		return 0
	}
	v := setM3s / (1 + f.gainErr)
	return math.Sqrt(math.Max(0, v*v-f.vpOffsetFlow2()))
}

// read is the reported airflow (m³/s) for true airflow q.
func (f *flowSensor) read(q float64) float64 {
	n := f.noisePa * f.rng.NormFloat64()
	v2 := q*q + 2*(f.offsetPa+n)*f.areaM2*f.areaM2/(f.amp*stdAirDensity)
	r := (1 + f.gainErr) * math.Sqrt(math.Max(0, v2))
	if f.quantCFM > 0 {
		r = units.CFMToM3s(math.Round(units.M3sToCFM(r)/f.quantCFM) * f.quantCFM)
	}
	return r
}

// quantPct rounds a fraction to the export resolution of a percent point (0.1 %).
func quantPct(x float64) float64 { return math.Round(x*1000) / 1000 }

// quantCFM rounds an airflow to whole cfm.
func quantCFM(q float64) float64 { return units.CFMToM3s(math.Round(units.M3sToCFM(q))) }
