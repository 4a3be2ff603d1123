package sim

import "math"

// actuator is a valve actuator and stem: the position follows the command
// at a limited stroke speed, through a dead band (backlash/hysteresis: the
// stem only moves once the command has moved half the band past it, and then
// lags it by half the band) and stiction (the stem sticks until the pending
// move exceeds the stick band, then slips the whole way). Positions 0..1.
type actuator struct {
	strokeS   float64 // full-stroke time, s
	deadBand  float64 // hysteresis width, fraction of stroke
	stickBand float64 // stiction band, fraction of stroke
	pos       float64
}

// actuatorFaults are the actuator-side fault parameters.
type actuatorFaults struct {
	stuck    bool
	stuckAt  float64 // position while stuck
	reversed bool    // wired or configured backwards: position follows 1 − command
}

// step advances the actuator by dt seconds toward command cmd (0..1) and
// returns the new stem position.
func (a *actuator) step(cmd, dt float64, f actuatorFaults) float64 {
	if f.stuck {
		a.pos = f.stuckAt
		return a.pos
	}
	c := clamp01(cmd)
	if f.reversed {
		c = 1 - c
	}
	target := a.pos
	half := a.deadBand / 2
	switch {
	case c > a.pos+half:
		target = c - half
	case c < a.pos-half:
		target = c + half
	}
	if c <= 0 {
		target = 0 // actuators drive to the end stop at 0 % and 100 %
	} else if c >= 1 {
		target = 1
	}
	move := target - a.pos
	if math.Abs(move) < a.stickBand && target != 0 && target != 1 {
		return a.pos
	}
	maxMove := dt / math.Max(a.strokeS, 1e-3)
	move = math.Max(-maxMove, math.Min(maxMove, move))
	a.pos = clamp01(a.pos + move)
	return a.pos
}
