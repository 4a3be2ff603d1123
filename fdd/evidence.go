package fdd

import "time"

// CONTRACT NOTE (lead): Evidence is what the fdd engine hands the rules layer
// for every terminal at every analysis step, and LoopEvidence for every loop.
// The rules layer names these fields in YAML conditions (by the `rule:` tag).
// The fdd owner may add fields (with a rule tag) but must not rename them.

// Gate is a bitmask of reasons a sample was not used for fault evidence.
type Gate uint32

// Gate reasons.
const (
	GateMissing  Gate = 1 << iota // a required input is missing
	GateRange                     // a value is outside its physical range
	GateStale                     // a value has not changed for too long (flatlined)
	GateFanOff                    // AHU fan off
	GateNoAHU                     // AHU supply air temperature unavailable
	GateNoLoop                    // loop supply temperature unavailable
	GateStartup                   // within the settling time after fan start or mode change
	GateUnsteady                  // not in steady state (not a data problem)
	GateNoModel                   // terminal has no usable coil/valve model (site data incomplete)
)

// dataGates are the gates that make a sample unusable (Evidence.Usable false).
const dataGates = GateMissing | GateRange | GateStale | GateNoAHU | GateNoLoop

// Evidence is the running evidence for one terminal at one step. Values are
// SI; NaN means "not available at this step".
type Evidence struct {
	Terminal  int       `rule:"-"`
	At        time.Time `rule:"-"`
	Gates     Gate      `rule:"-"`
	Usable    bool      `rule:"usable"` // no data gate (GateUnsteady excluded)
	Steady    bool      `rule:"steady"`
	PlantOn   bool      `rule:"plant_on"`
	FanOn     bool      `rule:"fan_on"`
	Occupied  bool      `rule:"occupied"`
	Learning  bool      `rule:"learning"`   // baseline still being learned (rated calibration in use)
	LoopShort bool      `rule:"loop_short"` // saturated (valve ≥ 90 %) and short at design HW temperature (counts toward cold-loop)

	ValveFrac  float64 `rule:"valve"`       // command 0..1
	AirflowM3s float64 `rule:"airflow_m3s"` // measured
	SupplyC    float64 `rule:"sat_c"`
	DischargeC float64 `rule:"dat_c"`
	HotWaterC  float64 `rule:"hw_c"`
	DATSetC    float64 `rule:"dat_set_c"` // discharge setpoint if known (else NaN)

	ObservedRiseK float64 `rule:"rise_k"`          // DAT − (SAT + duct gain)
	ExpectedRiseK float64 `rule:"expected_rise_k"` // model at measured flows and temperatures
	SigmaK        float64 `rule:"sigma_k"`         // 1-sigma uncertainty of the residual
	ResidualK     float64 `rule:"residual_k"`      // observed − expected
	PerfIndex     float64 `rule:"perf_index"`      // observed / expected (heating, valve open)
	ZScore        float64 `rule:"z"`               // standardised residual ResidualK / SigmaK
	DATMinusSATK  float64 `rule:"dat_minus_sat_k"` // raw DAT − SAT, no duct gain (Guideline 36 leak check)

	ClosedMinutes    float64 `rule:"closed_min"` // minutes the valve has been commanded closed
	ReversalsPerHour float64 `rule:"reversals_per_hour"`
	DATFlatMinutes   float64 `rule:"dat_flat_min"`
	DATBadMinutes    float64 `rule:"dat_bad_min"`    // minutes the DAT has been missing/out of range while other points are fine
	ZoneDeficitK     float64 `rule:"zone_deficit_k"` // smoothed heating setpoint − zone temperature (NaN without zone points)

	// The zone readings never gate a sample (see collector.ZoneOK).
	ZoneC             float64 `rule:"zone_c"`           // zone temperature as read, plausible or not (NaN when missing)
	ZoneSetC          float64 `rule:"zone_set_c"`       // zone heating setpoint as read, plausible or not (NaN when missing)
	ZoneBadMinutes    float64 `rule:"zone_bad_min"`     // minutes the zone temperature has been implausible: present outside collector.ZoneMinC..ZoneMaxC, or missing while its point is configured and the box's airflow and valve arrive
	ZoneSetBadMinutes float64 `rule:"zone_set_bad_min"` // the same for the heating setpoint (collector.ZoneSetMinC..ZoneSetMaxC)

	WastedHeatW   float64 `rule:"wasted_heat_w"`
	AddedCoolingW float64 `rule:"added_cooling_w"`
	ShortfallW    float64 `rule:"shortfall_w"`
	LeakFlowM3s   float64 `rule:"leak_flow_m3s"` // estimated leak water flow

	Scores             [scoredKinds]float64 `rule:"-"`                    // signature score 0..1 per Kind (fdd's isolation); kinds from scoredKinds on have none
	Best               Kind                 `rule:"-"`                    // kind with the highest score above threshold, or KindNone
	LeakSigmaK         float64              `rule:"leak_sigma_k"`         // 1-sigma uncertainty of LeakRiseK / OffsetK
	DesignPerfIndex    float64              `rule:"design_perf_index"`    // recent observed / expected rise at the loop's design HW temperature
	ClosedCapacityFrac float64              `rule:"closed_capacity_frac"` // closed-valve rise / full-open expected rise at the same conditions

	// Values below change only on the response cadence, a leak inversion,
	// a baseline change or a closed-valve, chart or performance update:
	// StepView rewrites them only then (the engine's pubGen and midGen).
	UAFactor        float64 `rule:"ua_factor"` // apparent UA multiplier vs baseline (1 = healthy)
	UAFactorSigma   float64 `rule:"ua_factor_sigma"`
	FlowFactor      float64 `rule:"flow_factor"` // apparent water-flow multiplier vs baseline
	FlowFactorSigma float64 `rule:"flow_factor_sigma"`
	// ShortfallHighK and ShortfallLowK are mean residuals at high (>70 %) and
	// low/mid (10-50 %) command over the recent window (starved vs fouled).
	ShortfallHighK float64 `rule:"shortfall_high_k"`
	ShortfallLowK  float64 `rule:"shortfall_low_k"`

	LeakRiseK     float64 `rule:"leak_rise_k"`     // steady rise at ~0 % command with plant on
	LeakFlowFrac  float64 `rule:"leak_flow_frac"`  // estimated leak flow / design flow
	OffsetK       float64 `rule:"offset_k"`        // steady rise with plant off / no HW (sensor bias)
	RiseValveCorr float64 `rule:"rise_valve_corr"` // correlation of rise with command over the window
	RiseSpanK     float64 `rule:"rise_span_k"`     // rise range across the command range seen
	ValveSpan     float64 `rule:"valve_span"`      // command range seen over the window

	CUSUMLowK float64 `rule:"cusum_low"` // lower CUSUM of standardised residual
	EWMAResid float64 `rule:"ewma_residual"`
	EWMALimit float64 `rule:"ewma_limit"` // EWMA control limit L·√(λ/(2−λ)), sigma units

	ExpectedSpanK float64 `rule:"expected_span_k"` // model rise range over the same command bins as RiseSpanK
	PerfAvg       float64 `rule:"perf_index_avg"`  // smoothed (30 min) performance index of steady heating samples
	PerfHigh      float64 `rule:"perf_high"`       // observed / expected rise at high (>70 %) command over the response window
	PerfLow       float64 `rule:"perf_low"`        // observed / expected rise at low/mid (10-50 %) command over the response window

	ClosedOffsetK      float64 `rule:"closed_offset_k"`       // intercept a of the closed-valve fit rise = a + s·h (sensor offset with the plant on)
	ClosedOffsetSigmaK float64 `rule:"closed_offset_sigma_k"` // 1-sigma of ClosedOffsetK
	ClosedHeatK        float64 `rule:"closed_heat_k"`         // mean heat-like part s·h̄ of the closed-valve rise (scales as 1/V and with T_hw)
	PerfHighLast       float64 `rule:"perf_high_last"`        // last PerfHigh seen (kept until the command is high again)
	StarvedShare       float64 `rule:"starved_share"`         // 0..1: SSR share; near 1 when a flow limit explains the shortfall far better than a UA loss
	ClosedRiseK        float64 `rule:"closed_rise_k"`         // raw steady rise with the valve commanded closed (LeakRiseK takes off the heat a command up to the closed threshold gives)
	OnsetHours         float64 `rule:"onset_h"`               // hours from the last healthy high-command performance to the first loss (NaN: short since monitoring began)
	RejectedUAFactor   float64 `rule:"rejected_ua_factor"`    // learned UA factor rejected as unlike the rated coil (NaN if none)

	// Capacity against the coil's own healthy level, which takes a per-coil
	// calibration bias of the model (rated, or learned) out of a capacity
	// loss.
	PerfHighRef float64 `rule:"perf_high_ref"` // mean high-command performance while healthy against the current model (1 until seen healthy)
	PerfHighRel float64 `rule:"perf_high_rel"` // PerfHigh / PerfHighRef: high-command capacity relative to the coil's demonstrated healthy level

	// pad makes the record 640 bytes, ten cache lines: in the engine's
	// records (a large, page-aligned array) each record then starts a line,
	// so the fields up to ClosedCapacityFrac, the ones written on every
	// active sample and read by the rules' prefilter, lie in six lines.
	_ [8]byte
}

// LoopEvidence is the running evidence for one hot-water loop at one step.
type LoopEvidence struct {
	Loop          int       `rule:"-"`
	At            time.Time `rule:"-"`
	PlantOn       bool      `rule:"plant_on"`
	SupplyC       float64   `rule:"hw_c"`
	ExpectedC     float64   `rule:"hw_expected_c"`   // design or reset-schedule value
	Terminals     int       `rule:"terminals"`       // terminals with usable heating evidence
	ShortFraction float64   `rule:"short_fraction"`  // share of those short of expected rise
	MeanPerfIndex float64   `rule:"mean_perf_index"` // mean recent DesignPerfIndex of those terminals

	// Added by the fdd engine (additive).
	Short      int     `rule:"short"`       // terminals counted short (Evidence.LoopShort)
	LowSupplyK float64 `rule:"hw_low_k"`    // ExpectedC − SupplyC (NaN if the supply temperature is not measured)
	Score      float64 `rule:"score"`       // cold-loop signature score 0..1
	Measured   bool    `rule:"hw_measured"` // SupplyC is measured (not the design value)
}
