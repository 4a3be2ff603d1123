package daemon

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"risewatch/rules"
	"risewatch/sim"
	"risewatch/store"
)

func quietLog() *slog.Logger { return slog.New(slog.NewTextHandler(io.Discard, nil)) }

// daemonSection is appended to the simulator's site file: loopback on a
// free port, e-mail into a spool, grouping of one second.
const daemonSection = `
daemon:
  data_dir: %DATA%
  listen: 127.0.0.1:0
  persist_every: 2s
  mail_spool: %DATA%/mail-spool
  notify:
    from: risewatch@test.example
    group_wait: 1s
    routes:
      - {name: operators, to: [ops@test.example]}
  report:
    to: [contractor@test.example]
`

// simSite writes days of the demo campus (the simulator's site file with a
// daemon section) and returns the site file path and data directory.
func simSite(t *testing.T, days int) (cfgPath, data string) {
	t.Helper()
	dir := t.TempDir()
	sc, err := sim.DemoScenario()
	if err != nil {
		t.Fatal(err)
	}
	if sc, err = sc.With(days, 0); err != nil {
		t.Fatal(err)
	}
	sm, err := sim.New(sc)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := sm.WriteOutputs(context.Background(), dir); err != nil {
		t.Fatal(err)
	}
	data = filepath.Join(dir, "data")
	cfgPath = filepath.Join(dir, sim.SiteFile)
	y, err := os.ReadFile(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	y = append(y, strings.ReplaceAll(daemonSection, "%DATA%", data)...)
	if err := os.WriteFile(cfgPath, y, 0o644); err != nil {
		t.Fatal(err)
	}
	return cfgPath, data
}

type running struct {
	d      *Daemon
	cancel context.CancelFunc
	done   chan error
	url    string
}

func start(t *testing.T, cfgPath string) *running {
	t.Helper()
	d, first, err := New(Options{ConfigPath: cfgPath, DropSettle: 200 * time.Millisecond, NotifyEvery: 300 * time.Millisecond,
		AckPoll: 300 * time.Millisecond, SnapshotEvery: time.Second, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	r := &running{d: d, cancel: cancel, done: make(chan error, 1)}
	go func() { r.done <- d.Run(ctx, first) }()
	select {
	case <-d.Ready():
	case err := <-r.done:
		t.Fatalf("daemon stopped: %v", err)
	case <-time.After(20 * time.Second):
		t.Fatal("daemon not ready in 20 s")
	}
	r.url = "http://" + d.Addr().String()
	return r
}

func (r *running) stop(t *testing.T) {
	t.Helper()
	r.cancel()
	select {
	case err := <-r.done:
		if err != nil {
			t.Fatalf("daemon: %v", err)
		}
	case <-time.After(20 * time.Second):
		t.Fatal("daemon did not stop in 20 s")
	}
}

func get(t *testing.T, url string) string {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	if resp.StatusCode != 200 {
		t.Fatalf("GET %s: %s", url, resp.Status)
	}
	return string(b)
}

// waitFor polls cond every 200 ms up to limit.
func waitFor(t *testing.T, limit time.Duration, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(limit)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("timed out after %s waiting for %s", limit, what)
		}
		time.Sleep(200 * time.Millisecond)
	}
}

func spool(t *testing.T, data string) []string {
	m, _ := filepath.Glob(filepath.Join(data, "mail-spool", "*.eml"))
	return m
}

func openedCount(t *testing.T, st *store.Store) int {
	t.Helper()
	s := rules.StateOpen
	h, err := st.History(context.Background(), store.HistoryQuery{ToState: &s})
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, tr := range h {
		if tr.From == rules.StateClear || tr.From == rules.StatePending {
			n++
		}
	}
	return n
}

// TestDaemonEndToEnd runs the daemon on three simulated days of the demo
// campus (the simulator injects the faults listed in its demo scenario):
// faults open, are stored, show at /metrics and on the dashboard, are
// mailed into the spool; a restart on the same data directory neither
// re-opens nor re-mails them; a bad configuration on reload is refused and
// the daemon keeps serving.
func TestDaemonEndToEnd(t *testing.T) {
	cfgPath, data := simSite(t, 3)
	r := start(t, cfgPath)
	st := r.d.Store()
	waitFor(t, 60*time.Second, "a fault in the store and its e-mail", func() bool {
		return openedCount(t, st) > 0 && len(spool(t, data)) > 0
	})
	waitFor(t, 30*time.Second, "the backlog to be analysed", func() bool {
		pl := r.d.cur
		pl.mu.RLock()
		defer pl.mu.RUnlock()
		return !pl.prog.LastStep.Before(time.Date(2025, 1, 15, 23, 0, 0, 0, time.UTC))
	})
	time.Sleep(2 * time.Second) // let grouping and delivery finish
	open := r.d.cur.Faults0()
	if len(open) == 0 {
		t.Fatal("no open fault after three days of a campus with injected faults")
	}
	metrics := get(t, r.url+"/metrics")
	if !strings.Contains(metrics, `risewatch_fault_active{ahu="`+open[0].AHU+`"`) {
		t.Errorf("/metrics lacks risewatch_fault_active for %s", open[0].FaultID)
	}
	activeOnes := 0
	for _, line := range strings.Split(metrics, "\n") {
		if strings.HasPrefix(line, "risewatch_fault_active{") && strings.HasSuffix(line, " 1") {
			activeOnes++
		}
	}
	if activeOnes == 0 {
		t.Error("/metrics: no risewatch_fault_active series at 1")
	}
	page := get(t, r.url+"/")
	if !strings.Contains(page, open[0].Entity) {
		t.Errorf("dashboard overview does not list %s", open[0].Entity)
	}
	get(t, r.url+"/terminals/"+open[0].Entity)
	mails := spool(t, data)
	eml, err := os.ReadFile(mails[0])
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(eml), "Subject: ") || !strings.Contains(string(eml), "risewatch ack --") {
		t.Errorf("spooled message lacks a subject or the ack command:\n%.600s", eml)
	}
	// The printed ack command runs as printed: it names this site file.
	if text := mailText(t, mails[0]); !strings.Contains(text, "--config "+cfgPath) && !strings.Contains(text, "--config '"+cfgPath+"'") {
		t.Errorf("the ack command in the alert does not name the site file %s:\n%.1200s", cfgPath, text)
	}

	// Reload with a bad configuration: refused, still serving.
	good, _ := os.ReadFile(cfgPath)
	bad := strings.Replace(string(good), "persist_every: 2s", "persist_evry: 2s", 1)
	if err := os.WriteFile(cfgPath, []byte(bad), 0o644); err != nil {
		t.Fatal(err)
	}
	err = r.d.Reload()
	if err == nil || !strings.Contains(err.Error(), "persist_evry") || !strings.Contains(err.Error(), ":") {
		t.Errorf("reload of a bad configuration: err = %v, want the unknown key with its position", err)
	}
	get(t, r.url+"/healthz")
	if err := os.WriteFile(cfgPath, good, 0o644); err != nil {
		t.Fatal(err)
	}

	opened, mailed := openedCount(t, st), len(mails)
	r.stop(t)

	// Restart on the same data directory.
	r2 := start(t, cfgPath)
	time.Sleep(4 * time.Second) // several notify rounds and ack polls
	st2 := r2.d.Store()
	if n := openedCount(t, st2); n != opened {
		t.Errorf("after restart %d fault openings in the history, before %d: faults re-opened", n, opened)
	}
	if n := len(spool(t, data)); n != mailed {
		t.Errorf("after restart %d messages in the spool, before %d: mail re-sent", n, mailed)
	}
	if n := len(r2.d.cur.Faults0()); n != len(open) && n == 0 {
		t.Errorf("after restart %d open faults, before %d", n, len(open))
	}
	if !strings.Contains(get(t, r2.url+"/metrics"), "risewatch_fault_active{") {
		t.Error("after restart /metrics has no active-fault gauge")
	}

	// Acknowledge from the dashboard's backend: applied and persisted.
	f := r2.d.cur.Faults0()[0]
	if err := r2.d.cur.Ack(context.Background(), f.FaultID, "Test Operator", "checked"); err != nil {
		t.Fatal(err)
	}
	acked := false
	for _, o := range r2.d.cur.Faults0() {
		if o.FaultID == f.FaultID && o.AckedBy == "Test Operator" {
			acked = true
		}
	}
	if !acked {
		t.Errorf("%s not acknowledged in the open list after Ack", f.FaultID)
	}
	r2.stop(t)
}

// TestSeriesRingRoundTrip: the hourly ring keeps means per hour and
// survives its store encoding.
func TestSeriesRingRoundTrip(t *testing.T) {
	r := newSeriesRing(2)
	t0 := time.Date(2025, 1, 13, 6, 0, 0, 0, time.UTC)
	for m := 0; m < 180; m++ {
		ev := evidenceAt(1, t0.Add(time.Duration(m)*time.Minute), float64(m/60)+1)
		r.add(ev)
	}
	pts := ringPoints(t, r, 1, t0, t0.Add(3*time.Hour))
	if len(pts) != 3 {
		t.Fatalf("%d hourly points, want 3", len(pts))
	}
	for i, p := range pts {
		if want := float64(i + 1); p.ObservedRiseK != want { // every minute of hour i carried i+1
			t.Errorf("hour %d: mean %g, want %g", i, p.ObservedRiseK, want)
		}
	}
	r2 := newSeriesRing(2)
	if err := r2.unmarshal(1, r.marshal(1)); err != nil {
		t.Fatal(err)
	}
	if got := ringPoints(t, r2, 1, t0, t0.Add(3*time.Hour)); len(got) != 3 || got[2].ObservedRiseK != 3 {
		t.Errorf("after round trip: %+v", got)
	}
	if len(ringPoints(t, r, 0, t0, t0.Add(3*time.Hour))) != 0 {
		t.Error("terminal 0 has points it never got")
	}
}
