package daemon

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"sync"
	"sync/atomic"
	"time"

	"github.com/robfig/cron/v3"

	"risewatch/collector"
	"risewatch/collector/bacnet"
	cinflux "risewatch/collector/influx"
	"risewatch/collector/trendfile"
	"risewatch/publish/metrics"
	"risewatch/publish/web"
	"risewatch/site"
	"risewatch/store"
)

// health is one source's state for the dashboard, beside its metrics.
type health struct {
	name, kind string
	points     int
	m          *metrics.SourceHealth

	reads, readings atomic.Uint64
	lastOK          atomic.Int64 // Unix nanoseconds
	mu              sync.Mutex
	errs            map[string]uint64
	lastErr         string
	stale           int
}

func (h *health) ok(d time.Duration, n int) {
	now := time.Now()
	h.reads.Add(1)
	h.readings.Add(uint64(n))
	h.lastOK.Store(now.UnixNano())
	if h.m != nil {
		h.m.ReadOK(d, now, n)
	}
}

func (h *health) failed(err error, d time.Duration) {
	h.failedAs(metrics.ClassifyError(err), err.Error(), d)
}

// failedAs records a failed read already classified as k; msg is the last
// error shown on the dashboard.
func (h *health) failedAs(k metrics.ErrorKind, msg string, d time.Duration) {
	h.mu.Lock()
	if h.errs == nil {
		h.errs = map[string]uint64{}
	}
	h.errs[string(k)]++
	h.lastErr = msg
	h.mu.Unlock()
	if h.m != nil {
		h.m.ReadFailed(k, d)
	}
}

// bacnetKinds maps the BACnet source's failure kinds to metric error kinds.
var bacnetKinds = map[bacnet.FailureKind]metrics.ErrorKind{
	bacnet.FailTimeout: metrics.ErrTimeout, bacnet.FailError: metrics.ErrBACnetError, bacnet.FailReject: metrics.ErrReject,
	bacnet.FailAbort: metrics.ErrAbort, bacnet.FailMalformed: metrics.ErrMalformed, bacnet.FailUnreachable: metrics.ErrRefused,
	bacnet.FailNotFound: metrics.ErrNotFound,
}

// bacnetFailed records one device's failed read as a failed read of the
// source, under the kind the BACnet source classified.
func (h *health) bacnetFailed(f bacnet.ReadFailure) {
	k, ok := bacnetKinds[f.Kind]
	if !ok {
		k = metrics.ErrOther
	}
	h.failedAs(k, fmt.Sprintf("device %d %s: %s: %s", f.Device, f.Address, f.Kind, f.Reason), f.Took)
}

// bacnetErr records a source-level BACnet error (start, trend sweep) under
// the BACnet kind when the error carries one, else the generic kind.
func (h *health) bacnetErr(err error, d time.Duration) {
	if fk, _, ok := bacnet.ClassifyReadError(err); ok && fk != bacnet.FailMalformed {
		if k, ok := bacnetKinds[fk]; ok {
			h.failedAs(k, err.Error(), d)
			return
		}
	}
	h.failed(err, d)
}

func (h *health) setStale(n int) {
	h.mu.Lock()
	h.stale = n
	h.mu.Unlock()
	if h.m != nil {
		h.m.SetStale(n)
	}
}

func (h *health) snapshot() web.SourceHealth {
	h.mu.Lock()
	defer h.mu.Unlock()
	e := make(map[string]uint64, len(h.errs))
	for k, v := range h.errs {
		e[k] = v
	}
	var last time.Time
	if n := h.lastOK.Load(); n > 0 {
		last = time.Unix(0, n)
	}
	return web.SourceHealth{Name: h.name, Kind: h.kind, LastSuccess: last, Reads: h.reads.Load(), Errors: e,
		LastError: h.lastErr, StalePoints: h.stale, Points: h.points}
}

// observed wraps a source so every batch it sends counts as a read.
type observed struct {
	collector.Source
	h *health
}

// Recycle hands a batch back to the wrapped source if it takes batches back
// (collector.Recycler); otherwise the batch is left to the collector.
func (o observed) Recycle(b []collector.Reading) {
	if r, ok := o.Source.(collector.Recycler); ok {
		r.Recycle(b)
	}
}

func (o observed) Run(ctx context.Context, out chan<- []collector.Reading) error {
	mid := make(chan []collector.Reading)
	errc := make(chan error, 1)
	go func() { errc <- o.Source.Run(ctx, mid); close(mid) }()
	last := time.Now()
	for b := range mid {
		stale := 0
		for i := range b {
			if b[i].Quality != collector.Good {
				stale++
			}
		}
		o.h.ok(time.Since(last), len(b))
		o.h.setStale(stale)
		select {
		case out <- b:
		case <-ctx.Done():
		}
		last = time.Now()
	}
	err := <-errc
	if err != nil && !errors.Is(err, context.Canceled) {
		o.h.failed(err, 0)
	}
	return err
}

// countPoints counts the site points a source feeds.
func countPoints(s *site.Site, source string) int {
	n := 0
	for _, p := range collector.Points(s) {
		if p.Source == source {
			n++
		}
	}
	return n
}

// buildSources makes every configured source, each reading its checkpoints
// from the store under "<kind>:<name>/". Trend-file sources and the BACnet
// sources' trend logs tie their checkpoints to the watermark wm (nil: to
// the batches taken, per sweep for trend logs); BACnet present-value polls
// have no history to re-read.
func buildSources(s *site.Site, st *store.Store, m *metrics.Metrics, clock func() time.Time, wm *collector.Progress, settle time.Duration, log *slog.Logger) ([]collector.Source, []*health, error) {
	var out []collector.Source
	var hs []*health
	var errs []error
	for _, sc := range s.Sources {
		h := &health{name: sc.Name, kind: sc.Kind, points: countPoints(s, sc.Name)}
		if m != nil {
			h.m = m.Source(sc.Name)
		}
		ck := st.Checkpoints(sc.Kind + ":" + sc.Name + "/")
		switch {
		case sc.Trendfile != nil:
			src, err := trendfile.New(trendfile.Config{Name: sc.Name, Site: s, File: *sc.Trendfile, Checkpoints: ck, SettleTime: settle, Progress: wm, Logger: log})
			if err != nil {
				errs = append(errs, err)
				continue
			}
			out = append(out, observed{src, h})
		case sc.BACnet != nil:
			bck := batchCheckpoints{Checkpoints: ck, st: st, prefix: sc.Kind + ":" + sc.Name + "/"}
			src, err := bacnet.NewSource(sc.Name, *sc.BACnet, bacnet.PointsFor(s, sc.Name), bck, s.Location, log)
			if err != nil {
				errs = append(errs, err)
				continue
			}
			src.OnReadFailure = func(f bacnet.ReadFailure) { h.bacnetFailed(f) }
			if wm != nil {
				src.UseProgress(wm)
			}
			bc := &bacnetCron{src: src, cfg: *sc.BACnet, h: h, clock: clock, log: log}
			if m != nil {
				bc.traffic = m.BACnet(sc.Name)
			}
			out = append(out, bc)
		case sc.Influx != nil:
			opt := cinflux.Options{Name: sc.Name, Config: *sc.Influx, Token: cinflux.TokenFromEnv(*sc.Influx), Site: s,
				Start: time.Now().Add(-7 * 24 * time.Hour), Checkpoints: ck, Logger: log,
				OnRead: func(d time.Duration, n int, err error) {
					if err != nil {
						h.failed(err, d)
					} else {
						h.ok(d, n)
					}
				}}
			src, err := cinflux.New(opt)
			if err != nil {
				errs = append(errs, err)
				continue
			}
			out = append(out, src)
		default:
			errs = append(errs, fmt.Errorf("source %s: kind %q has no reader", sc.Name, sc.Kind))
			continue
		}
		hs = append(hs, h)
	}
	if len(out) == 0 && len(errs) == 0 {
		errs = append(errs, fmt.Errorf("site %s has no source", s.Name))
	}
	return out, hs, errors.Join(errs...)
}

// batchCheckpoints adds bacnet.BatchCheckpoints to the store's checkpoint
// view: a commit's trend-log positions go in one transaction (one fsync)
// rather than one per trend log.
type batchCheckpoints struct {
	*store.Checkpoints
	st     *store.Store
	prefix string
}

func (b batchCheckpoints) PutMany(kv map[string][]byte) error {
	ctx := context.Background()
	return b.st.Update(ctx, func(tx *store.Tx) error {
		for k, v := range kv {
			if err := tx.PutCheckpoint(ctx, b.prefix+k, v); err != nil {
				return err
			}
		}
		return nil
	})
}

// bacnetCron runs a BACnet source on robfig/cron/v3 schedules: a present-
// value poll every PollInterval and a trend-log sweep every TrendSweep, one
// at a time. At start, before the first poll, trend logs are swept until
// caught up, so backfilled history reaches the assembler ahead of live
// values (the sweep delivers it in time order across points). Later
// sweeps deliver only what is newer than the last poll: older records are
// what the polls already gave the assembler.
type bacnetCron struct {
	src   *bacnet.Source
	cfg   site.BACnetConfig
	h     *health
	clock func() time.Time // stamps polled values (the daemon's clock)
	log   *slog.Logger
	mu    sync.Mutex
	last  time.Time // stamp of the newest poll delivered

	traffic *metrics.BACnetTraffic // nil without metrics
	seen    trafficCounts          // client counters already recorded
	logged  trafficCounts          // client counters at the last log line
	logAt   time.Time
}

// trafficCounts are the client counters the daemon watches.
type trafficCounts struct{ malformed, unmatched, retries uint64 }

// dropLogEvery is the least interval between lines about dropped frames.
const dropLogEvery = 10 * time.Minute

// recordTraffic moves the client's malformed, unmatched (late or
// duplicated) and retry counts since the last call into the metrics, and
// logs dropped frames at most once per dropLogEvery. Called under b.mu.
func (b *bacnetCron) recordTraffic() {
	c := b.src.Client()
	if c == nil {
		return
	}
	now := trafficCounts{c.Stats.Malformed.Load(), c.Stats.Unmatched.Load(), c.Stats.Retries.Load()}
	if b.traffic != nil {
		b.traffic.Dropped(metrics.FrameMalformed, now.malformed-b.seen.malformed)
		b.traffic.Dropped(metrics.FrameUnmatched, now.unmatched-b.seen.unmatched)
		b.traffic.Retried(now.retries - b.seen.retries)
	}
	b.seen = now
	mal, unm := now.malformed-b.logged.malformed, now.unmatched-b.logged.unmatched
	if (mal > 0 || unm > 0) && time.Since(b.logAt) >= dropLogEvery {
		b.log.Warn("bacnet: frames dropped", "source", b.Name(), "malformed", mal, "unmatched", unm,
			"retries", now.retries-b.logged.retries)
		b.logged, b.logAt = now, time.Now()
	}
}

// every is a cron.Schedule firing at a fixed interval, sub-second allowed
// (cron's own "@every" rounds to whole seconds).
type every time.Duration

func (e every) Next(t time.Time) time.Time { return t.Add(time.Duration(e)) }

// catchUpSweeps bounds the sweeps at start (each reads what arrived during
// the one before).
const catchUpSweeps = 3

func (b *bacnetCron) Name() string { return b.src.Name() }

func (b *bacnetCron) Run(ctx context.Context, out chan<- []collector.Reading) error {
	if err := b.src.Start(ctx); err != nil {
		b.h.bacnetErr(err, 0)
		return err
	}
	defer b.src.Close()
	emit := func(rs []collector.Reading) error {
		if len(rs) == 0 {
			return nil
		}
		select {
		case out <- rs:
			return nil
		case <-ctx.Done():
			return ctx.Err()
		}
	}
	for i := 0; i < catchUpSweeps; i++ {
		if n := b.sweep(ctx, emit); n == 0 || ctx.Err() != nil {
			break
		}
	}
	poll, sweep := b.cfg.PollInterval, b.cfg.TrendSweep
	if poll <= 0 {
		poll = time.Minute
	}
	if sweep <= 0 {
		sweep = 15 * time.Minute
	}
	c := cron.New(cron.WithChain(cron.SkipIfStillRunning(cron.DiscardLogger)))
	c.Schedule(every(poll), cron.FuncJob(func() { b.poll(ctx, emit) }))
	c.Schedule(every(sweep), cron.FuncJob(func() { b.sweep(ctx, emit) }))
	b.poll(ctx, emit)
	c.Start()
	<-ctx.Done()
	<-c.Stop().Done()
	return nil
}

func (b *bacnetCron) poll(ctx context.Context, emit func([]collector.Reading) error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	stamp := b.clock()
	if stamp.IsZero() || !stamp.After(b.last) {
		return // the clock has not moved since the last poll (simulated time)
	}
	t0 := time.Now()
	rs, err := b.src.PollOnce(ctx)
	b.recordTraffic()
	if ctx.Err() != nil {
		return
	}
	if err != nil {
		b.h.failed(err, time.Since(t0))
		b.log.Warn("bacnet: poll incomplete", "source", b.Name(), "err", err)
	}
	stale := 0
	for i := range rs {
		rs[i].At = stamp
		if rs[i].Quality != collector.Good {
			stale++
		}
	}
	b.h.setStale(stale)
	if err == nil {
		b.h.ok(time.Since(t0), len(rs))
	}
	if emit(rs) == nil {
		b.last = stamp
	}
}

// sweep reads the trend logs and returns how many readings it delivered.
func (b *bacnetCron) sweep(ctx context.Context, emit func([]collector.Reading) error) int {
	b.mu.Lock()
	defer b.mu.Unlock()
	t0 := time.Now()
	n := 0
	res, err := b.src.SweepTrends(ctx, func(rs []collector.Reading) error {
		if !b.last.IsZero() {
			k := 0
			for _, r := range rs {
				if r.At.After(b.last) {
					rs[k] = r
					k++
				}
			}
			rs = rs[:k]
		}
		n += len(rs)
		return emit(rs)
	})
	b.recordTraffic()
	if b.traffic != nil {
		var lost uint64
		for _, r := range res {
			lost += r.Lost
		}
		b.traffic.TrendLost(lost)
	}
	if ctx.Err() != nil {
		return n
	}
	if err != nil {
		b.h.bacnetErr(err, time.Since(t0))
		b.log.Warn("bacnet: trend sweep incomplete", "source", b.Name(), "err", err)
		return n
	}
	b.h.ok(time.Since(t0), n)
	lv := slog.LevelDebug
	if n > 0 {
		lv = slog.LevelInfo
	}
	b.log.Log(ctx, lv, "bacnet: trend sweep", "source", b.Name(), "readings", n, "took", time.Since(t0).Round(time.Millisecond))
	return n
}
