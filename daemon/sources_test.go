package daemon

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"log/slog"
	"strings"
	"sync"
	"testing"
	"time"

	dto "github.com/prometheus/client_model/go"

	"risewatch/collector"
	"risewatch/collector/bacnet"
	"risewatch/collector/bacnet/wire"
	"risewatch/publish/metrics"
	"risewatch/sim/bacnetdev"
	"risewatch/site"
	"risewatch/store"
)

// syncBuf is a bytes.Buffer safe for the poll workers' concurrent logs.
type syncBuf struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuf) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuf) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// errCount reads risewatch_source_read_errors_total{source,error_kind}.
func errCount(t *testing.T, m *metrics.Metrics, source string, kind metrics.ErrorKind) float64 {
	t.Helper()
	return gauge(t, m, "risewatch_source_read_errors_total", map[string]string{"source": source, "error_kind": string(kind)})
}

func gauge(t *testing.T, m *metrics.Metrics, name string, labels map[string]string) float64 {
	t.Helper()
	mfs, err := m.Registry().Gather()
	if err != nil {
		t.Fatal(err)
	}
	for _, mf := range mfs {
		if mf.GetName() != name {
			continue
		}
	next:
		for _, mt := range mf.GetMetric() {
			for _, lp := range mt.GetLabel() {
				if v, ok := labels[lp.GetName()]; ok && v != lp.GetValue() {
					continue next
				}
			}
			return value(mt)
		}
	}
	t.Fatalf("no series %s%v", name, labels)
	return 0
}

func value(mt *dto.Metric) float64 {
	if c := mt.GetCounter(); c != nil {
		return c.GetValue()
	}
	return mt.GetGauge().GetValue()
}

// simDevice serves one BACnet device on its own loopback port with one
// analog input (AI 1 = v degC).
func simDevice(t *testing.T, inst uint32, v float64, mb bacnetdev.Misbehaviour) string {
	t.Helper()
	s, err := bacnetdev.NewServer(bacnetdev.Config{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	d, err := s.AddDevice(bacnetdev.DeviceConfig{Instance: inst, Misbehaviour: mb})
	if err != nil {
		t.Fatal(err)
	}
	d.AddObject(bacnetdev.Object{ID: wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 1}, Name: "ZNT",
		Units: uint32(bacnet.UnitDegreesCelsius), Value: v})
	return s.Addr().String()
}

// startBACnetCron builds the site's first source (a BACnet one) through the
// daemon's wiring with metrics and a throw-away store, and starts it; both
// are closed at cleanup.
func startBACnetCron(ctx context.Context, t *testing.T, s *site.Site, log *slog.Logger) (*bacnetCron, *metrics.Metrics) {
	t.Helper()
	m, err := metrics.New(s, metrics.Options{NoRuntime: true})
	if err != nil {
		t.Fatal(err)
	}
	st, err := store.Open(ctx, t.TempDir(), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	srcs, _, err := buildSources(s, st, m, time.Now, nil, 0, log)
	if err != nil {
		t.Fatal(err)
	}
	b, ok := srcs[0].(*bacnetCron)
	if !ok {
		t.Fatalf("source is %T, want *bacnetCron", srcs[0])
	}
	if err := b.src.Start(ctx); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { b.src.Close() })
	return b, m
}

// TestBACnetFailuresInMetricsAndLogs polls a healthy device, a silent one,
// one that rejects ReadPropertyMultiple and one that sends a malformed frame
// before and a duplicate after every answer, through the daemon's source
// wiring, and checks the error and dropped-frame counters, the log lines
// and that every device but the silent one is still read Good.
func TestBACnetFailuresInMetricsAndLogs(t *testing.T) {
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	const healthy, silent, rejecting, noisy = 101, 102, 103, 104
	devs := map[uint32]string{
		noisy:     simDevice(t, noisy, 24.5, bacnetdev.Misbehaviour{MalformedFirst: true, Duplicate: true}),
		healthy:   simDevice(t, healthy, 21.5, bacnetdev.Misbehaviour{}),
		silent:    simDevice(t, silent, 22.5, bacnetdev.Misbehaviour{Silent: true}),
		rejecting: simDevice(t, rejecting, 23.5, bacnetdev.Misbehaviour{RejectRPM: true}),
	}
	pt := func(term string, dev uint32) site.PointRef {
		return site.PointRef{Name: term + ".ZNT", Kind: site.PointBACnet, Source: "bas", Unit: "degC",
			BACnet: &site.BACnetRef{Device: dev, ObjectType: "analog-input", Instance: 1, Property: "present-value"}}
	}
	s := &site.Site{Name: "test-campus",
		Sources: []site.SourceConfig{{Name: "bas", Kind: "bacnet", BACnet: &site.BACnetConfig{Bind: "127.0.0.1:0",
			Timeout: 80 * time.Millisecond, Retries: 1, Devices: devs}}},
		Terminals: []site.Terminal{
			{ID: "VAV-1", Points: site.TerminalPoints{ZoneTemp: pt("VAV-1", healthy)}},
			{ID: "VAV-2", Points: site.TerminalPoints{ZoneTemp: pt("VAV-2", silent)}},
			{ID: "VAV-3", Points: site.TerminalPoints{ZoneTemp: pt("VAV-3", rejecting)}},
			{ID: "VAV-4", Points: site.TerminalPoints{ZoneTemp: pt("VAV-4", noisy)}},
		},
		TerminalIndex: map[string]int{"VAV-1": 0, "VAV-2": 1, "VAV-3": 2, "VAV-4": 3},
	}
	var logs syncBuf
	b, m := startBACnetCron(ctx, t, s, slog.New(slog.NewTextHandler(&logs, &slog.HandlerOptions{Level: slog.LevelDebug})))
	var got []collector.Reading
	emit := func(rs []collector.Reading) error { got = rs; return nil }
	const polls = 3
	for i := 0; i < polls; i++ {
		b.poll(ctx, emit)
		time.Sleep(2 * time.Millisecond) // the poll needs the clock to move
	}

	// Each poll of the silent device times out; the RPM reject is reported
	// once, when the device falls back to ReadProperty.
	want := map[metrics.ErrorKind]float64{metrics.ErrTimeout: polls, metrics.ErrReject: 1,
		metrics.ErrBACnetError: 0, metrics.ErrAbort: 0, metrics.ErrMalformed: 0, metrics.ErrOther: 0}
	for k, w := range want {
		if n := errCount(t, m, "bas", k); n != w {
			t.Errorf("read_errors_total{error_kind=%q} = %v, want %v", k, n, w)
		}
	}
	if n := gauge(t, m, "risewatch_source_stale_points", map[string]string{"source": "bas"}); n != 1 {
		t.Errorf("stale points %v, want 1 (the silent device's)", n)
	}
	wantR := map[string]struct {
		v float64
		q collector.Quality
	}{"VAV-1.ZNT": {21.5, collector.Good}, "VAV-2.ZNT": {0, collector.Missing}, "VAV-3.ZNT": {23.5, collector.Good},
		"VAV-4.ZNT": {24.5, collector.Good}}
	if len(got) != len(wantR) {
		t.Fatalf("%d readings, want %d", len(got), len(wantR))
	}
	for _, r := range got {
		w := wantR[r.Point]
		if r.Quality != w.q || (w.q == collector.Good && r.Value != w.v) {
			t.Errorf("%s: %v %v, want %v %v", r.Point, r.Value, r.Quality, w.v, w.q)
		}
	}

	// The noisy device's malformed and duplicated frames are dropped and
	// counted; the metrics mirror the client's counters.
	st0 := &b.src.Client().Stats
	for _, c := range []struct {
		reason string
		n      uint64
	}{{"malformed", st0.Malformed.Load()}, {"unmatched", st0.Unmatched.Load()}} {
		v := gauge(t, m, "risewatch_bacnet_frames_dropped_total", map[string]string{"source": "bas", "reason": c.reason})
		if c.n == 0 || v != float64(c.n) {
			t.Errorf("frames_dropped_total{reason=%q} = %v, client counted %d (want equal and > 0)", c.reason, v, c.n)
		}
	}
	if v := gauge(t, m, "risewatch_bacnet_retries_total", map[string]string{"source": "bas"}); v != float64(st0.Retries.Load()) || v == 0 {
		t.Errorf("retries_total %v, client counted %d (the silent device is retried)", v, st0.Retries.Load())
	}

	out := logs.String()
	if n := lines0(out, `msg="bacnet: frames dropped"`, "source=bas"); n != 1 {
		t.Errorf("%d dropped-frame lines, want 1 (rate-limited):\n%s", n, out)
	}
	lines := func(substr ...string) int { return lines0(out, substr...) }
	// Rate-limited: one line for the silent device over all polls.
	if n := lines(`msg="bacnet: device read failed"`, "device=102", "kind=timeout", "address="+devs[silent]); n != 1 {
		t.Errorf("%d failure lines for the silent device, want 1:\n%s", n, out)
	}
	if n := lines(`msg="bacnet: device falls back to ReadProperty"`, "device=103", "kind=reject", "address="+devs[rejecting]); n != 1 {
		t.Errorf("%d fallback lines for the rejecting device, want 1:\n%s", n, out)
	}
	if n := lines("bacnet: device read failed", "device=101"); n != 0 {
		t.Errorf("healthy device logged as failing:\n%s", out)
	}
	if n := lines("bacnet: device read failed", "device=103"); n != 0 {
		t.Errorf("fallback device logged as failing after the fallback:\n%s", out)
	}
}

// lines0 counts the lines of out containing every substring.
func lines0(out string, substr ...string) int {
	n := 0
line:
	for _, l := range strings.Split(out, "\n") {
		for _, s := range substr {
			if !strings.Contains(l, s) {
				continue line
			}
		}
		n++
	}
	return n
}

// TestBACnetSourceErrorKinds checks that source-level BACnet errors (start,
// trend sweep) are counted under the BACnet kind they carry.
func TestBACnetSourceErrorKinds(t *testing.T) {
	s := &site.Site{Name: "test-campus"}
	m, err := metrics.New(s, metrics.Options{NoRuntime: true})
	if err != nil {
		t.Fatal(err)
	}
	h := &health{name: "bas", m: m.Source("bas")}
	h.bacnetErr(fmt.Errorf("sweep: trend log 3: %w", bacnet.ErrTimeout), time.Second)
	h.bacnetErr(fmt.Errorf("sweep: %w", &bacnet.AbortError{Reason: 9, Server: true}), time.Second)
	h.bacnetErr(fmt.Errorf("sweep: %w", &bacnet.ServiceError{Class: 2, Code: 32}), time.Second)
	h.bacnetErr(errors.New("checkpoint store: disk full"), time.Second)
	for k, w := range map[metrics.ErrorKind]float64{metrics.ErrTimeout: 1, metrics.ErrAbort: 1, metrics.ErrBACnetError: 1,
		metrics.ErrOther: 1, metrics.ErrMalformed: 0} {
		if n := errCount(t, m, "bas", k); n != w {
			t.Errorf("read_errors_total{error_kind=%q} = %v, want %v", k, n, w)
		}
	}
}
