package reliability

import (
	"fmt"
	"os"
	"path/filepath"
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
)

// TestDaemonBACnetFaultsAndKill9 runs `risewatch run` against a simulated
// BACnet campus where some controllers are silent, too slow, cannot answer
// (Abort), reject ReadPropertyMultiple, duplicate answers or precede them
// with malformed frames. The daemon keeps polling and analysing the
// healthy terminals, counts the unreadable points in its stale-points
// gauge, survives kill -9 in that state, and after a restart picks up a
// controller that has come back.
func TestDaemonBACnetFaultsAndKill9(t *testing.T) {
	t.Parallel()
	const silent, slow, abort, reject, dup, malformed = 0, 2, 4, 6, 8, 10
	mis := map[string]bacnetdev.Misbehaviour{
		TerminalID(silent):    {Silent: true},
		TerminalID(slow):      {Delay: 3 * time.Second},
		TerminalID(reject):    {RejectRPM: true},
		TerminalID(dup):       {Duplicate: true},
		TerminalID(malformed): {MalformedFirst: true},
	}
	c := startCampus(t, CampusConfig{Groups: 2, PerGroup: 8, PollInterval: 2 * time.Second, Timeout: 300 * time.Millisecond, Retries: 1,
		Tweak: func(id string, dc *bacnetdev.DeviceConfig) {
			dc.Misbehaviour = mis[id]
			if id == TerminalID(abort) {
				dc.MaxAPDU, dc.Segmentation = 12, wire.NoSegmentation
			}
		}})
	dir := t.TempDir()
	cfg := filepath.Join(dir, "site.yaml")
	if err := os.WriteFile(cfg, []byte(c.SiteYAML(fmt.Sprintf("daemon:\n  data_dir: %s\n  step: 10s\n  persist_every: 2s\n  report: {disabled: true}\n", filepath.Join(dir, "data")))), 0o644); err != nil {
		t.Fatal(err)
	}
	logFile := filepath.Join(dir, "risewatch.log")
	evidenceAt := func(ch *child, id string) float64 {
		v, _ := ch.metric("risewatch_terminal_evidence_timestamp_seconds", `terminal="`+id+`"`)
		return v
	}
	stale := func(ch *child) float64 {
		v, ok := ch.metric("risewatch_source_stale_points", `source="bas"`)
		if !ok {
			return -1
		}
		return v
	}
	healthy := []string{TerminalID(1), TerminalID(reject), TerminalID(dup), TerminalID(malformed), TerminalID(len(c.Terminals) - 1)}
	unreadable := []string{TerminalID(silent), TerminalID(slow), TerminalID(abort)}

	a := startChild(t, cfg, logFile)
	waitFor(t, 90*time.Second, "two analysis steps of the healthy terminals", func() bool {
		v, _ := a.metric("risewatch_analysis_steps_total")
		return v >= 2 && evidenceAt(a, healthy[0]) > 0
	}, logFile)
	for _, id := range healthy {
		if evidenceAt(a, id) == 0 {
			t.Errorf("healthy %s not analysed", id)
		}
	}
	want := float64(TerminalPoints * len(unreadable))
	waitFor(t, 30*time.Second, fmt.Sprintf("%g stale points", want), func() bool { return stale(a) == want }, logFile)
	reads0, _ := a.metric("risewatch_source_reads_total", `source="bas"`)
	last := evidenceAt(a, healthy[0])
	t.Logf("A: %g stale points, %g reads; kill -9", stale(a), reads0)
	a.kill9()

	// The silent controller comes back while the daemon is down.
	c.Terminals[silent].Dev.SetMisbehaviour(bacnetdev.Misbehaviour{})
	b := startChild(t, cfg, logFile)
	want = float64(TerminalPoints * (len(unreadable) - 1))
	waitFor(t, 60*time.Second, fmt.Sprintf("%g stale points after the restart", want), func() bool { return stale(b) == want }, logFile)
	waitFor(t, 90*time.Second, "analysis to continue after the restart, the recovered terminal included", func() bool {
		return evidenceAt(b, healthy[0]) > last && evidenceAt(b, TerminalID(silent)) > 0
	}, logFile)
	for _, id := range healthy {
		if evidenceAt(b, id) <= last-10 {
			t.Errorf("after the restart %s is not analysed", id)
		}
	}
	b.stop()
}
