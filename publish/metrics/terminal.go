package metrics

import (
	"sync"

	"github.com/prometheus/client_golang/prometheus"

	"risewatch/fdd"
)

var terminalLabels = []string{"site", "terminal", "ahu", "loop"}

// Terminal gauges, in the order of termVals.
const (
	tObserved = iota
	tExpected
	tSigma
	tResidual
	tPerf
	tUA
	tFlow
	tWasted
	tCooling
	tShortfall
	tUsable
	tAt
	nTermGauges
)

var terminalGaugeDefs = [nTermGauges]struct{ name, help string }{
	{"observed_rise_celsius", "Observed air temperature rise across the reheat coil, DAT - (SAT + duct gain)."},
	{"expected_rise_celsius", "Rise the coil model expects at the measured flows and temperatures."},
	{"rise_sigma_celsius", "One-sigma uncertainty of the rise residual."},
	{"rise_residual_celsius", "Observed minus expected rise."},
	{"performance_index_ratio", "Observed rise over expected rise (heating, valve open)."},
	{"apparent_ua_ratio", "Apparent coil UA multiplier against the baseline (1 = healthy)."},
	{"apparent_water_flow_ratio", "Apparent water-flow multiplier against the baseline (1 = healthy)."},
	{"wasted_heat_watts", "Estimated heat delivered that was not wanted (leaks)."},
	{"added_cooling_watts", "Estimated cooling spent removing unwanted heat."},
	{"heat_shortfall_watts", "Estimated heat wanted but not delivered."},
	{"usable", "1 when the latest step passed the data-quality gates, else 0."},
	{"evidence_timestamp_seconds", "Unix time of the latest analysis step for the terminal."},
}

// termVals is one terminal's newest published values (96 octets).
type termVals [nTermGauges]float64

// terminalCollector exports every terminal's newest evidence as constant
// metrics built at scrape time from one flat array, so a terminal costs
// 96 octets between scrapes instead of twelve gauge objects with their
// label sets. Labels come from the site model when scraped.
type terminalCollector struct {
	m     *Metrics
	descs [nTermGauges]*prometheus.Desc
	mu    sync.RWMutex
	vals  []termVals
}

type loopGauges struct {
	supply, expected, short, perf prometheus.Gauge
}

func (m *Metrics) newTerminalMetrics() {
	tc := &terminalCollector{m: m, vals: make([]termVals, len(m.site.Terminals))}
	for i, d := range terminalGaugeDefs {
		tc.descs[i] = prometheus.NewDesc(prometheus.BuildFQName(namespace, "terminal", d.name), d.help, terminalLabels, nil)
	}
	m.term = tc
	m.reg.MustRegister(tc) // streamed by the handler, not in m.small

	lgv := func(name, help string) *prometheus.GaugeVec {
		v := prometheus.NewGaugeVec(prometheus.GaugeOpts{Namespace: namespace, Subsystem: "loop", Name: name, Help: help}, []string{"site", "loop"})
		m.both().MustRegister(v)
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

// Describe sends the terminal gauges' descriptors.
func (tc *terminalCollector) Describe(ch chan<- *prometheus.Desc) {
	for _, d := range tc.descs {
		ch <- d
	}
}

// Collect sends every terminal's values, gauge by gauge.
func (tc *terminalCollector) Collect(ch chan<- prometheus.Metric) {
	s := tc.m.site
	tc.mu.RLock()
	defer tc.mu.RUnlock()
	for i := range tc.vals {
		t := &s.Terminals[i]
		ls := entityLabels(s.Name, t.ID, t.AHU, t.Loop)
		for g, d := range tc.descs {
			ch <- &gauge{desc: d, labels: ls, value: tc.vals[i][g]}
		}
	}
}

// value returns terminal ti's published value of gauge g (tests).
func (tc *terminalCollector) value(ti, g int) float64 {
	tc.mu.RLock()
	defer tc.mu.RUnlock()
	return tc.vals[ti][g]
}

// ObserveEvidence publishes one terminal's evidence for a step. Evidence for
// a terminal index outside the site is counted as unknown and dropped.
func (m *Metrics) ObserveEvidence(ev *fdd.Evidence) {
	tc := m.term
	if ev.Terminal < 0 || ev.Terminal >= len(tc.vals) {
		m.unknown.Inc()
		return
	}
	tc.mu.Lock()
	v := &tc.vals[ev.Terminal]
	v[tObserved], v[tExpected], v[tSigma], v[tResidual] = ev.ObservedRiseK, ev.ExpectedRiseK, ev.SigmaK, ev.ResidualK
	v[tPerf], v[tUA], v[tFlow] = ev.PerfIndex, ev.UAFactor, ev.FlowFactor
	v[tWasted], v[tCooling], v[tShortfall] = ev.WastedHeatW, ev.AddedCoolingW, ev.ShortfallW
	v[tUsable] = 0
	if ev.Usable {
		v[tUsable] = 1
	}
	if !ev.At.IsZero() {
		v[tAt] = float64(ev.At.UnixNano()) / 1e9
	}
	tc.mu.Unlock()
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
