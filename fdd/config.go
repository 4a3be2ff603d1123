package fdd

import (
	"fmt"
	"time"
)

// Accuracy holds 1-sigma standard uncertainties of the measured inputs and of
// the model. They are propagated through the coil model into SigmaK (see
// uncertainty.go). Defaults are marked with their source and how sure it is:
// [P] published, [C] common practice, [I] engineering inference.
type Accuracy struct {
	// DischargeK: installed VAV discharge sensor. Duct thermistor/RTD elements
	// are rated about ±0.2–0.5 °C, installed error near the coil is larger
	// (stratification, radiation) [C]. Default 0.5 K.
	DischargeK float64
	// SupplyK: AHU supply air sensor, better mixed than the DAT [C]. Default 0.3 K.
	SupplyK float64
	// HotWaterK: hot-water supply temperature sensor (immersion well) [C]. Default 0.5 K.
	HotWaterK float64
	// AirflowFrac: relative airflow error. Pressure-independent controllers hold
	// about ±5 % down to ~20 % of rated flow (vendor guidance), ±10–20 % at Vmin
	// is plausible (ASHRAE RP-1353, Liu et al. 2013) [P/C]. Default 0.10.
	AirflowFrac float64
	// AirflowFloorM3s is an absolute airflow error floor for very low flows [C].
	// Default 0.005 m³/s (≈ 10 cfm).
	AirflowFloorM3s float64
	// DuctGainK: uncertainty of the SAT-to-box duct gain; the gain itself is
	// typically a few tenths of a kelvin up to 1–2 K [C]. Default 0.5 K.
	DuctGainK float64
	// WaterFlowFrac: relative uncertainty of the water flow computed from the
	// valve characteristic and branch hydraulics (Cv tolerance, unknown branch
	// differential pressure) [I]. Default 0.15.
	WaterFlowFrac float64
	// ModelFrac: relative uncertainty of the calibrated coil model's rise
	// (correlation scatter after calibration to the rated point) [I]. Default 0.05.
	ModelFrac float64
}

// DefaultAccuracy returns the default sensor and model uncertainties.
func DefaultAccuracy() Accuracy {
	return Accuracy{
		DischargeK:      0.5,
		SupplyK:         0.3,
		HotWaterK:       0.5,
		AirflowFrac:     0.10,
		AirflowFloorM3s: 0.005,
		DuctGainK:       0.5,
		WaterFlowFrac:   0.15,
		ModelFrac:       0.05,
	}
}

// Config tunes the evidence engine. Zero fields take their defaults in
// NewEngine; DefaultConfig shows them.
type Config struct {
	Step     time.Duration // analysis grid spacing; default 1 min
	Accuracy Accuracy

	// Start-up lockout after the AHU fan starts or the plant changes state.
	// Default 30 min: the Guideline 36 reference implementation in the LBNL
	// Modelica Buildings Library waits staTim = 1800 s after the fan starts [P].
	StartupMinutes float64
	// ClosedValveFrac: command at or below which the valve counts as closed.
	// Default 0.05, the valve hysteresis of the same Modelica implementation [P].
	ClosedValveFrac float64
	// ClosedMinutes before a closed valve's rise counts as leak evidence.
	// Default 15 min, ASHRAE Guideline 36 §5.6.6 leaking-valve alarm [P].
	ClosedMinutes float64
	// LeakThresholdK is the discharge-above-supply margin with the valve
	// closed. Default 3 K (5 °F), ASHRAE Guideline 36 §5.6.6 [P].
	LeakThresholdK float64
	// LowDischargeK is the Guideline 36 low-DAT margin below setpoint.
	// Default 8 K (15 °F), ASHRAE Guideline 36 §5.6.6 level-3 alarm [P].
	LowDischargeK float64

	// SteadyWindow is the sliding window length in steps (≤ 32). The valve,
	// airflow, SAT and HW temperature must be steady over the whole window,
	// the DAT over its last half, which tolerates the DAT lag after a valve
	// move. Default 16 (16 min at 1-min steps) [I].
	SteadyWindow int
	// Steady limits (per-minute slopes and standard deviations) [I].
	SteadyValveSpan     float64 // max valve travel over the window, fraction; default 0.04
	SteadyAirflowFrac   float64 // max airflow std / mean; default 0.05
	SteadyTempSlopeKMin float64 // max |slope| of SAT and DAT, K/min; default 0.08
	SteadyTempStdK      float64 // max std of SAT and DAT, K; default 0.4
	SteadyHWSlopeKMin   float64 // max |slope| of HW supply, K/min; default 0.2

	// FlatlineMinutes: a DAT that has not changed at all for this long while
	// the fan runs is stale [C]. Default 120 min.
	FlatlineMinutes float64

	// ResponseHours is the time constant of the rise-versus-command bins and
	// correlation (stuck, reversed, starved vs fouled). Default 24 h [I].
	ResponseHours float64
	// FactorHours is the time constant of the running apparent UA and flow
	// factors. Default 48 h [I].
	FactorHours float64
	// ChartBlock is the number of steady heating samples averaged into one
	// control-chart observation (batch means against autocorrelation).
	// Default 15 [C].
	ChartBlock int
	// CUSUM reference value k and EWMA weight λ for the standardised residual.
	// Defaults k = 0.5, λ = 0.1: the usual design values for detecting a
	// one-sigma shift (Montgomery, Introduction to Statistical Quality
	// Control; Lucas & Saccucci, Technometrics 32(1), 1990) [P].
	CUSUMK     float64
	EWMALambda float64
	// EWMAL is the EWMA limit width in sigmas (Lucas & Saccucci 1990: L ≈ 2.7–3) [P]. Default 3.
	EWMAL float64

	// HuntingDeadband is the valve travel that counts as a direction change
	// for the reversal counter. Default 0.10 [I].
	HuntingDeadband float64

	// Learning: a baseline is fitted once LearnMinPoints steady heating
	// points spanning LearnMinHours have been seen (0 points: rated
	// calibration only). A fit whose UA or flow factor falls outside
	// [1/BaselineBand, BaselineBand] is rejected as implausible for a healthy
	// coil and the rated calibration stays. Defaults 48 points, 24 h, 1.6 [I].
	LearnMinPoints int
	LearnMinHours  float64
	BaselineBand   float64
	// BaselineUABand is the tighter band on a learned UA factor: the rated
	// calibration (coilmodel.Calibrate at the submittal point) fixes UA within
	// the scatter of the air-side correlation and the installed-versus-rated
	// difference, about ±10–15 % [I]; a learned factor outside
	// [1/BaselineUABand, BaselineUABand] is a coil that is not as rated (fouled
	// from the start, wrong coil) and is reported, not absorbed. Default 1.25.
	BaselineUABand float64
	// ZoneUnmetK: a zone this far below its heating setpoint has unmet
	// heating demand (a saturated box on a cold loop counts toward the
	// cold-loop finding only then, when zone points exist) [I]. Default 0.5 K.
	ZoneUnmetK float64

	// ScoreThreshold: the minimum signature score for Best. Default 0.5.
	ScoreThreshold float64
	// HumidityRatio of the air for sensible heat (kg/kg dry air). Default
	// 0.008, a typical indoor value [C].
	HumidityRatio float64
	// AirflowActual: the BAS airflow is actual (not standard-air) volume. When
	// false (default, pressure-independent boxes are calibrated in standard
	// air) the energy figures use standard air density 1.204 kg/m³ (ASHRAE
	// Handbook Fundamentals ch. 1).
	AirflowActual bool
	// ModelEvery bounds how often the full coil model is evaluated for one
	// terminal (steps); in between, a first-order Taylor step from the last
	// evaluation is used while the inputs stay inside a trust region.
	// Default 15.
	ModelEvery int
}

// DefaultConfig returns the defaults documented on Config.
func DefaultConfig() Config {
	return Config{
		Step:                time.Minute,
		Accuracy:            DefaultAccuracy(),
		StartupMinutes:      30,
		ClosedValveFrac:     0.05,
		ClosedMinutes:       15,
		LeakThresholdK:      3,
		LowDischargeK:       8,
		SteadyWindow:        16,
		SteadyValveSpan:     0.04,
		SteadyAirflowFrac:   0.05,
		SteadyTempSlopeKMin: 0.08,
		SteadyTempStdK:      0.4,
		SteadyHWSlopeKMin:   0.2,
		FlatlineMinutes:     120,
		ResponseHours:       24,
		FactorHours:         48,
		ChartBlock:          15,
		CUSUMK:              0.5,
		EWMALambda:          0.1,
		EWMAL:               3,
		HuntingDeadband:     0.10,
		LearnMinPoints:      48,
		LearnMinHours:       24,
		BaselineBand:        1.6,
		BaselineUABand:      1.25,
		ZoneUnmetK:          0.5,
		ScoreThreshold:      0.5,
		HumidityRatio:       0.008,
		ModelEvery:          15,
	}
}

// withDefaults fills zero fields and checks the result.
func (c Config) withDefaults() (Config, error) {
	d := DefaultConfig()
	fillF := func(v *float64, def float64) {
		if *v == 0 {
			*v = def
		}
	}
	if c.Step == 0 {
		c.Step = d.Step
	}
	a, da := &c.Accuracy, d.Accuracy
	fillF(&a.DischargeK, da.DischargeK)
	fillF(&a.SupplyK, da.SupplyK)
	fillF(&a.HotWaterK, da.HotWaterK)
	fillF(&a.AirflowFrac, da.AirflowFrac)
	fillF(&a.AirflowFloorM3s, da.AirflowFloorM3s)
	fillF(&a.DuctGainK, da.DuctGainK)
	fillF(&a.WaterFlowFrac, da.WaterFlowFrac)
	fillF(&a.ModelFrac, da.ModelFrac)
	fillF(&c.StartupMinutes, d.StartupMinutes)
	fillF(&c.ClosedValveFrac, d.ClosedValveFrac)
	fillF(&c.ClosedMinutes, d.ClosedMinutes)
	fillF(&c.LeakThresholdK, d.LeakThresholdK)
	fillF(&c.LowDischargeK, d.LowDischargeK)
	if c.SteadyWindow == 0 {
		c.SteadyWindow = d.SteadyWindow
	}
	fillF(&c.SteadyValveSpan, d.SteadyValveSpan)
	fillF(&c.SteadyAirflowFrac, d.SteadyAirflowFrac)
	fillF(&c.SteadyTempSlopeKMin, d.SteadyTempSlopeKMin)
	fillF(&c.SteadyTempStdK, d.SteadyTempStdK)
	fillF(&c.SteadyHWSlopeKMin, d.SteadyHWSlopeKMin)
	fillF(&c.FlatlineMinutes, d.FlatlineMinutes)
	fillF(&c.ResponseHours, d.ResponseHours)
	fillF(&c.FactorHours, d.FactorHours)
	if c.ChartBlock == 0 {
		c.ChartBlock = d.ChartBlock
	}
	fillF(&c.CUSUMK, d.CUSUMK)
	fillF(&c.EWMALambda, d.EWMALambda)
	fillF(&c.EWMAL, d.EWMAL)
	fillF(&c.HuntingDeadband, d.HuntingDeadband)
	if c.LearnMinPoints == 0 {
		c.LearnMinPoints = d.LearnMinPoints
	}
	if c.LearnMinPoints < 0 {
		c.LearnMinPoints = 0 // negative: learning switched off
	}
	fillF(&c.LearnMinHours, d.LearnMinHours)
	fillF(&c.BaselineBand, d.BaselineBand)
	fillF(&c.BaselineUABand, d.BaselineUABand)
	fillF(&c.ZoneUnmetK, d.ZoneUnmetK)
	fillF(&c.ScoreThreshold, d.ScoreThreshold)
	fillF(&c.HumidityRatio, d.HumidityRatio)
	if c.ModelEvery == 0 {
		c.ModelEvery = d.ModelEvery
	}
	switch {
	case c.Step <= 0:
		return c, fmt.Errorf("fdd config: step %v must be positive", c.Step)
	case c.SteadyWindow < 4 || c.SteadyWindow > maxWindow:
		return c, fmt.Errorf("fdd config: steady window %d must be 4..%d steps", c.SteadyWindow, maxWindow)
	case c.ClosedValveFrac < 0 || c.ClosedValveFrac >= 0.5:
		return c, fmt.Errorf("fdd config: closed valve fraction %g must be in [0, 0.5)", c.ClosedValveFrac)
	case c.EWMALambda <= 0 || c.EWMALambda > 1:
		return c, fmt.Errorf("fdd config: EWMA lambda %g must be in (0, 1]", c.EWMALambda)
	case c.BaselineBand <= 1 || c.BaselineUABand <= 1:
		return c, fmt.Errorf("fdd config: baseline bands %g and %g must be > 1", c.BaselineBand, c.BaselineUABand)
	case c.ChartBlock < 1 || c.ModelEvery < 1:
		return c, fmt.Errorf("fdd config: chart block and model cadence must be ≥ 1")
	}
	for name, v := range map[string]float64{
		"discharge accuracy": a.DischargeK, "supply accuracy": a.SupplyK, "hot-water accuracy": a.HotWaterK,
		"airflow accuracy": a.AirflowFrac, "duct gain accuracy": a.DuctGainK,
		"water flow accuracy": a.WaterFlowFrac, "model accuracy": a.ModelFrac,
	} {
		if v < 0 {
			return c, fmt.Errorf("fdd config: %s %g must not be negative", name, v)
		}
	}
	return c, nil
}

// stepsFor converts minutes to a whole number of steps (at least 1).
func (c Config) stepsFor(minutes float64) int {
	n := int(minutes*float64(time.Minute)/float64(c.Step) + 0.5)
	if n < 1 {
		n = 1
	}
	return n
}
