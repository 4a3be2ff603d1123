package reliability

import (
	"bytes"
	"context"
	"log/slog"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet"
	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
)

// lockedBuffer collects log output from several goroutines.
type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// deviceFault is one misbehaving terminal controller of TestBACnetFaults.
type deviceFault struct {
	name string
	mis  bacnetdev.Misbehaviour
	// maxAPDU and noSeg shrink what the device can answer (Abort).
	maxAPDU int
	noSeg   bool
	// unknownDAT points the terminal's discharge at an object the device
	// does not have (an Error answer or a per-property access error).
	unknownDAT bool
	// flags sets the DAT's status flags (fault, out-of-service).
	flags [4]bool
	// want is the quality of the terminal's points: all, and the DAT's.
	want, wantDAT collector.Quality
}

// TestBACnetFaults: among healthy controllers, some are silent, slow,
// reject ReadPropertyMultiple, answer Error, Abort, duplicated or
// malformed frames, drop requests or flag their values. Every poll still
// reads every healthy point Good and in bounded time, each faulty
// device's points get the quality that describes them, the assembler
// hands the engine complete samples for the healthy terminals and flagged
// ones for the others, and the client's counters show each condition.
func TestBACnetFaults(t *testing.T) {
	const timeout, retries = 300 * time.Millisecond, 1
	faults := []deviceFault{
		{name: "silent", mis: bacnetdev.Misbehaviour{Silent: true}, want: collector.Missing, wantDAT: collector.Missing},
		{name: "slow, inside the timeout", mis: bacnetdev.Misbehaviour{Delay: 100 * time.Millisecond}, want: collector.Good, wantDAT: collector.Good},
		{name: "slower than timeout and retries", mis: bacnetdev.Misbehaviour{Delay: 2 * time.Second}, want: collector.Missing, wantDAT: collector.Missing},
		{name: "rejects ReadPropertyMultiple", mis: bacnetdev.Misbehaviour{RejectRPM: true}, want: collector.Good, wantDAT: collector.Good},
		{name: "duplicates every answer", mis: bacnetdev.Misbehaviour{Duplicate: true}, want: collector.Good, wantDAT: collector.Good},
		{name: "malformed frame before every answer", mis: bacnetdev.Misbehaviour{MalformedFirst: true}, want: collector.Good, wantDAT: collector.Good},
		{name: "drops its first requests", mis: bacnetdev.Misbehaviour{DropFirst: 1}, want: collector.Good, wantDAT: collector.Good},
		{name: "unknown object (access error in the RPM answer)", unknownDAT: true, want: collector.Good, wantDAT: collector.Missing},
		{name: "unknown object (Error PDU to ReadProperty)", mis: bacnetdev.Misbehaviour{RejectRPM: true}, unknownDAT: true, want: collector.Good, wantDAT: collector.Missing},
		{name: "answers too big for it (Abort, then split)", maxAPDU: 60, noSeg: true, want: collector.Good, wantDAT: collector.Good},
		{name: "cannot answer at all (Abort)", maxAPDU: 12, noSeg: true, want: collector.Missing, wantDAT: collector.Missing},
		{name: "DAT flagged fault", flags: [4]bool{false, true, false, false}, want: collector.Good, wantDAT: collector.Bad},
		{name: "DAT out of service", flags: [4]bool{false, false, false, true}, want: collector.Good, wantDAT: collector.Bad},
	}
	byID := map[string]*deviceFault{}
	for i := range faults {
		byID[TerminalID(2*i)] = &faults[i] // every other terminal is faulty
	}
	c := startCampus(t, CampusConfig{Groups: 3, PerGroup: 12, Timeout: timeout, Retries: retries,
		Tweak: func(id string, dc *bacnetdev.DeviceConfig) {
			if f := byID[id]; f != nil {
				dc.Misbehaviour = f.mis
				if f.maxAPDU > 0 {
					dc.MaxAPDU = f.maxAPDU
				}
				if f.noSeg {
					dc.Segmentation = wire.NoSegmentation
				}
			}
		}})
	for _, d := range c.Terminals {
		if f := byID[d.ID]; f != nil && f.flags != [4]bool{} {
			if err := d.Dev.SetFlags(ObjDischarge, f.flags); err != nil {
				t.Fatal(err)
			}
		}
	}
	s, _ := loadSite(t, c.SiteYAML(""))
	for i := range s.Terminals {
		if f := byID[s.Terminals[i].ID]; f != nil && f.unknownDAT {
			s.Terminals[i].Points.Discharge.BACnet.Instance = 99
		}
	}
	logs := &lockedBuffer{}
	log := slog.New(slog.NewTextHandler(logs, &slog.HandlerOptions{Level: slog.LevelDebug}))
	src, err := bacnet.NewSource("bas", *s.Sources[0].BACnet, bacnet.PointsFor(s, "bas"), nil, time.UTC, log)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	if err := src.Start(ctx); err != nil {
		t.Fatalf("one bad device must not stop the source: %v", err)
	}
	defer src.Close()
	asm, err := collector.NewAssembler(s, collector.AssembleConfig{Resample: collector.ResampleConfig{Interval: time.Minute},
		Lateness: time.Hour, Sources: []string{"bas"}, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	need := collector.FlagAirflow | collector.FlagDischarge | collector.FlagValve
	var flagged map[string]collector.Flags
	emit := func(b []collector.Sample) {
		flagged = map[string]collector.Flags{}
		for _, sm := range b {
			flagged[s.Terminals[sm.Terminal].ID] = sm.Flags & need
		}
	}
	at := time.Date(2025, 1, 14, 8, 0, 0, 0, time.UTC)
	const polls = 4
	for p := 0; p < polls; p++ {
		t0 := time.Now()
		rs, err := src.PollOnce(ctx)
		if err != nil {
			t.Fatalf("poll %d: %v", p, err)
		}
		t.Logf("poll %d: %s", p, time.Since(t0).Round(time.Millisecond))
		if len(rs) != c.Points() {
			t.Fatalf("poll %d: %d readings, want %d", p, len(rs), c.Points())
		}
		for _, r := range rs {
			id, role, _ := strings.Cut(r.Point, ".")
			want := collector.Good
			f := byID[id]
			if f != nil {
				want = f.want
				if role == "DAT" {
					want = f.wantDAT
				}
			}
			if r.Quality != want {
				what := "healthy"
				if f != nil {
					what = f.name
				}
				t.Errorf("poll %d: %s (%s): quality %s, want %s", p, r.Point, what, r.Quality, want)
			}
		}
		for k := range rs {
			rs[k].At = at.Add(time.Duration(p) * time.Minute)
		}
		asm.Add("bas", rs, emit)
	}
	if flagged == nil {
		t.Fatal("the assembler emitted no step")
	}
	for id, fl := range flagged {
		f := byID[id]
		switch {
		case f == nil && fl != 0:
			t.Errorf("healthy %s reached the engine with flags %b", id, fl)
		case f != nil && f.want != collector.Good && fl&need != need:
			t.Errorf("%s (%s): flags %b, want airflow, discharge and valve missing", id, f.name, fl)
		case f != nil && f.want == collector.Good && f.wantDAT != collector.Good && fl != collector.FlagDischarge:
			t.Errorf("%s (%s): flags %b, want only the discharge missing", id, f.name, fl)
		}
	}
	st := &src.Client().Stats
	for _, c := range []struct {
		what string
		n    uint64
	}{
		{"timeouts (silent and too-slow devices)", st.Timeouts.Load()},
		{"retries (dropped requests, timeouts)", st.Retries.Load()},
		{"malformed frames", st.Malformed.Load()},
		{"unmatched (duplicated and late) answers", st.Unmatched.Load()},
	} {
		if c.n == 0 {
			t.Errorf("client counted no %s", c.what)
		}
		t.Logf("client: %s: %d", c.what, c.n)
	}
	// The client logs malformed traffic (debug level). A ReadPropertyMultiple
	// rejected at start-up switches the device to ReadProperty without a
	// log line, and per-device timeouts, Error and Abort answers reach
	// neither the log nor the error-kind metrics: only the points' quality
	// (the daemon's stale-points gauge) and these client counters show them.
	if out := logs.String(); !strings.Contains(out, "dropped malformed frame") {
		t.Error(`log lacks "dropped malformed frame"`)
	}
}
