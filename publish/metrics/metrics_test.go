package metrics

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"net"
	"net/http"
	"net/http/httptest"
	"os"
	"os/exec"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"

	"risewatch/fdd"
	"risewatch/internal/testenv"
	"risewatch/rules"
	"risewatch/site"
)

// testSite is an invented two-terminal building.
func testSite() *site.Site {
	s := &site.Site{
		Name:      "north-campus",
		Loops:     []site.Loop{{ID: "HW-1"}},
		AHUs:      []site.AHU{{ID: "AHU-2"}},
		Terminals: []site.Terminal{{ID: "VAV-2-07", AHU: "AHU-2", Loop: "HW-1"}, {ID: "VAV-2-08", AHU: "AHU-2", Loop: "HW-1"}},
	}
	s.LoopIndex = map[string]int{"HW-1": 0}
	s.AHUIndex = map[string]int{"AHU-2": 0}
	s.TerminalIndex = map[string]int{"VAV-2-07": 0, "VAV-2-08": 1}
	return s
}

func newTest(t testing.TB) *Metrics {
	t.Helper()
	m, err := New(testSite(), Options{Version: "v0.0.0-test", Revision: "abc123", NoRuntime: true})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func TestObserveEvidence(t *testing.T) {
	m := newTest(t)
	at := time.Date(2025, 1, 14, 7, 0, 0, 0, time.UTC)
	// Invented evidence values: the test checks publishing, not physics.
	m.ObserveEvidence(&fdd.Evidence{Terminal: 1, At: at, Usable: true, ObservedRiseK: 8.5, ExpectedRiseK: 11.25,
		SigmaK: 0.75, ResidualK: -2.75, PerfIndex: 0.756, UAFactor: 0.62, FlowFactor: math.NaN(), WastedHeatW: 0,
		AddedCoolingW: 0, ShortfallW: 410})
	want := `
# HELP risewatch_terminal_observed_rise_celsius Observed air temperature rise across the reheat coil, DAT - (SAT + duct gain).
# TYPE risewatch_terminal_observed_rise_celsius gauge
risewatch_terminal_observed_rise_celsius{ahu="AHU-2",loop="HW-1",site="north-campus",terminal="VAV-2-07"} 0
risewatch_terminal_observed_rise_celsius{ahu="AHU-2",loop="HW-1",site="north-campus",terminal="VAV-2-08"} 8.5
# HELP risewatch_terminal_heat_shortfall_watts Estimated heat wanted but not delivered.
# TYPE risewatch_terminal_heat_shortfall_watts gauge
risewatch_terminal_heat_shortfall_watts{ahu="AHU-2",loop="HW-1",site="north-campus",terminal="VAV-2-07"} 0
risewatch_terminal_heat_shortfall_watts{ahu="AHU-2",loop="HW-1",site="north-campus",terminal="VAV-2-08"} 410
`
	if err := testutil.GatherAndCompare(m.Registry(), strings.NewReader(want),
		"risewatch_terminal_observed_rise_celsius", "risewatch_terminal_heat_shortfall_watts"); err != nil {
		t.Fatal(err)
	}
	if v := m.term.value(1, tFlow); !math.IsNaN(v) {
		t.Errorf("unavailable flow factor exported as %v, want NaN", v)
	}
	if v := m.term.value(1, tAt); v != float64(at.Unix()) {
		t.Errorf("evidence timestamp %v, want %d", v, at.Unix())
	}
	if v := m.term.value(1, tUsable); v != 1 {
		t.Errorf("usable %v, want 1", v)
	}
	m.ObserveEvidence(&fdd.Evidence{Terminal: 9})
	if v := testutil.ToFloat64(m.unknown); v != 1 {
		t.Errorf("unknown entity counter %v after an out-of-range terminal, want 1", v)
	}
	m.ObserveLoop(&fdd.LoopEvidence{Loop: 0, SupplyC: 71, ExpectedC: 82, ShortFraction: 0.4, MeanPerfIndex: 0.8})
	if v := testutil.ToFloat64(m.loops[0].short); v != 0.4 {
		t.Errorf("loop short ratio %v, want 0.4", v)
	}
}

func TestFaultActive(t *testing.T) {
	m := newTest(t)
	at := time.Date(2025, 1, 14, 7, 0, 0, 0, time.UTC)
	tr := func(from, to rules.State) *rules.Transition {
		return &rules.Transition{FaultID: "VAV-2-07/leaking-valve", Entity: "VAV-2-07", EntityKind: rules.EntityTerminal,
			Kind: fdd.KindLeakingValve, From: from, To: to, At: at}
	}
	steps := []struct {
		from, to rules.State
		want     float64
	}{
		{rules.StateClear, rules.StatePending, 0},
		{rules.StatePending, rules.StateOpen, 1},
		{rules.StateOpen, rules.StateAcked, 1},
		{rules.StateAcked, rules.StateSuppressed, 1},
		{rules.StateSuppressed, rules.StateClear, 0},
	}
	for _, s := range steps {
		m.ObserveTransition(tr(s.from, s.to))
		if v := m.faults.active(rules.EntityTerminal, 0, fdd.KindLeakingValve); v != s.want {
			t.Errorf("%s -> %s: active = %v, want %v", s.from, s.to, v, s.want)
		}
	}
	if v := m.faults.active(rules.EntityTerminal, 1, fdd.KindLeakingValve); v != 0 {
		t.Errorf("other terminal's gauge moved to %v", v)
	}
	m.ObserveTransition(&rules.Transition{Entity: "HW-1", EntityKind: rules.EntityLoop, Kind: fdd.KindColdLoop, From: rules.StatePending, To: rules.StateOpen})
	if v := m.faults.active(rules.EntityLoop, 0, fdd.KindColdLoop); v != 1 {
		t.Errorf("loop fault active = %v, want 1", v)
	}
	m.ObserveTransition(&rules.Transition{Entity: "AHU-2", EntityKind: rules.EntityAHU, Kind: fdd.KindDataQuality, To: rules.StateOpen})
	m.ObserveTransition(&rules.Transition{Entity: "VAV-9-99", EntityKind: rules.EntityTerminal, Kind: fdd.KindLeakingValve, To: rules.StateOpen})
	m.ObserveTransition(&rules.Transition{Entity: "VAV-2-07", EntityKind: rules.EntityTerminal, Kind: fdd.Kind(999), To: rules.StateOpen})
	if v := testutil.ToFloat64(m.unknown); v != 2 {
		t.Errorf("unknown entity counter = %v, want 2", v)
	}
	var lines []string
	mfs, err := m.Registry().Gather()
	if err != nil {
		t.Fatal(err)
	}
	for _, mf := range mfs {
		if mf.GetName() != "risewatch_fault_active" {
			continue
		}
		for _, mt := range mf.GetMetric() {
			if mt.GetGauge().GetValue() == 1 {
				var kv []string
				for _, l := range mt.GetLabel() {
					kv = append(kv, l.GetName()+"="+l.GetValue())
				}
				lines = append(lines, strings.Join(kv, ","))
			}
		}
	}
	// Active after the transitions above: the loop's cold-loop fault and the AHU's data-quality fault.
	if want := []string{"ahu=,kind=cold-loop,loop=HW-1,site=north-campus,terminal=", "ahu=AHU-2,kind=data-quality,loop=,site=north-campus,terminal="}; strings.Join(lines, ";") != strings.Join(want, ";") {
		t.Errorf("active fault series %q, want %q", lines, want)
	}
	if v := testutil.ToFloat64(m.trans.WithLabelValues("north-campus", "leaking-valve", "open")); v != 1 {
		t.Errorf("transitions to open = %v, want 1", v)
	}
}

// TestSeriesBound checks the documented cardinality formula on a site.
func TestSeriesBound(t *testing.T) {
	m := newTest(t)
	m.Source("bms-trends")
	s := testSite()
	terminalKinds := len(fdd.AllKinds()) - len(loopKinds)
	// Per doc.go: 12 terminal gauges + terminal fault kinds per terminal, 4
	// loop gauges + loop kinds per loop, per source 5 simple series + error kinds.
	want := len(s.Terminals)*(12+terminalKinds) + len(s.Loops)*(4+len(loopKinds)) + (5 + len(errorKinds))
	got := 0
	mfs, err := m.Registry().Gather()
	if err != nil {
		t.Fatal(err)
	}
	for _, mf := range mfs {
		name := mf.GetName()
		if strings.HasPrefix(name, "risewatch_terminal_") || strings.HasPrefix(name, "risewatch_loop_") ||
			strings.HasPrefix(name, "risewatch_source_") || name == "risewatch_fault_active" {
			got += len(mf.GetMetric())
		}
	}
	if got != want {
		t.Fatalf("%d series, doc.go formula gives %d", got, want)
	}
}

func TestSourceHealth(t *testing.T) {
	m := newTest(t)
	h := m.Source("bms-trends")
	at := time.Date(2025, 1, 14, 7, 0, 0, 0, time.UTC)
	h.ReadOK(20*time.Millisecond, at, 120)
	h.ReadOK(30*time.Millisecond, at.Add(time.Minute), 80)
	h.ReadFailed(ErrTimeout, 3*time.Second)
	h.ReadFailed("made-up", time.Millisecond) // unknown kind -> other
	h.SetStale(3)
	checks := []struct {
		name string
		got  float64
		want float64
	}{
		{"reads", testutil.ToFloat64(m.src.reads.WithLabelValues("bms-trends")), 4},
		{"readings", testutil.ToFloat64(m.src.readings.WithLabelValues("bms-trends")), 200},
		{"timeouts", testutil.ToFloat64(m.src.errs.WithLabelValues("bms-trends", "timeout")), 1},
		{"other", testutil.ToFloat64(m.src.errs.WithLabelValues("bms-trends", "other")), 1},
		{"last", testutil.ToFloat64(m.src.last.WithLabelValues("bms-trends")), float64(at.Add(time.Minute).Unix())},
		{"stale", testutil.ToFloat64(m.src.stale.WithLabelValues("bms-trends")), 3},
	}
	for _, c := range checks {
		if c.got != c.want {
			t.Errorf("%s = %v, want %v", c.name, c.got, c.want)
		}
	}
	if n := testutil.CollectAndCount(m.src.latency); n != 1 {
		t.Errorf("%d latency histograms, want 1", n)
	}
}

func TestClassifyError(t *testing.T) {
	ctx, cancel := context.WithTimeout(context.Background(), 0)
	defer cancel()
	<-ctx.Done()
	cases := []struct {
		err  error
		want ErrorKind
	}{
		{fmt.Errorf("read: %w", context.Canceled), ErrCanceled},
		{ctx.Err(), ErrTimeout},
		{fmt.Errorf("open: %w", os.ErrNotExist), ErrNotFound},
		{&net.OpError{Op: "dial", Err: errors.New("connection refused")}, ErrRefused},
		{errors.New("something"), ErrOther},
	}
	for _, c := range cases {
		if got := ClassifyError(c.err); got != c.want {
			t.Errorf("ClassifyError(%v) = %s, want %s", c.err, got, c.want)
		}
	}
}

func TestDaemonMetrics(t *testing.T) {
	m := newTest(t)
	m.StepDone(40 * time.Millisecond)
	m.StepDone(60 * time.Millisecond)
	m.SetInfluxBuffer(12, 34567)
	m.SetOutboxPending("email", 2)
	if v := testutil.ToFloat64(m.steps); v != 2 {
		t.Errorf("steps = %v, want 2", v)
	}
	if v := testutil.ToFloat64(m.bufBytes); v != 34567 {
		t.Errorf("buffer bytes = %v", v)
	}
	want := `
# HELP risewatch_build_info Build of the running risewatch (always 1).
# TYPE risewatch_build_info gauge
risewatch_build_info{goversion="` + goVersion() + `",revision="abc123",version="v0.0.0-test"} 1
`
	if err := testutil.GatherAndCompare(m.Registry(), strings.NewReader(want), "risewatch_build_info"); err != nil {
		t.Fatal(err)
	}
}

func goVersion() string { return buildLabels(Options{})["goversion"] }

// TestLint runs client_golang's linter (the same checks as promtool) over
// every metric.
func TestLint(t *testing.T) {
	m, err := New(testSite(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	m.Source("bms-trends").ReadOK(time.Millisecond, time.Now(), 1)
	problems, err := testutil.GatherAndLint(m.Registry())
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range problems {
		if strings.HasPrefix(p.Metric, "risewatch_") {
			t.Errorf("lint: %s: %s", p.Metric, p.Text)
		}
	}
}

// TestPromtoolCheck scrapes /metrics and runs `promtool check metrics` on it.
func TestPromtoolCheck(t *testing.T) {
	promtool := testenv.LookTool(t, "promtool", "install Debian package prometheus (scripts/deps/metrics.apt)")
	m, err := New(testSite(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	m.Source("bms-trends").ReadFailed(ErrRefused, time.Millisecond)
	m.ObserveEvidence(&fdd.Evidence{Terminal: 0, ObservedRiseK: 1, FlowFactor: math.NaN()})
	srv := httptest.NewServer(m.Handler())
	defer srv.Close()
	resp, err := http.Get(srv.URL)
	if err != nil {
		t.Fatal(err)
	}
	body, err := io.ReadAll(resp.Body)
	resp.Body.Close()
	if err != nil || resp.StatusCode != http.StatusOK {
		t.Fatalf("scrape: %v %s", err, resp.Status)
	}
	cmd := exec.Command(promtool, "check", "metrics")
	cmd.Stdin = bytes.NewReader(body)
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("promtool check metrics: %v\n%s", err, out)
	}
}
