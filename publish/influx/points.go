package influx

import (
	"time"

	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/site"
)

// Measurements written by the sink. Tags are the same bounded set as the
// Prometheus labels (see publish/metrics); fields carry SI values with the
// unit in the name (_c °C, _k kelvin difference, _m3s, _w, _frac 0..1).
const (
	MeasTerminal = "risewatch_terminal"    // one line per terminal per analysis step
	MeasLoop     = "risewatch_loop"        // one line per loop per analysis step
	MeasFault    = "risewatch_fault_event" // one line per fault transition
)

var entityKindNames = map[rules.EntityKind]string{
	rules.EntityTerminal: "terminal", rules.EntityLoop: "loop", rules.EntityAHU: "ahu",
}

// appendEvidence writes a terminal's observations, expected values and
// residuals at the step time ev.At. Tags: ahu, loop, site, terminal.
func appendEvidence(b *lineBuilder, s *site.Site, ev *fdd.Evidence) bool {
	if ev.Terminal < 0 || ev.Terminal >= len(s.Terminals) || ev.At.IsZero() {
		return false
	}
	t := &s.Terminals[ev.Terminal]
	b.begin(MeasTerminal)
	b.tag("ahu", t.AHU)
	b.tag("loop", t.Loop)
	b.tag("site", s.Name)
	b.tag("terminal", t.ID)
	// observations
	b.float("valve_frac", ev.ValveFrac)
	b.float("airflow_m3s", ev.AirflowM3s)
	b.float("supply_c", ev.SupplyC)
	b.float("discharge_c", ev.DischargeC)
	b.float("hot_water_c", ev.HotWaterC)
	b.float("dat_set_c", ev.DATSetC)
	b.bool("plant_on", ev.PlantOn)
	b.bool("fan_on", ev.FanOn)
	b.bool("occupied", ev.Occupied)
	b.bool("usable", ev.Usable)
	b.bool("steady", ev.Steady)
	b.int("gates", int64(ev.Gates))
	// model and residuals
	b.float("observed_rise_k", ev.ObservedRiseK)
	b.float("expected_rise_k", ev.ExpectedRiseK)
	b.float("sigma_k", ev.SigmaK)
	b.float("residual_k", ev.ResidualK)
	b.float("perf_index", ev.PerfIndex)
	b.float("ua_factor", ev.UAFactor)
	b.float("flow_factor", ev.FlowFactor)
	b.float("leak_rise_k", ev.LeakRiseK)
	b.float("cusum_low", ev.CUSUMLowK)
	b.float("ewma_residual_k", ev.EWMAResid)
	if ev.Best != fdd.KindNone {
		b.string("best_kind", ev.Best.String())
	}
	// energy
	b.float("wasted_heat_w", ev.WastedHeatW)
	b.float("added_cooling_w", ev.AddedCoolingW)
	b.float("shortfall_w", ev.ShortfallW)
	return b.end(ev.At)
}

// appendLoop writes a loop's evidence at ev.At. Tags: loop, site.
func appendLoop(b *lineBuilder, s *site.Site, ev *fdd.LoopEvidence) bool {
	if ev.Loop < 0 || ev.Loop >= len(s.Loops) || ev.At.IsZero() {
		return false
	}
	b.begin(MeasLoop)
	b.tag("loop", s.Loops[ev.Loop].ID)
	b.tag("site", s.Name)
	b.bool("plant_on", ev.PlantOn)
	b.float("supply_c", ev.SupplyC)
	b.float("expected_c", ev.ExpectedC)
	b.int("terminals", int64(ev.Terminals))
	b.float("short_frac", ev.ShortFraction)
	b.float("mean_perf_index", ev.MeanPerfIndex)
	return b.end(ev.At)
}

// appendTransition writes a fault event at tr.At. Tags: ahu, entity,
// entity_kind, kind, loop, site, to_state (so two transitions of one fault
// in the same step stay two points).
func appendTransition(b *lineBuilder, s *site.Site, tr *rules.Transition) bool {
	if tr.At.IsZero() || tr.Entity == "" {
		return false
	}
	b.begin(MeasFault)
	b.tag("ahu", tr.AHU)
	b.tag("entity", tr.Entity)
	b.tag("entity_kind", entityKindNames[tr.EntityKind])
	b.tag("kind", tr.Kind.String())
	b.tag("loop", tr.Loop)
	b.tag("site", s.Name)
	b.tag("to_state", tr.To.String())
	b.string("fault_id", tr.FaultID)
	b.string("from_state", tr.From.String())
	b.string("rule", tr.Rule)
	b.int("severity", int64(tr.Severity))
	b.float("confidence", tr.Confidence)
	active := tr.To == rules.StateOpen || tr.To == rules.StateAcked
	b.bool("active", active)
	if !tr.Since.IsZero() {
		b.int("since_unix_s", tr.Since.Unix())
	}
	b.float("observed_rise_k", tr.Evidence.ObservedRiseK)
	b.float("expected_rise_k", tr.Evidence.ExpectedRiseK)
	b.float("ua_factor", tr.Evidence.UAFactor)
	b.float("flow_factor", tr.Evidence.FlowFactor)
	b.float("leak_rise_k", tr.Evidence.LeakRiseK)
	b.float("wasted_heat_w", tr.Impact.WastedHeatW)
	b.float("added_cooling_w", tr.Impact.AddedCoolingW)
	b.float("shortfall_w", tr.Impact.ShortfallW)
	b.float("weekly_cost", tr.Impact.WeeklyCost)
	b.string("message", tr.Message)
	return b.end(tr.At)
}

// stepKey is the outbox key of one chunk of a step's points.
func stepKey(at time.Time, chunk int, sum uint64) string {
	return "influx/" + at.UTC().Format(time.RFC3339Nano) + "/" + itoa(chunk) + "/" + hex16(sum)
}
