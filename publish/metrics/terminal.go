package metrics

import (
	"github.com/prometheus/client_golang/prometheus"

	"risewatch/fdd"
)

var terminalLabels = []string{"site", "terminal", "ahu", "loop"}

type terminalGauges struct {
	observed, expected, sigma, residual, perf, ua, flow prometheus.Gauge
	wasted, cooling, shortfall, usable, at              prometheus.Gauge
}

type loopGauges struct {
	supply, expected, short, perf prometheus.Gauge
}

func (m *Metrics) newTerminalMetrics() {
	gv := func(name, help string) *prometheus.GaugeVec {
		v := prometheus.NewGaugeVec(prometheus.GaugeOpts{Namespace: namespace, Subsystem: "terminal", Name: name, Help: help}, terminalLabels)
		m.reg.MustRegister(v)
		return v
	}
	observed := gv("observed_rise_celsius", "Observed air temperature rise across the reheat coil, DAT - (SAT + duct gain).")
	expected := gv("expected_rise_celsius", "Rise the coil model expects at the measured flows and temperatures.")
	sigma := gv("rise_sigma_celsius", "One-sigma uncertainty of the rise residual.")
	residual := gv("rise_residual_celsius", "Observed minus expected rise.")
	perf := gv("performance_index_ratio", "Observed rise over expected rise (heating, valve open).")
	ua := gv("apparent_ua_ratio", "Apparent coil UA multiplier against the baseline (1 = healthy).")
	flow := gv("apparent_water_flow_ratio", "Apparent water-flow multiplier against the baseline (1 = healthy).")
	wasted := gv("wasted_heat_watts", "Estimated heat delivered that was not wanted (leaks).")
	cooling := gv("added_cooling_watts", "Estimated cooling spent removing unwanted heat.")
	shortfall := gv("heat_shortfall_watts", "Estimated heat wanted but not delivered.")
	usable := gv("usable", "1 when the latest step passed the data-quality gates, else 0.")
	at := gv("evidence_timestamp_seconds", "Unix time of the latest analysis step for the terminal.")

	m.term = make([]terminalGauges, len(m.site.Terminals))
	for i, t := range m.site.Terminals {
		lv := []string{m.site.Name, t.ID, t.AHU, t.Loop}
		m.term[i] = terminalGauges{
			observed: observed.WithLabelValues(lv...), expected: expected.WithLabelValues(lv...),
			sigma: sigma.WithLabelValues(lv...), residual: residual.WithLabelValues(lv...),
			perf: perf.WithLabelValues(lv...), ua: ua.WithLabelValues(lv...), flow: flow.WithLabelValues(lv...),
			wasted: wasted.WithLabelValues(lv...), cooling: cooling.WithLabelValues(lv...),
			shortfall: shortfall.WithLabelValues(lv...), usable: usable.WithLabelValues(lv...), at: at.WithLabelValues(lv...),
		}
	}

	lgv := func(name, help string) *prometheus.GaugeVec {
		v := prometheus.NewGaugeVec(prometheus.GaugeOpts{Namespace: namespace, Subsystem: "loop", Name: name, Help: help}, []string{"site", "loop"})
		m.reg.MustRegister(v)
		return v
	}
	supply := lgv("supply_temperature_celsius", "Hot-water loop supply temperature.")
	lexp := lgv("expected_supply_temperature_celsius", "Design or reset-schedule loop supply temperature.")
	short := lgv("short_terminals_ratio", "Share of the loop's usable terminals short of their expected rise.")
	lperf := lgv("mean_performance_index_ratio", "Mean performance index of the loop's usable terminals.")
	m.loops = make([]loopGauges, len(m.site.Loops))
	for i, l := range m.site.Loops {
		lv := []string{m.site.Name, l.ID}
		m.loops[i] = loopGauges{supply: supply.WithLabelValues(lv...), expected: lexp.WithLabelValues(lv...),
			short: short.WithLabelValues(lv...), perf: lperf.WithLabelValues(lv...)}
	}
}

// ObserveEvidence publishes one terminal's evidence for a step. Evidence for
// a terminal index outside the site is counted as unknown and dropped.
func (m *Metrics) ObserveEvidence(ev *fdd.Evidence) {
	if ev.Terminal < 0 || ev.Terminal >= len(m.term) {
		m.unknown.Inc()
		return
	}
	g := &m.term[ev.Terminal]
	g.observed.Set(ev.ObservedRiseK)
	g.expected.Set(ev.ExpectedRiseK)
	g.sigma.Set(ev.SigmaK)
	g.residual.Set(ev.ResidualK)
	g.perf.Set(ev.PerfIndex)
	g.ua.Set(ev.UAFactor)
	g.flow.Set(ev.FlowFactor)
	g.wasted.Set(ev.WastedHeatW)
	g.cooling.Set(ev.AddedCoolingW)
	g.shortfall.Set(ev.ShortfallW)
	if ev.Usable {
		g.usable.Set(1)
	} else {
		g.usable.Set(0)
	}
	if !ev.At.IsZero() {
		g.at.Set(float64(ev.At.UnixNano()) / 1e9)
	}
}

// ObserveLoop publishes one loop's evidence for a step.
func (m *Metrics) ObserveLoop(ev *fdd.LoopEvidence) {
	if ev.Loop < 0 || ev.Loop >= len(m.loops) {
		m.unknown.Inc()
		return
	}
	g := &m.loops[ev.Loop]
	g.supply.Set(ev.SupplyC)
	g.expected.Set(ev.ExpectedC)
	g.short.Set(ev.ShortFraction)
	g.perf.Set(ev.MeanPerfIndex)
}
