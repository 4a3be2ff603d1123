package influx

import (
	"context"
	"fmt"
	"math"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/collector/influx/influxtest"
	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/site"
	"risewatch/store"
)

// testSite is an invented building with three terminals on one loop.
func testSite() *site.Site {
	s := &site.Site{Name: "north-campus", Loops: []site.Loop{{ID: "HW-1"}}, AHUs: []site.AHU{{ID: "AHU-2"}}}
	s.TerminalIndex = map[string]int{}
	for i, id := range []string{"VAV-2-07", "VAV-2-08", "VAV 2,09"} { // the last one needs escaping
		s.Terminals = append(s.Terminals, site.Terminal{ID: id, AHU: "AHU-2", Loop: "HW-1"})
		s.TerminalIndex[id] = i
	}
	s.LoopIndex = map[string]int{"HW-1": 0}
	s.AHUIndex = map[string]int{"AHU-2": 0}
	return s
}

var t0 = time.Date(2025, 1, 14, 6, 0, 0, 0, time.UTC)

// stepEvidence is deterministic invented evidence for step i of terminal j.
func stepEvidence(i, j int) *fdd.Evidence {
	return &fdd.Evidence{Terminal: j, At: t0.Add(time.Duration(i) * time.Minute), Usable: true, PlantOn: true, FanOn: true,
		ValveFrac: float64(i%10) / 10, AirflowM3s: 0.1, SupplyC: 13, DischargeC: 13 + float64(i%7),
		ObservedRiseK: float64(i%7) + float64(j)/10, ExpectedRiseK: 6, SigmaK: 0.5, ResidualK: float64(i%7) - 6,
		PerfIndex: math.NaN(), UAFactor: 1, FlowFactor: 1, DATSetC: math.NaN(), LeakRiseK: math.NaN(),
		CUSUMLowK: 0, EWMAResid: 0}
}

func openStore(t *testing.T) *store.Store {
	t.Helper()
	st, err := store.Open(context.Background(), t.TempDir(), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	return st
}

func TestDisabledSink(t *testing.T) {
	k, err := New(Config{}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if k.Enabled() {
		t.Fatal("sink without URL is enabled")
	}
	k.AddEvidence(stepEvidence(0, 0))
	k.AddTransition(&rules.Transition{})
	if err := k.Commit(context.Background(), t0); err != nil {
		t.Fatal(err)
	}
	if err := k.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	if _, err := New(Config{URL: "http://127.0.0.1:1"}, testSite(), nil); err == nil {
		t.Fatal("enabled sink without outbox accepted")
	}
}

// TestCommitIsDurableAndKeyed checks Commit without any server: the points
// land in the outbox, chunked, and committing the same step again with the
// same points adds nothing.
func TestCommitIsDurableAndKeyed(t *testing.T) {
	st := openStore(t)
	k, err := New(Config{URL: "http://127.0.0.1:1", Bucket: "db/rp", ChunkLines: 2}, testSite(), st)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	for range 2 {
		for j := range 3 {
			k.AddEvidence(stepEvidence(0, j))
		}
		if err := k.Commit(ctx, t0); err != nil {
			t.Fatal(err)
		}
	}
	items, _, _ := st.Pending(ctx, DefaultChannel)
	if items != 2 { // 3 lines in chunks of 2, the second commit deduplicated
		t.Fatalf("%d outbox items, want 2", items)
	}
	due, _ := st.DueOn(ctx, DefaultChannel, time.Now().Add(time.Second), 10)
	var all []string
	for _, it := range due {
		raw, err := decodePayload(it.Payload)
		if err != nil {
			t.Fatal(err)
		}
		all = append(all, splitLines(raw)...)
		if !strings.HasPrefix(it.Key, "influx/2025-01-14T06:00:00Z/") {
			t.Errorf("key %q does not carry the step time", it.Key)
		}
	}
	if len(all) != 3 || !strings.Contains(all[2], `terminal=VAV\ 2\,09`) {
		t.Fatalf("lines %q", all)
	}
}

func newSink(t *testing.T, url string, st *store.Store) *Sink {
	t.Helper()
	k, err := New(Config{URL: url, Bucket: influxtest.Bucket, ChunkLines: 50, RoundItems: 8,
		PollInterval: 20 * time.Millisecond, RetryBase: 50 * time.Millisecond, RetryMax: 400 * time.Millisecond,
		HTTPTimeout: 5 * time.Second}, testSite(), st)
	if err != nil {
		t.Fatal(err)
	}
	return k
}

func count(t *testing.T, srv *influxtest.Server, q string) int {
	t.Helper()
	vals, err := srv.InfluxQL(influxtest.Database, q)
	if err != nil {
		t.Fatalf("%s: %v", q, err)
	}
	if len(vals) == 0 {
		return 0
	}
	return int(vals[0][1].(float64))
}

func drain(t *testing.T, k *Sink, st *store.Store, within time.Duration) {
	t.Helper()
	deadline := time.Now().Add(within)
	for {
		if _, err := k.Deliver(context.Background()); err != nil {
			t.Logf("deliver: %v", err)
		}
		n, _, _ := st.Pending(context.Background(), DefaultChannel)
		if n == 0 {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("%d outbox items still pending after %v", n, within)
		}
		time.Sleep(20 * time.Millisecond)
	}
}

func TestSinkWritesAndReplaysIdempotently(t *testing.T) {
	srv := influxtest.Start(t)
	st := openStore(t)
	k := newSink(t, srv.URL, st)
	ctx := context.Background()
	const steps = 40
	for i := range steps {
		for j := range 3 {
			k.AddEvidence(stepEvidence(i, j))
		}
		k.AddLoop(&fdd.LoopEvidence{Loop: 0, At: t0.Add(time.Duration(i) * time.Minute), PlantOn: true, SupplyC: 80, ExpectedC: 82, Terminals: 3})
		if i == 10 {
			k.AddTransition(&rules.Transition{FaultID: "VAV-2-07/leaking-valve", Entity: "VAV-2-07", EntityKind: rules.EntityTerminal,
				Kind: fdd.KindLeakingValve, Rule: "leak", From: rules.StatePending, To: rules.StateOpen, At: t0.Add(10 * time.Minute),
				Message: `rise 4.2 K with valve "closed"`, AHU: "AHU-2", Loop: "HW-1", Impact: rules.Impact{WeeklyCost: 12.5}})
		}
		if err := k.Commit(ctx, t0.Add(time.Duration(i)*time.Minute)); err != nil {
			t.Fatal(err)
		}
	}
	drain(t, k, st, 20*time.Second)
	if n := count(t, srv, "SELECT COUNT(observed_rise_k) FROM risewatch_terminal"); n != steps*3 {
		t.Fatalf("%d terminal points, want %d", n, steps*3)
	}
	if n := count(t, srv, `SELECT COUNT(observed_rise_k) FROM risewatch_terminal WHERE terminal = 'VAV 2,09'`); n != steps {
		t.Fatalf("escaped terminal has %d points, want %d", n, steps)
	}
	if n := count(t, srv, "SELECT COUNT(supply_c) FROM risewatch_loop"); n != steps {
		t.Fatalf("%d loop points, want %d", n, steps)
	}
	vals, err := srv.InfluxQL(influxtest.Database, `SELECT message, weekly_cost FROM risewatch_fault_event WHERE kind = 'leaking-valve'`)
	if err != nil || len(vals) != 1 || vals[0][1] != `rise 4.2 K with valve "closed"` || vals[0][2].(float64) != 12.5 {
		t.Fatalf("fault event = %v, %v", vals, err)
	}
	// NaN fields are left out, not written as zero.
	if n := count(t, srv, "SELECT COUNT(perf_index) FROM risewatch_terminal"); n != 0 {
		t.Fatalf("%d perf_index points from NaN evidence", n)
	}
	// A replay of everything (as after a crash between write and MarkSent)
	// rewrites the same points and adds none.
	if _, err := st.DB().ExecContext(ctx, "UPDATE outbox SET sent_at = 0"); err != nil {
		t.Fatal(err)
	}
	drain(t, k, st, 20*time.Second)
	if n := count(t, srv, "SELECT COUNT(observed_rise_k) FROM risewatch_terminal"); n != steps*3 {
		t.Fatalf("after replay %d terminal points, want %d", n, steps*3)
	}
}

// TestSinkSurvivesOutage stops the server while the analysis keeps
// producing an hour of one-minute steps, restarts it on the same data
// directory, and checks every point arrived exactly once.
func TestSinkSurvivesOutage(t *testing.T) {
	srv := influxtest.Start(t)
	st := openStore(t)
	var bufMu sync.Mutex
	maxBuf := 0
	k := newSink(t, srv.URL, st)
	k.cfg.OnBuffer = func(items int, _ int64) { bufMu.Lock(); maxBuf = max(maxBuf, items); bufMu.Unlock() }
	ctx, cancel := context.WithCancel(context.Background())
	runDone := make(chan error, 1)
	go func() { runDone <- k.Run(ctx) }()

	const before, during, after = 30, 60, 30 // steps: the outage covers an hour of analysis
	produce := func(from, to int) {
		for i := from; i < to; i++ {
			for j := range 3 {
				k.AddEvidence(stepEvidence(i, j))
			}
			if err := k.Commit(ctx, t0.Add(time.Duration(i)*time.Minute)); err != nil {
				t.Error(err)
			}
			time.Sleep(5 * time.Millisecond)
		}
	}
	produce(0, before)
	srv.Stop()
	produce(before, before+during)
	time.Sleep(300 * time.Millisecond) // let a few retries fail
	if s := k.Stats(); s.Failed == 0 {
		t.Fatal("no write failed while the server was down: the outage was not exercised")
	}
	srv.Restart()
	produce(before+during, before+during+after)

	deadline := time.Now().Add(30 * time.Second)
	for {
		n, _, _ := st.Pending(context.Background(), DefaultChannel)
		if n == 0 {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("%d items still buffered 30 s after the restart", n)
		}
		time.Sleep(50 * time.Millisecond)
	}
	cancel()
	if err := <-runDone; err != nil {
		t.Fatal(err)
	}
	total := before + during + after
	if n := count(t, srv, "SELECT COUNT(observed_rise_k) FROM risewatch_terminal"); n != total*3 {
		t.Fatalf("%d terminal points after the outage, want exactly %d", n, total*3)
	}
	// Every step of every terminal is there once: per terminal, one point
	// per minute over the whole range.
	for _, term := range []string{"VAV-2-07", "VAV-2-08", "VAV 2,09"} {
		q := fmt.Sprintf(`SELECT COUNT(observed_rise_k) FROM risewatch_terminal WHERE terminal = '%s' AND time >= '%s' AND time < '%s' GROUP BY time(1m)`,
			strings.ReplaceAll(term, "'", `\'`), t0.Format(time.RFC3339), t0.Add(time.Duration(total)*time.Minute).Format(time.RFC3339))
		vals, err := srv.InfluxQL(influxtest.Database, q)
		if err != nil {
			t.Fatal(err)
		}
		if len(vals) != total {
			t.Fatalf("%s: %d minute buckets, want %d", term, len(vals), total)
		}
		for _, v := range vals {
			if v[1] == nil || v[1].(float64) != 1 {
				t.Fatalf("%s: bucket %v has %v points, want 1", term, v[0], v[1])
			}
		}
	}
	bufMu.Lock()
	defer bufMu.Unlock()
	if maxBuf == 0 {
		t.Error("the buffer observer never saw a pending item")
	}
	t.Logf("stats %+v, peak buffer %d items", k.Stats(), maxBuf)
}
