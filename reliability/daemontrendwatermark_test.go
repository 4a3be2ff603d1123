package reliability

import (
	"bytes"
	"compress/gzip"
	"context"
	"fmt"
	"io"
	"log/slog"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"os/signal"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"risewatch/collector/bacnet"
	"risewatch/daemon"
	"risewatch/publish/influx"
	"risewatch/sim/bacnetdev"
	"risewatch/store"
	"risewatch/units"
)

// Trend logs of the kill -9 test: on every terminal controller the
// discharge temperature every minute and the zone temperature every five;
// on the AHU controller the supply air every minute.
const (
	twmLogDAT, twmLogZone, twmLogSAT = 2, 3, 1
	twmHistory                       = 3 * 24 * 60 // minutes of history in the logs at start
	twmTerminals                     = 6
)

// twmDAT is terminal i's logged discharge temperature (°F) at minute m:
// quarter degrees, exact in the log's single-precision REAL.
func twmDAT(i, m int) float64 { return 75 + float64((m*7+i*5)%41)/4 }

// TestDaemonBACnetTrendHistoryKill9 runs the daemon (in a child process,
// with lifecycle snapshots every 100 ms so the watermark moves often)
// against simulated controllers holding days of trend logs, kills it with
// SIGKILL at random moments of the backfill again and again while the
// controllers log on between runs (three days in all), then lets a last
// run finish and stops it. InfluxDB is unreachable throughout, so
// every step's points stay in the store's outbox, which is then read
// directly: every minute of the history has its step for every terminal,
// with the logged discharge temperature (not a value held over a lost
// record), and every version of a step that a crash made the daemon write
// again carries the same observations.
func TestDaemonBACnetTrendHistoryKill9(t *testing.T) {
	if cfg := os.Getenv("RW_TWM_CONFIG"); cfg != "" {
		twmChild(t, cfg, os.Getenv("RW_TWM_LISTEN"))
		return
	}
	t.Parallel()
	c := startCampus(t, CampusConfig{Groups: 1, PerGroup: twmTerminals, PollInterval: 2 * time.Second, Timeout: 500 * time.Millisecond, Retries: 2})
	end := time.Now().UTC().Truncate(time.Minute).Add(-time.Minute)
	t0 := end.Add(-twmHistory * time.Minute)
	ahu := c.AHUs[0].Dev
	for _, d := range c.Terminals {
		d.Dev.AddTrendLog(bacnetdev.TrendLogConfig{Instance: twmLogDAT, Logged: ObjDischarge, BufferSize: twmHistory + 100})
		d.Dev.AddTrendLog(bacnetdev.TrendLogConfig{Instance: twmLogZone, Logged: ObjZone, BufferSize: twmHistory/5 + 100})
	}
	ahu.AddTrendLog(bacnetdev.TrendLogConfig{Instance: twmLogSAT, Logged: ObjSAT, BufferSize: twmHistory + 100})
	logged := 0 // minutes of the history in the logs so far
	logTo := func(n int) {
		for ; logged < n; logged++ {
			m, at := logged, t0.Add(time.Duration(logged)*time.Minute)
			for i, d := range c.Terminals {
				if err := d.Dev.Record(twmLogDAT, at, twmDAT(i, m), [4]bool{}); err != nil {
					t.Fatal(err)
				}
				if m%5 == 0 {
					if err := d.Dev.Record(twmLogZone, at, 70+float64(m/5%9)/4, [4]bool{}); err != nil {
						t.Fatal(err)
					}
				}
			}
			if err := ahu.Record(twmLogSAT, at, 55+float64(m%11)/4, [4]bool{}); err != nil {
				t.Fatal(err)
			}
		}
	}
	// The newest 1320 minutes are logged while the daemon is down, 220
	// after each kill (stamped before the wall clock, so before any polled
	// value).
	logTo(twmHistory - 6*220)

	dir := t.TempDir()
	data := filepath.Join(dir, "data")
	section := fmt.Sprintf("daemon:\n  data_dir: %s\n  persist_every: 2s\n  report: {disabled: true}\n  influx: {url: \"http://127.0.0.1:%d\", bucket: %s}\n",
		data, freePort(t), "risewatch/autogen")
	y := c.SiteYAML(section)
	for _, r := range [][2]string{
		{`discharge:        {object: "analog-input:2", unit: degF}`, `discharge:        {object: "analog-input:2", trend_log: 2, unit: degF}`},
		{`zone_temp:        {object: "analog-input:3", unit: degF}`, `zone_temp:        {object: "analog-input:3", trend_log: 3, unit: degF}`},
		{`supply_air:       {object: "analog-input:1", unit: degF}`, `supply_air:       {object: "analog-input:1", trend_log: 1, unit: degF}`},
	} {
		if !strings.Contains(y, r[0]) {
			t.Fatalf("campus site file lacks %q", r[0])
		}
		y = strings.Replace(y, r[0], r[1], 1)
	}
	cfg := filepath.Join(dir, "site.yaml")
	if err := os.WriteFile(cfg, []byte(y), 0o644); err != nil {
		t.Fatal(err)
	}
	logFile := filepath.Join(dir, "risewatch.log")
	steps := func(ch *child) float64 { v, _ := ch.metric("risewatch_analysis_steps_total"); return v }
	newest := func(ch *child) time.Time {
		low := math.Inf(1)
		for i := range c.Terminals {
			v, ok := ch.metric("risewatch_terminal_evidence_timestamp_seconds", `terminal="`+TerminalID(i)+`"`)
			if !ok {
				return time.Time{}
			}
			low = min(low, v)
		}
		return time.Unix(int64(low), 0).UTC()
	}

	// Kill -9 at random moments of the backfill: once a run has analysed a
	// random number of steps (each run resumes from its watermark; six
	// runs of at most 500 steps stay well inside the history logged).
	rng := rand.New(rand.NewPCG(21, 22))
	kills, moved := 0, 0
	for run := 0; run < 6; run++ {
		ch := startTestChild(t, cfg, logFile)
		want := float64(1 + rng.IntN(500))
		waitForQuick(t, 30*time.Second, fmt.Sprintf("run %d to analyse %g steps", run, want), func() bool { return steps(ch) >= want }, logFile)
		ch.kill9()
		kills++
		w, seq := twmStored(t, data, c.Terminals[0].Instance)
		t.Logf("run %d: kill -9 after %g steps; stored watermark %s, discharge log of %s at record %d",
			run, want, w.Format(time.RFC3339), TerminalID(0), seq)
		// Never newer than the watermark allows: every record before the
		// stored position (record k is minute k-1) predates W − lookback
		// (the hold limit, 20 min, plus one step).
		if seq > 0 && !t0.Add(time.Duration(seq-1)*time.Minute).Before(w.Add(-21*time.Minute)) {
			t.Errorf("run %d: trend-log position %d (minute %s) not before the watermark %s less the lookback",
				run, seq, t0.Add(time.Duration(seq-1)*time.Minute).Format(time.RFC3339), w.Format(time.RFC3339))
		}
		if !w.IsZero() && seq > 0 {
			moved++
		}
		logTo(logged + 220) // the controllers log on while the daemon is down
	}
	if logged != twmHistory {
		t.Fatalf("%d minutes logged, want %d", logged, twmHistory)
	}
	if moved < 3 {
		t.Errorf("a watermark and a trend-log position were stored before only %d of %d kills: the backfill was not resumed mid-way", moved, kills)
	}
	last := startTestChild(t, cfg, logFile)
	waitFor(t, 60*time.Second, "every terminal analysed past the end of the history", func() bool {
		return !newest(last).Before(end)
	}, logFile)
	last.stop()

	// Read every step's terminal points from the outbox (nothing was sent).
	ctx := context.Background()
	st, err := store.Open(ctx, data, store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	items, err := st.DueOn(ctx, influx.DefaultChannel, time.Now().Add(24*time.Hour), 1<<30)
	if err != nil {
		t.Fatal(err)
	}
	type key struct {
		term string
		at   int64
	}
	seen := map[key]map[string]bool{} // discharge_c values written for a terminal's step
	versions := map[int64]map[string]bool{}
	for _, it := range items {
		lines, err := gunzip(it.Payload)
		if err != nil {
			t.Fatalf("outbox item %s: %v", it.Key, err)
		}
		for _, l := range strings.Split(strings.TrimSpace(string(lines)), "\n") {
			if !strings.HasPrefix(l, influx.MeasTerminal+",") {
				continue
			}
			term, dat, at, ok := terminalDAT(l)
			if !ok {
				continue
			}
			k := key{term, at}
			if seen[k] == nil {
				seen[k] = map[string]bool{}
			}
			seen[k][dat] = true
			if versions[at] == nil {
				versions[at] = map[string]bool{}
			}
			versions[at][it.Key] = true
		}
	}
	degF, err := units.ParseUnit("degF")
	if err != nil {
		t.Fatal(err)
	}
	rewritten, bad := 0, 0
	for m := 0; m < twmHistory && bad < 10; m++ {
		at := t0.Add(time.Duration(m) * time.Minute).UnixNano()
		if len(versions[at]) > 1 {
			rewritten++
		}
		for i := range c.Terminals {
			vals := seen[key{TerminalID(i), at}]
			want := degF.ToSI(float64(float32(twmDAT(i, m))))
			switch {
			case len(vals) == 0:
				t.Errorf("%s: step %s (minute %d of the history) never analysed", TerminalID(i), time.Unix(0, at).UTC().Format(time.RFC3339), m)
				bad++
			case len(vals) > 1:
				t.Errorf("%s: step %s written with different discharge temperatures %v", TerminalID(i), time.Unix(0, at).UTC().Format(time.RFC3339), vals)
				bad++
			default:
				for v := range vals {
					got, _ := strconv.ParseFloat(v, 64)
					if math.Abs(got-want) > 1e-9 {
						t.Errorf("%s: step %s discharge %g °C, the trend log has %g °C there", TerminalID(i), time.Unix(0, at).UTC().Format(time.RFC3339), got, want)
						bad++
					}
				}
			}
		}
	}
	t.Logf("%d kills; %d outbox items; %d history minutes × %d terminals checked; %d steps with more than one outbox version",
		kills, len(items), twmHistory, len(c.Terminals), rewritten)
	if t.Failed() {
		t.Logf("daemon log tail:\n%s", tail(logFile, 40))
	}
}

// twmStored reads, with the daemon down, its stored watermark and the
// stored position (last record not read again; 0: none) of the discharge
// trend log of device dev.
func twmStored(t *testing.T, data string, dev uint32) (time.Time, uint32) {
	t.Helper()
	st, err := store.Open(context.Background(), data, store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	var w time.Time
	if b, ok, err := st.Checkpoints("daemon/all/").Get("watermark"); err != nil {
		t.Fatal(err)
	} else if ok {
		ns, err := strconv.ParseInt(string(b), 10, 64)
		if err != nil {
			t.Fatalf("stored watermark %q: %v", b, err)
		}
		w = time.Unix(0, ns).UTC()
	}
	var seq uint32
	if b, ok, err := st.Checkpoints("bacnet:bas/").Get(bacnet.TrendKey(dev, twmLogDAT)); err != nil {
		t.Fatal(err)
	} else if ok {
		n, err := strconv.ParseUint(strings.TrimPrefix(string(b), "seq "), 10, 32)
		if err != nil {
			t.Fatalf("stored trend position %q: %v", b, err)
		}
		seq = uint32(n)
	}
	return w, seq
}

// terminalDAT parses a risewatch_terminal line: its terminal tag, the
// discharge_c field as written and the timestamp.
func terminalDAT(l string) (term, dat string, at int64, ok bool) {
	sp := strings.LastIndexByte(l, ' ')
	if sp < 0 {
		return "", "", 0, false
	}
	at, err := strconv.ParseInt(l[sp+1:], 10, 64)
	if err != nil {
		return "", "", 0, false
	}
	i := strings.Index(l, "terminal=")
	j := strings.Index(l, "discharge_c=")
	if i < 0 || j < 0 {
		return "", "", 0, false
	}
	term = l[i+len("terminal="):]
	term = term[:strings.IndexAny(term, ", ")]
	dat = l[j+len("discharge_c="):]
	dat = dat[:strings.IndexAny(dat, ", ")]
	return term, dat, at, true
}

func gunzip(p []byte) ([]byte, error) {
	if len(p) < 2 || p[0] != 0x1f || p[1] != 0x8b {
		return p, nil
	}
	zr, err := gzip.NewReader(bytes.NewReader(p))
	if err != nil {
		return nil, err
	}
	return io.ReadAll(zr)
}

// waitForQuick polls cond every 20 ms up to limit.
func waitForQuick(t testing.TB, limit time.Duration, what string, cond func() bool, logFile string) {
	t.Helper()
	deadline := time.Now().Add(limit)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("timed out after %s waiting for %s; log:\n%s", limit, what, tail(logFile, 25))
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// startTestChild runs this test binary as the daemon (twmChild) and waits
// until it serves /healthz.
func startTestChild(t *testing.T, cfg, logFile string) *child {
	t.Helper()
	listen := fmt.Sprintf("127.0.0.1:%d", freePort(t))
	cmd := exec.Command(os.Args[0], "-test.run=^"+t.Name()+"$", "-test.count=1")
	cmd.Env = append(os.Environ(), "RW_TWM_CONFIG="+cfg, "RW_TWM_LISTEN="+listen)
	return launchChild(t, cmd, logFile, "http://"+listen, 30*time.Second)
}

// twmChild is the child's side: the daemon on cfg until SIGTERM.
func twmChild(t *testing.T, cfg, listen string) {
	ctx, stop := signal.NotifyContext(context.Background(), syscall.SIGTERM)
	defer stop()
	log := slog.New(slog.NewTextHandler(os.Stderr, &slog.HandlerOptions{Level: slog.LevelInfo}))
	d, first, err := daemon.New(daemon.Options{ConfigPath: cfg, Listen: listen, SnapshotEvery: 100 * time.Millisecond, Logger: log})
	if err != nil {
		t.Fatal(err)
	}
	if err := d.Run(ctx, first); err != nil {
		t.Fatal(err)
	}
}
