package reliability

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"risewatch/collector/influx/influxtest"
	"risewatch/rules"
	"risewatch/sim"
	"risewatch/store"
)

// simCampus writes days of the simulated demo campus (the simulator injects
// the faults of its demo scenario), moves the daily trend files into a
// staging directory and returns the site file, the (empty) watched trend
// directory and the staged files in time order.
func simCampus(t *testing.T, days int, daemonSection string) (cfg, trendDir string, staged []string) {
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
	trendDir = filepath.Join(dir, sim.TrendDirName)
	stage := filepath.Join(dir, "stage")
	if err := os.Mkdir(stage, 0o755); err != nil {
		t.Fatal(err)
	}
	files, _ := filepath.Glob(filepath.Join(trendDir, "*.csv"))
	sort.Strings(files)
	for _, f := range files {
		to := filepath.Join(stage, filepath.Base(f))
		if err := os.Rename(f, to); err != nil {
			t.Fatal(err)
		}
		staged = append(staged, to)
	}
	if len(staged) < days {
		t.Fatalf("simulator wrote %d trend files for %d days", len(staged), days)
	}
	cfg = filepath.Join(dir, sim.SiteFile)
	y, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	y = append(y, strings.ReplaceAll(daemonSection, "%DIR%", dir)...)
	if err := os.WriteFile(cfg, y, 0o644); err != nil {
		t.Fatal(err)
	}
	return cfg, trendDir, staged
}

// drop moves a staged trend file into the watched folder in one rename,
// dated an hour back: a file that old has long settled, so the drop folder
// reads it at its next poll instead of watching it for the settle time.
func drop(t *testing.T, file, trendDir string) {
	t.Helper()
	old := time.Now().Add(-time.Hour)
	if err := os.Chtimes(file, old, old); err != nil {
		t.Fatal(err)
	}
	if err := os.Rename(file, filepath.Join(trendDir, filepath.Base(file))); err != nil {
		t.Fatal(err)
	}
}

const outageDaemon = `
daemon:
  data_dir: %DIR%/data
  persist_every: 2s
  influx: {url: %INFLUX%, bucket: %BUCKET%}
  notify:
    smtp: {addr: "127.0.0.1:%SMTP%", starttls: "off", auth: none, timeout: 5s}
    from: risewatch@test.example
    group_wait: 1s
    routes:
      - {name: operators, to: [ops@test.example]}
  report: {disabled: true}
`

// TestDaemonOutagesAndKill9 runs `risewatch run` on three simulated days
// delivered one file a day into its drop folder, through an InfluxDB
// outage and an SMTP server that refuses connections, with kill -9 of the
// daemon during each condition:
//
//	A  day 1; InfluxDB down, SMTP refusing      → kill -9
//	B  day 2; both still down                   → kill -9
//	C  InfluxDB back; the outbox drains         → kill -9 while draining
//	D  day 3; SMTP accepting                    → kill -9 after delivery
//	E  restart and SIGTERM
//
// Afterwards every analysed step of every terminal is in InfluxDB exactly
// once and without a gap, every fault transition in the store is there as
// an event, every opened fault reached the mailbox, and no message arrived
// twice (by Message-ID).
func TestDaemonOutagesAndKill9(t *testing.T) {
	t.Parallel()
	ifx := influxtest.Start(t)
	ifx.Stop()
	smtpPort := freePort(t)
	section := strings.NewReplacer("%INFLUX%", ifx.URL, "%BUCKET%", influxtest.Bucket, "%SMTP%", fmt.Sprint(smtpPort)).Replace(outageDaemon)
	cfg, trendDir, staged := simCampus(t, 3, section)
	dir := filepath.Dir(cfg)
	logFile := filepath.Join(dir, "risewatch.log")
	maildir := filepath.Join(dir, "mailbox")
	steps := func(c *child) float64 { v, _ := c.metric("risewatch_analysis_steps_total"); return v }
	buffered := func(c *child) float64 { v, _ := c.metric("risewatch_influx_buffer_items"); return v }
	// Unsent e-mail: fault events not yet grouped plus composed messages
	// (channels "email-event" and "email"), -1 before the first count.
	mailPending := func(c *child) float64 {
		v, ok := c.metric("risewatch_outbox_pending_items", `channel="email`)
		if !ok {
			return -1
		}
		return v
	}

	// A: day 1 with both outputs down.
	drop(t, staged[0], trendDir)
	a := startChild(t, cfg, logFile)
	waitFor(t, 90*time.Second, "day 1 analysed with InfluxDB down", func() bool { return steps(a) >= 600 && buffered(a) > 0 }, logFile)
	t.Logf("A: %g steps, %g influx items buffered, %g mails pending; kill -9", steps(a), buffered(a), mailPending(a))
	a.kill9()

	// B: day 2, still down.
	b := startChild(t, cfg, logFile)
	drop(t, staged[1], trendDir)
	waitFor(t, 90*time.Second, "day 2 analysed", func() bool { return steps(b) >= 1000 }, logFile)
	t.Logf("B: %g steps, %g influx items buffered, %g mails pending; kill -9", steps(b), buffered(b), mailPending(b))
	b.kill9()

	// C: InfluxDB back; kill -9 while the outbox drains.
	ifx.Restart()
	c := startChild(t, cfg, logFile)
	waitFor(t, 60*time.Second, "the first points to reach InfluxDB", func() bool {
		return len(influxSeries(t, ifx.URL, influxtest.Database, `SELECT COUNT(*) FROM risewatch_terminal`)) > 0
	}, logFile)
	t.Logf("C: %g influx items still buffered; kill -9", buffered(c))
	c.kill9()

	// D: day 3 and a mail server that accepts.
	startSMTPSink(t, smtpPort, maildir)
	d := startChild(t, cfg, logFile)
	drop(t, staged[2], trendDir)
	for _, f := range staged[3:] {
		drop(t, f, trendDir)
	}
	// A message that failed while the server refused waits out its back-off
	// (one minute after the first failure) before it is sent again.
	waitFor(t, 150*time.Second, "every file analysed, the influx outbox drained and every mail delivered", func() bool {
		return steps(d) >= 1000 && buffered(d) == 0 && mailPending(d) == 0 && len(mails(t, maildir)) > 0
	}, logFile)
	time.Sleep(2 * time.Second) // a grouping round for the newest transitions
	waitFor(t, 90*time.Second, "the newest mail delivered", func() bool { return mailPending(d) == 0 }, logFile)
	delivered := len(mails(t, maildir))
	t.Logf("D: %g steps, %d messages delivered; kill -9", steps(d), delivered)
	d.kill9()

	// E: restart; nothing is sent again.
	e := startChild(t, cfg, logFile)
	time.Sleep(5 * time.Second) // notify rounds, ack polls, sink rounds
	if n := buffered(e); n != 0 {
		t.Errorf("E: %g influx items buffered after the restart", n)
	}
	e.stop()

	checkMail(t, filepath.Join(dir, "data"), maildir, delivered)
	checkInflux(t, ifx, filepath.Join(dir, "data"))
	if t.Failed() {
		t.Logf("daemon log tail:\n%s", tail(logFile, 40))
	}
}

// history is the store's fault history (the test process opens the store
// once the daemon has exited).
func history(t *testing.T, data string) []rules.Transition {
	t.Helper()
	ctx := context.Background()
	st, err := store.Open(ctx, data, store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	h, err := st.History(ctx, store.HistoryQuery{})
	if err != nil {
		t.Fatal(err)
	}
	return h
}

func checkMail(t *testing.T, data, maildir string, delivered int) {
	t.Helper()
	ms := mails(t, maildir)
	if len(ms) != delivered {
		t.Errorf("%d messages after the restart, %d before: mail re-sent", len(ms), delivered)
	}
	ids := map[string]string{}
	mailed := map[string]bool{}
	for _, m := range ms {
		if m.messageID == "" {
			t.Errorf("%s has no Message-ID", m.file)
		} else if prev, dup := ids[m.messageID]; dup {
			t.Errorf("message %s delivered twice (%s and %s)", m.messageID, filepath.Base(prev), filepath.Base(m.file))
		}
		ids[m.messageID] = m.file
		for _, f := range m.faults {
			mailed[f] = true
		}
	}
	opened := 0
	for _, tr := range history(t, data) {
		if tr.To == rules.StateOpen && (tr.From == rules.StateClear || tr.From == rules.StatePending) {
			opened++
			if !mailed[tr.FaultID] {
				t.Errorf("fault %s (%s, opened %s) was never mailed", tr.FaultID, tr.Kind, tr.At.Format(time.RFC3339))
			}
		}
	}
	if opened == 0 {
		t.Error("no fault opened on three days of a campus with injected faults")
	}
	t.Logf("mail: %d messages, %d distinct Message-IDs, %d faults opened, %d named in mail", len(ms), len(ids), opened, len(mailed))
}

func checkInflux(t *testing.T, ifx *influxtest.Server, data string) {
	t.Helper()
	series := influxSeries(t, ifx.URL, influxtest.Database, `SELECT * FROM risewatch_terminal GROUP BY terminal`)
	if len(series) == 0 {
		t.Fatal("no terminal series in InfluxDB")
	}
	var first, last time.Time
	counts := map[int]int{}
	for _, s := range series {
		var prev time.Time
		for i, row := range s.Values {
			at, err := time.Parse(time.RFC3339Nano, fmt.Sprint(row[0]))
			if err != nil {
				t.Fatalf("terminal %s: time %v: %v", s.Tags["terminal"], row[0], err)
			}
			if i > 0 && at.Sub(prev) != time.Minute {
				t.Errorf("terminal %s: gap or disorder from %s to %s", s.Tags["terminal"], prev.Format(time.RFC3339), at.Format(time.RFC3339))
				break
			}
			prev = at
			if first.IsZero() || at.Before(first) {
				first = at
			}
			if at.After(last) {
				last = at
			}
		}
		counts[len(s.Values)]++
	}
	if len(counts) != 1 {
		t.Errorf("terminals have different numbers of steps in InfluxDB: %v (count: terminals)", counts)
	}
	t.Logf("influx: %d terminals, steps %s to %s, counts %v", len(series), first.Format(time.RFC3339), last.Format(time.RFC3339), counts)

	events := influxSeries(t, ifx.URL, influxtest.Database, `SELECT COUNT(*) FROM risewatch_fault_event`)
	stored := len(history(t, data))
	n := 0
	if len(events) > 0 && len(events[0].Values) > 0 {
		for _, v := range events[0].Values[0][1:] {
			if f, ok := v.(float64); ok && int(f) > n {
				n = int(f)
			}
		}
	}
	if n != stored {
		t.Errorf("%d fault events in InfluxDB, %d transitions in the store", n, stored)
	}
}
