package bacnet

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/sim/bacnetdev"
	"risewatch/site"
)

// wmStart is the first minute of the trend-log history.
var wmStart = time.Date(2025, 2, 3, 4, 0, 0, 0, time.UTC)

// wmLog is one trend log of the restart tests: its point and how it logs.
type wmLog struct {
	name   string
	dev    uint32
	ai, tl uint32
	every  int              // minutes between records
	hole   func(m int) bool // minutes not logged (longer than the hold limit)
	set    func(*site.TerminalPoints, site.PointRef)
	value  func(m int) float64
}

var wmLogs = []wmLog{
	{name: "VAV-1.DAT", dev: 70, ai: 1, tl: 1, every: 1, value: func(m int) float64 { return 30 + float64(m%97)/10 },
		set: func(p *site.TerminalPoints, r site.PointRef) { p.Discharge = r }},
	{name: "VAV-1.ZNT", dev: 70, ai: 2, tl: 2, every: 7, value: func(m int) float64 { return 21 + float64(m%13)/10 },
		set: func(p *site.TerminalPoints, r site.PointRef) { p.ZoneTemp = r }},
	{name: "VAV-2.DAT", dev: 70, ai: 3, tl: 3, every: 1, hole: func(m int) bool { return m >= 410 && m < 445 },
		value: func(m int) float64 { return 28 + float64(m%31)/10 }, set: func(p *site.TerminalPoints, r site.PointRef) { p.Discharge = r }},
	{name: "VAV-2.ZNT", dev: 71, ai: 1, tl: 1, every: 3, value: func(m int) float64 { return 22 + float64(m%11)/10 },
		set: func(p *site.TerminalPoints, r site.PointRef) { p.ZoneTemp = r }},
	{name: "AHU-1.SAT", dev: 71, ai: 2, tl: 2, every: 1, value: func(m int) float64 { return 13 + float64(m%17)/10 }},
}

// wmRig is a simulated pair of controllers (one behind a router) whose
// trend logs hold wmLogs' history, and the site reading them.
type wmRig struct {
	srv  *bacnetdev.Server
	devs map[uint32]*bacnetdev.Device
	site *site.Site
	refs []site.PointRef
	cfg  site.BACnetConfig
	mins int // minutes logged so far
}

func newWMRig(t testing.TB, buffer int) *wmRig {
	s, d70 := newSim(t, bacnetdev.DeviceConfig{Instance: 70, MaxAPDU: 480}, 3)
	d71, err := s.AddDevice(bacnetdev.DeviceConfig{Instance: 71, Network: 9, MAC: 4, MaxAPDU: 206})
	if err != nil {
		t.Fatal(err)
	}
	for i := uint32(1); i <= 2; i++ {
		d71.AddObject(bacnetdev.Object{ID: ai(i), Units: uint32(UnitDegreesCelsius)})
	}
	rg := &wmRig{srv: s, devs: map[uint32]*bacnetdev.Device{70: d70, 71: d71},
		cfg: site.BACnetConfig{Bind: "127.0.0.1:0", Timeout: time.Second, Retries: 2,
			Devices: map[uint32]string{70: s.Addr().String(), 71: s.Addr().String() + "/9:04"}}}
	terms := []site.Terminal{{ID: "VAV-1", AHU: "AHU-1"}, {ID: "VAV-2", AHU: "AHU-1"}}
	ahu := site.AHU{ID: "AHU-1"}
	for _, l := range wmLogs {
		rg.devs[l.dev].AddTrendLog(bacnetdev.TrendLogConfig{Instance: l.tl, Logged: ai(l.ai), BufferSize: buffer})
		tl := l.tl
		r := bref(l.name, l.dev, "analog-input", l.ai, "degC", &tl)
		rg.refs = append(rg.refs, r)
		switch {
		case l.set == nil:
			ahu.SupplyAir = r
		case strings.HasPrefix(l.name, "VAV-1"):
			l.set(&terms[0].Points, r)
		default:
			l.set(&terms[1].Points, r)
		}
	}
	rg.site = &site.Site{Name: "watermark", Terminals: terms, AHUs: []site.AHU{ahu}}
	rg.site.Index()
	return rg
}

// log records minutes [mins, mins+n) into every trend log.
func (rg *wmRig) log(t testing.TB, n int) {
	for end := rg.mins + n; rg.mins < end; rg.mins++ {
		m := rg.mins
		for _, l := range wmLogs {
			if m%l.every != 0 || (l.hole != nil && l.hole(m)) {
				continue
			}
			if err := rg.devs[l.dev].Record(l.tl, wmStart.Add(time.Duration(m)*time.Minute), l.value(m), [4]bool{}); err != nil {
				t.Fatal(err)
			}
		}
	}
}

// world is what survives a crash: the checkpoint store and the consumer's
// output. Once dead, nothing the process does is durable any more (as
// after kill -9): Puts are dropped and no output is written.
type world struct {
	mu    sync.Mutex
	ck    map[string][]byte
	out   []string
	dead  atomic.Bool
	puts  int         // writes applied in the current commit
	onPut func(n int) // called after each write applied, with puts
	batch bool        // the store offers PutMany
	// legacy runs the source as a daemon did before trend-log checkpoints
	// followed the watermark: the sweeps store each log's position after
	// delivery, the consumer's commits store the watermark only.
	legacy bool
}

func (w *world) Get(k string) ([]byte, bool, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	v, ok := w.ck[k]
	return slices.Clone(v), ok, nil
}

func (w *world) Put(k string, v []byte) error {
	return w.putMany(map[string][]byte{k: v})
}

func (w *world) putMany(kv map[string][]byte) error {
	if w.dead.Load() {
		return nil // the process is gone: nothing it writes lands
	}
	w.mu.Lock()
	for k, v := range kv {
		w.ck[k] = slices.Clone(v)
	}
	w.puts++
	n := w.puts
	w.mu.Unlock()
	if w.onPut != nil {
		w.onPut(n)
	}
	return nil
}

// batchWorld is a world whose store writes several positions at once.
type batchWorld struct{ *world }

func (b batchWorld) PutMany(kv map[string][]byte) error { return b.putMany(kv) }

func (w *world) write(line string) {
	if w.dead.Load() {
		return
	}
	w.mu.Lock()
	w.out = append(w.out, line)
	w.mu.Unlock()
}

// sweepSource runs a BACnet source's trend sweeps only (no present-value
// polls, whose stamps are the wall clock): sweep until a sweep delivers
// nothing, then end. afterEmit is called after each batch the assembler
// took.
type sweepSource struct {
	src                  *Source
	afterEmit, afterSwep func()
	ended                chan struct{} // closed when Run returns (if set)
}

func (w *sweepSource) Name() string { return w.src.Name() }

func (w *sweepSource) Run(ctx context.Context, out chan<- []collector.Reading) error {
	if w.ended != nil {
		defer close(w.ended)
	}
	if err := w.src.Start(ctx); err != nil {
		return err
	}
	defer w.src.Close()
	for {
		n := 0
		_, err := w.src.SweepTrends(ctx, func(rs []collector.Reading) error {
			select {
			case out <- rs:
			case <-ctx.Done():
				return ctx.Err()
			}
			n += len(rs)
			if w.afterEmit != nil {
				w.afterEmit()
			}
			return nil
		})
		if err != nil || n == 0 {
			return err
		}
		if w.afterSwep != nil {
			w.afterSwep()
		}
	}
}

// crashPlan says where a run dies: after its source's emit number at
// returned ("sweep"), after its sweep number at returned ("sweep-end"),
// after the consumer accepted its step number at, before the commit that
// would follow ("accept"), or inside commit number at after put writes of
// it ("commit"; 0: the watermark not yet stored; 1: the watermark stored,
// no log position yet).
type crashPlan struct {
	where string // "sweep", "sweep-end", "accept", "commit" or "" (no crash)
	at    int
	put   int
}

// wmLine is one step as the consumer records it: its time and every
// sample value exactly (float bits and flags).
func wmLine(ss []collector.Sample) string {
	var sb strings.Builder
	sb.WriteString(strconv.FormatInt(ss[0].At.UnixNano(), 10))
	for _, x := range ss {
		for _, v := range []float64{x.DischargeC, x.SupplyC, x.ZoneC} {
			fmt.Fprintf(&sb, " %x", math.Float64bits(v))
		}
		fmt.Fprintf(&sb, " %x", x.Flags)
	}
	return sb.String()
}

func wmLineAt(l string) int64 {
	ns, _ := strconv.ParseInt(l[:strings.IndexByte(l, ' ')], 10, 64)
	return ns
}

// wmRun runs source → assembler → consumer once, the source's trend-log
// checkpoints tied to the assembler's Progress. The consumer writes each
// step, accepts it and commits every commitEvery steps (as the daemon
// commits after storing its state). A run resumes from the world: the
// consumer first drops its output at or after the stored watermark. It
// returns whether the run finished (read every log to its end) and the
// steps it wrote.
func wmRun(t testing.TB, rg *wmRig, w *world, plan crashPlan, commitEvery int) (finished bool) {
	t.Helper()
	w.dead.Store(false)
	w.puts = 0
	var ck Checkpoints = w
	if w.batch {
		ck = batchWorld{w}
	}
	prog, err := collector.OpenProgress(ck, "assembler", 100*365*24*time.Hour) // commits only when the consumer says
	if err != nil {
		t.Fatal(err)
	}
	if wm := prog.Watermark(); !wm.IsZero() {
		w.out = slices.DeleteFunc(w.out, func(l string) bool { return wmLineAt(l) >= wm.UnixNano() })
	} else {
		w.out = w.out[:0]
	}
	src, err := NewSource("bas", rg.cfg, rg.refs, ck, time.UTC, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	if !w.legacy {
		src.UseProgress(prog)
	}
	ctx, cancel := context.WithCancel(ctxT(t))
	defer cancel()
	die := func() {
		if !w.dead.Swap(true) {
			cancel()
		}
	}
	emits := 0
	sweeps := 0
	ss := &sweepSource{src: src, ended: make(chan struct{}), afterEmit: func() {
		if emits++; plan.where == "sweep" && emits == plan.at {
			die()
		}
	}, afterSwep: func() {
		if sweeps++; plan.where == "sweep-end" && sweeps == plan.at {
			die()
		}
	}}
	commits := 0
	w.onPut = func(n int) {
		if plan.where == "commit" && commits == plan.at && n == plan.put {
			die()
		}
	}
	asm, err := collector.NewAssembler(rg.site, collector.AssembleConfig{Progress: prog, Logger: quietLogger()})
	if err != nil {
		t.Fatal(err)
	}
	out := make(chan []collector.Sample)
	errc := make(chan error, 1)
	go func() { errc <- asm.Run(ctx, []collector.Source{ss}, out); close(out) }()
	commit := func() {
		commits++
		w.mu.Lock()
		w.puts = 0
		w.mu.Unlock()
		if plan.where == "commit" && commits == plan.at && plan.put == 0 {
			die()
		}
		if err := prog.Commit(); err != nil {
			t.Error(err)
		}
	}
	accepted := 0
	for smp := range out {
		if w.dead.Load() {
			continue
		}
		w.write(wmLine(smp))
		if err := prog.Accept(smp[0].At); err != nil {
			t.Fatal(err)
		}
		if accepted++; plan.where == "accept" && accepted == plan.at {
			die()
			continue
		}
		if accepted%commitEvery == 0 {
			commit()
		}
	}
	err = <-errc
	if w.dead.Load() {
		// The assembler returns at the cancel without waiting for its
		// sources: let this run's sweep end before the next run starts
		// (a sweep that stores positions itself, legacy, would write into
		// the next run's store).
		<-ss.ended
		return false
	}
	if err != nil {
		t.Fatalf("run: %v", err)
	}
	commit() // a clean end commits what was accepted
	return true
}

func sameWMSteps(t *testing.T, got, want []string) {
	t.Helper()
	if len(got) != len(want) {
		seen := map[int64]int{}
		for _, l := range got {
			seen[wmLineAt(l)]++
		}
		for _, l := range want {
			if at := wmLineAt(l); seen[at] != 1 {
				t.Errorf("step %s analysed %d times", time.Unix(0, at).UTC().Format(time.RFC3339), seen[at])
				break
			}
		}
		t.Fatalf("%d steps, the uninterrupted run %d", len(got), len(want))
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("step %d differs from the uninterrupted run:\n got %.90s…\nwant %.90s…", i, got[i], want[i])
		}
	}
}

// cleanWM is the uninterrupted run over the rig's whole history.
func cleanWM(t *testing.T, rg *wmRig) []string {
	w := &world{ck: map[string][]byte{}}
	if !wmRun(t, rg, w, crashPlan{}, 50) {
		t.Fatal("clean run did not finish")
	}
	return w.out
}

// TestTrendCheckpointsFollowWatermarkAcrossCrashes kills the pipeline (all
// it does after the moment is lost, as after kill -9) at chosen points
// again and again: after a sweep handed readings to the assembler before
// the consumer accepted their steps, after the consumer accepted a step
// before the commit, and inside a commit (before the watermark is stored,
// after it and before the logs' positions, between two logs' positions).
// The controllers keep logging while the pipeline is down. The steps the
// consumer wrote once each must equal, step for step and bit for bit, an
// uninterrupted run over the same history: no step lost, none repeated.
func TestTrendCheckpointsFollowWatermarkAcrossCrashes(t *testing.T) {
	for _, tc := range []struct {
		name  string
		batch bool
		plans []crashPlan
	}{
		{"after-sweep-before-accept", true, []crashPlan{{"sweep", 1, 0}, {"sweep-end", 1, 0}, {"sweep", 2, 0}, {"sweep-end", 1, 0}, {"sweep", 1, 0}}},
		{"after-accept-before-commit", true, []crashPlan{{"accept", 70, 0}, {"accept", 41, 0}, {"accept", 99, 0}, {"accept", 1, 0}}},
		{"mid-commit-batched", true, []crashPlan{{"commit", 1, 1}, {"commit", 2, 0}, {"commit", 1, 1}, {"commit", 3, 2}}},
		{"mid-commit-one-put-per-log", false, []crashPlan{{"commit", 1, 1}, {"commit", 2, 3}, {"commit", 1, 2}, {"commit", 2, 5}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			rg := newWMRig(t, 2000)
			w := &world{ck: map[string][]byte{}, batch: tc.batch}
			rg.log(t, 200)
			crashed := 0
			for i, p := range tc.plans {
				if wmRun(t, rg, w, p, 30) {
					// How far a sweep runs ahead of the consumer varies, and with
					// it which logs' positions a commit moves.
					t.Logf("run %d (%+v) finished before its planned crash", i, p)
				} else {
					crashed++
				}
				rg.log(t, 100) // the controllers log on while the daemon is down
			}
			if crashed < len(tc.plans)-1 {
				t.Fatalf("%d of %d runs crashed as planned", crashed, len(tc.plans))
			}
			if !wmRun(t, rg, w, crashPlan{}, 30) {
				t.Fatal("last run did not finish")
			}
			want := cleanWM(t, rg)
			if len(want) < rg.mins-2 {
				t.Fatalf("uninterrupted run: %d steps for %d minutes", len(want), rg.mins)
			}
			sameWMSteps(t, w.out, want)
		})
	}
}

// TestTrendCheckpointsRandomCrashes crashes at random points of each kind,
// with random commit cadences, while the controllers log on between runs;
// then runs to the end and compares with an uninterrupted run.
func TestTrendCheckpointsRandomCrashes(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for trial := 0; trial < 3; trial++ {
		rg := newWMRig(t, 3000)
		rg.log(t, 150)
		w := &world{ck: map[string][]byte{}, batch: trial%2 == 0}
		crashes := 0
		for run := 0; ; run++ {
			if run > 60 {
				t.Fatalf("trial %d: not finished after %d runs", trial, run)
			}
			var p crashPlan
			switch rng.IntN(4) {
			case 0:
				p = crashPlan{"sweep", 1 + rng.IntN(3), 0}
			case 1:
				p = crashPlan{"sweep-end", 1, 0}
			case 2:
				p = crashPlan{"accept", 1 + rng.IntN(150), 0}
			case 3:
				p = crashPlan{"commit", 1 + rng.IntN(5), rng.IntN(4)}
			}
			finished := wmRun(t, rg, w, p, 5+rng.IntN(40))
			if !finished {
				crashes++
			}
			if run < 12 {
				rg.log(t, 20+rng.IntN(60))
			} else if finished {
				break
			}
		}
		want := cleanWM(t, rg)
		t.Logf("trial %d: %d minutes logged, %d crashes, %d steps", trial, rg.mins, crashes, len(want))
		if crashes < 4 {
			t.Fatalf("trial %d: only %d crashes", trial, crashes)
		}
		sameWMSteps(t, w.out, want)
	}
}

// TestTrendCheckpointWrappedBufferIsCountedGap: a log whose buffer wrapped
// past its committed position while the pipeline was down is resumed at
// its oldest record, the overwritten records counted as lost, and the
// records after the gap are read once.
func TestTrendCheckpointWrappedBufferIsCountedGap(t *testing.T) {
	rg := newWMRig(t, 120)
	rg.log(t, 100)
	w := &world{ck: map[string][]byte{}, batch: true}
	if !wmRun(t, rg, w, crashPlan{}, 10) {
		t.Fatal("first run did not finish")
	}
	before := len(w.out)
	rg.log(t, 300) // a 1-min log of 120 records loses 180 of its 300 new ones
	src := startProgressSource(t, rg, batchWorld{w})
	raw, ok, _ := w.Get(TrendKey(70, 1))
	pos, err := decodePosition(raw)
	if !ok || err != nil {
		t.Fatalf("no stored position for device 70 trend-log 1 after a clean run: %q %v", raw, err)
	}
	// The clean run accepted minutes 0..99: the watermark is minute 100,
	// readFrom minute 79 (record 80); the stored position is at or before it.
	if pos.Seq >= 80 || pos.Seq < 80-2*100/maxTrackMarks-1 {
		t.Fatalf("stored position %d, want just before record 80 (minute 79 = watermark less the lookback)", pos.Seq)
	}
	res, err := src.SweepTrends(ctxT(t), func([]collector.Reading) error { return nil })
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, r := range res {
		if r.Device == 70 && r.Log == 1 {
			found = true
			// 400 records logged, the newest 120 kept: 281..400 are read,
			// the ones from the stored position to 280 are the counted gap.
			if r.Records != 120 || r.FirstSeq != 281 || r.LastSeq != 400 || r.Lost != uint64(280-pos.Seq) {
				t.Errorf("1-min log after its buffer wrapped: %+v; want records 281..400 read and %d counted lost", r, 280-pos.Seq)
			}
		}
	}
	if !found {
		t.Fatal("device 70 trend-log 1 not swept")
	}
	if before < 90 {
		t.Errorf("first run wrote %d steps for 100 minutes", before)
	}
}

// TestTrendTrackResume checks the resume rule on sequence numbers that
// wrap at 2^32, clock steps back and thinned marks.
func TestTrendTrackResume(t *testing.T) {
	at := func(m int) time.Time { return wmStart.Add(time.Duration(m) * time.Minute) }
	recs := func(first uint32, mins ...int) []TrendRecord {
		var out []TrendRecord
		for i, m := range mins {
			out = append(out, TrendRecord{Seq: first + uint32(i), At: at(m)})
		}
		return out
	}
	ns := func(m int) int64 { return at(m).UnixNano() }
	start := uint32(math.MaxUint32 - 2) // records 2^32−3 … 2, numbering wraps after 2^32−1
	tk := newTrack(start)
	tk.note(recs(start, 0, 1, 2, 3, 4, 5))
	if r := tk.resume(ns(3)); r != start+3 || r != 0 {
		t.Fatalf("resume for minute 3: %d, want %d (the record of minute 3, after the wrap)", r, uint32(0))
	}
	if r := tk.resume(ns(2)); r != 0 {
		t.Fatalf("resume moved back to %d for an earlier readFrom", r)
	}
	if r := tk.resume(ns(9)); r != start+6 {
		t.Fatalf("every record predates readFrom: resume %d, want the next %d", r, start+6)
	}
	// A clock step back: minute 20 logged before 11, 12; readFrom 15 must
	// re-read from the record stamped 20.
	tk.note(recs(start+6, 10, 20, 11, 12))
	if r := tk.resume(ns(15)); r != start+7 {
		t.Fatalf("after a clock step: resume %d, want %d", r, start+7)
	}
	// Thinning keeps the resume point at or before the exact one.
	tk = newTrack(100)
	var mins []int
	for m := 0; m < 1000; m++ {
		mins = append(mins, m)
	}
	tk.note(recs(100, mins...))
	if len(tk.marks) > maxTrackMarks {
		t.Fatalf("%d marks kept, bound %d", len(tk.marks), maxTrackMarks)
	}
	// Marks stay evenly spread: a resume point is at most 2·1000/64 records early.
	slack := uint32(2*1000/maxTrackMarks + 1)
	for _, m := range []int{1, 50, 400, 401, 990, 999} {
		exact := 100 + uint32(m)
		r := tk.resume(ns(m))
		if int32(r-exact) > 0 {
			t.Fatalf("readFrom minute %d: resume %d skips record %d", m, r, exact)
		}
		if exact-r > slack {
			t.Fatalf("readFrom minute %d: resume %d, %d records before the exact %d (more than %d)", m, r, exact-r, exact, slack)
		}
	}
}

// TestTrendCheckpointsOldModeStillPerSweep: without UseProgress a sweep
// stores each log's position as before (tools, the demo's probes).
func TestTrendCheckpointsOldModeStillPerSweep(t *testing.T) {
	rg := newWMRig(t, 500)
	rg.log(t, 60)
	w := &world{ck: map[string][]byte{}}
	src := startSource(t, rg, w, nil)
	if _, err := src.SweepTrends(ctxT(t), func([]collector.Reading) error { return nil }); err != nil {
		t.Fatal(err)
	}
	b, ok, _ := w.Get(TrendKey(70, 1))
	if !ok || string(b) != "seq 60" {
		t.Fatalf("device 70 trend-log 1 checkpoint %q (stored %v), want \"seq 60\"", b, ok)
	}
}

// startProgressSource is startSource following a Progress opened on ck
// under the key "assembler" with an hour's lookback.
func startProgressSource(t testing.TB, rg *wmRig, ck Checkpoints) *Source {
	t.Helper()
	prog, err := collector.OpenProgress(ck, "assembler", time.Hour)
	if err != nil {
		t.Fatal(err)
	}
	return startSource(t, rg, ck, prog)
}

// startSource builds the rig's source over the checkpoint store ck,
// following prog when it is not nil, and starts it; the test's cleanup
// closes it.
func startSource(t testing.TB, rg *wmRig, ck Checkpoints, prog *collector.Progress) *Source {
	t.Helper()
	src, err := NewSource("bas", rg.cfg, rg.refs, ck, time.UTC, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	if prog != nil {
		src.UseProgress(prog)
	}
	if err := src.Start(ctxT(t)); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { src.Close() })
	return src
}
