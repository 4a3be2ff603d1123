package daemon

import (
	"context"
	"testing"
	"time"

	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/sim"
	"risewatch/site"
	"risewatch/store"
)

// TestBaselinesStoredAcrossRestart: a learned baseline and a rejected fit
// (the rated model) come back from the store with the coils' healthy
// levels, while a terminal still learning on the rated model is not
// stored (it learns afresh after a restart).
func TestBaselinesStoredAcrossRestart(t *testing.T) {
	ctx := context.Background()
	s, st := demoSiteStore(t)
	from, to := time.Date(2025, 1, 6, 7, 0, 0, 0, time.UTC), time.Date(2025, 1, 7, 7, 0, 0, 0, time.UTC)
	learned := fdd.Baseline{Terminal: s.Terminals[0].ID, Source: "learned", UAFactor: 1.08, UAFactorSigma: 0.01,
		FlowFactor: 0.9, FlowFactorSigma: 0.02, Correlation: -0.6, ResidualSigmaK: 0.2, Points: 40, From: from, To: to,
		PerfHighRef: 1.03, PerfHighRefN: 17}
	rejected := fdd.Baseline{Terminal: s.Terminals[1].ID, Source: "rated", UAFactor: 1, FlowFactor: 1, Points: 22, From: from, To: to,
		Rejected: "learned UA factor 1.71 out of band", RejectedUAFactor: 1.71, PerfHighRef: 1.12, PerfHighRefN: 64}
	eng, err := fdd.NewEngine(s, fdd.Config{})
	if err != nil {
		t.Fatal(err)
	}
	if err := eng.LoadBaselines([]fdd.Baseline{learned, rejected}); err != nil {
		t.Fatal(err)
	}
	ids := func(ti int) string { return s.Terminals[ti].ID }
	n, err := saveBaselines(ctx, st, eng, newSeriesRing(len(s.Terminals)), ids)
	if err != nil || n != 2 {
		t.Fatalf("saved %d baselines (%v), want 2", n, err)
	}
	eng2, err := fdd.NewEngine(s, fdd.Config{})
	if err != nil {
		t.Fatal(err)
	}
	terms := map[string]int{}
	for i, tm := range s.Terminals {
		terms[tm.ID] = i
	}
	if n, err := loadBaselines(ctx, st, eng2, terms); err != nil || n != 2 {
		t.Fatalf("loaded %d baselines (%v), want 2", n, err)
	}
	got := eng2.Baselines()
	for i, want := range []fdd.Baseline{learned, rejected} {
		g := got[i]
		if !g.From.Equal(want.From) || !g.To.Equal(want.To) {
			t.Errorf("terminal %d: period %v..%v, want %v..%v", i, g.From, g.To, want.From, want.To)
		}
		g.From, g.To = want.From, want.To // time.Time carries its location
		if g != want {
			t.Errorf("terminal %d after restart: %+v, want %+v", i, g, want)
		}
	}
	if g := got[2]; g.Source != "rated" || g.Rejected != "" || g.PerfHighRefN != 0 {
		t.Errorf("terminal 2 (still learning, not stored): %+v", g)
	}
}

// TestRelearnRequestApplied: a relearn request recorded in the store (as
// `risewatch relearn` does) puts the terminal back on the rated model and
// learning, deletes its stored baseline so a restart does not restore it,
// and moves the acknowledgement cursor; a request for a terminal this
// pipeline does not have is passed over.
func TestRelearnRequestApplied(t *testing.T) {
	ctx := context.Background()
	s, st := demoSiteStore(t)
	rs, err := rules.Default()
	if err != nil {
		t.Fatal(err)
	}
	cfg := &Config{Listen: "127.0.0.1:0", Step: time.Minute}
	cfg.defaults()
	pl, err := newPipeline(&Daemon{log: quietLog()}, &plan{name: s.Name, site: s, cfg: cfg, rules: rs}, st, true)
	if err != nil {
		t.Fatal(err)
	}
	id := s.Terminals[3].ID
	from := time.Date(2025, 1, 6, 7, 0, 0, 0, time.UTC)
	b := fdd.Baseline{Terminal: id, Source: "learned", UAFactor: 0.92, UAFactorSigma: 0.01, FlowFactor: 1.1, FlowFactorSigma: 0.02,
		Points: 48, From: from, To: from.Add(24 * time.Hour), PerfHighRef: 0.97, PerfHighRefN: 30}
	if err := pl.eng.LoadBaselines([]fdd.Baseline{b}); err != nil {
		t.Fatal(err)
	}
	ids := func(ti int) string { return s.Terminals[ti].ID }
	if n, err := saveBaselines(ctx, st, pl.eng, pl.ring, ids); err != nil || n != 1 {
		t.Fatalf("saved %d baselines (%v)", n, err)
	}
	at := time.Date(2025, 2, 3, 10, 0, 0, 0, time.UTC)
	for _, term := range []string{"VAV-OTHER-SHARD", id} {
		if err := st.Acknowledge(ctx, store.Ack{FaultID: store.BaselineID(term), Action: store.ActionRelearn, Who: "tech", At: at, Note: "coil replaced"}); err != nil {
			t.Fatal(err)
		}
	}
	cursor := pl.prog.AckCursor
	if err := pl.applyAcks(ctx); err != nil {
		t.Fatal(err)
	}
	if got := pl.eng.Baselines()[3]; got.Source != "rated" || got.UAFactor != 1 || got.PerfHighRefN != 0 {
		t.Errorf("after the request: baseline %+v, want the rated model", got)
	}
	if _, _, ok, err := st.TerminalBlob(ctx, id, store.BlobBaseline); ok || err != nil {
		t.Errorf("stored baseline of %s still there after the request (err %v)", id, err)
	}
	if pl.prog.AckCursor <= cursor {
		t.Errorf("acknowledgement cursor %d did not move past %d", pl.prog.AckCursor, cursor)
	}
	// Applied once: a second poll finds nothing new.
	if err := pl.eng.LoadBaselines([]fdd.Baseline{b}); err != nil {
		t.Fatal(err)
	}
	if err := pl.applyAcks(ctx); err != nil {
		t.Fatal(err)
	}
	if got := pl.eng.Baselines()[3]; got.Source != "learned" {
		t.Errorf("the request was applied twice: baseline %+v", got)
	}
}

// demoSite is the demo campus's site (dir: where its trend files would be)
// and its scenario.
func demoSite(t *testing.T, dir string) (*site.Site, *sim.Scenario) {
	t.Helper()
	sc, err := sim.DemoScenario()
	if err != nil {
		t.Fatal(err)
	}
	sm, err := sim.New(sc)
	if err != nil {
		t.Fatal(err)
	}
	return sm.Site(dir), sc
}

// demoSiteStore is the demo campus's site and an empty store (closed at
// the end of the test).
func demoSiteStore(t *testing.T) (*site.Site, *store.Store) {
	t.Helper()
	st, err := store.Open(context.Background(), t.TempDir(), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	s, _ := demoSite(t, "")
	return s, st
}

// TestSettledBaselines: a learned fit and the rated model after a rejected
// fit are kept across a restart; the rated model while learning, first or
// again after a failed fit, is not.
func TestSettledBaselines(t *testing.T) {
	for _, c := range []struct {
		source, rejected string
		learning, want   bool
	}{
		{"learned", "", false, true},
		{"rated", "learned UA factor 0.60 (band 1/1.25..1.25) …", false, true},
		{"rated", "", true, false},
		{"rated", "baseline fit did not converge: diverged; learning again (period 2 of 3)", true, false},
		{"rated", "baseline fit did not converge: diverged", false, true},
	} {
		if got := settled(c.source, c.rejected, c.learning); got != c.want {
			t.Errorf("settled(%q, %q, learning %v) = %v, want %v", c.source, c.rejected, c.learning, got, c.want)
		}
	}
}
