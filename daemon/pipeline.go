package daemon

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"net"
	"net/http"
	"sync"
	"time"

	"risewatch/collector"
	"risewatch/fdd"
	"risewatch/publish/influx"
	"risewatch/publish/metrics"
	"risewatch/publish/notify"
	"risewatch/publish/web"
	"risewatch/rules"
	"risewatch/store"
)

// pipeline is one configuration's running parts. The analysis (engine,
// evaluator, assembler output) runs on one goroutine, run's loop; the
// dashboard and the notifier read copies kept under mu.
type pipeline struct {
	d    *Daemon
	p    *plan
	st   *store.Store
	q    txQueue
	eng  *fdd.Engine
	ev   *rules.Evaluator
	asm  *collector.Assembler
	met  *metrics.Metrics
	sink *influx.Sink
	ntf  *notify.Notifier
	web  *web.Server
	srcs []collector.Source
	hs   []*health
	ring *seriesRing
	// wm ties the sources' read positions to the steps whose lifecycle
	// state is stored (collector.Progress), so a restart or kill -9
	// neither loses nor repeats a step; nil in a dry build.
	wm *collector.Progress

	mu       sync.RWMutex
	view     viewIndex // the newest evidence per terminal, for the dashboard (backend.go)
	open     []rules.Transition
	prog     progress
	stepWall time.Time

	applyReq chan chan error
	steps    int64
}

// newPipeline builds every part for p. With dry set it only checks that
// they can be built (no store, nothing started).
func newPipeline(d *Daemon, p *plan, st *store.Store, dry bool) (*pipeline, error) {
	s, cfg := p.site, p.cfg
	pl := &pipeline{d: d, p: p, st: st, q: txQueue{st}, ring: newSeriesRing(len(s.Terminals)),
		view: newViewIndex(len(s.Terminals)), applyReq: make(chan chan error)}
	var err error
	if pl.eng, err = fdd.NewEngine(s, fdd.Config{Step: cfg.Step}); err != nil {
		return nil, err
	}
	if pl.ev, err = rules.NewEvaluator(s, p.rules); err != nil {
		return nil, err
	}
	lat := cfg.Lateness
	if lat == 0 {
		lat = min(collector.DefaultLateness, DefaultLatenessSteps*cfg.Step)
	}
	if st != nil {
		pl.ring.load = storedSeries(st, func(ti int) string { return s.Terminals[ti].ID })
		// Committed only after the lifecycle state is stored (commit), never by Accept alone.
		if pl.wm, err = collector.OpenProgress(st.Checkpoints(stateKey(p.shard, "")), "watermark", 100*365*24*time.Hour); err != nil {
			return nil, err
		}
	}
	if pl.asm, err = collector.NewAssembler(s, collector.AssembleConfig{Resample: collector.ResampleConfig{Interval: cfg.Step}, Lateness: lat,
		Progress: pl.wm, Logger: d.log}); err != nil {
		return nil, err
	}
	if pl.met, err = metrics.New(s, metrics.Options{NoRuntime: dry}); err != nil {
		return nil, err
	}
	icfg := influx.Config{URL: cfg.Influx.URL, Org: cfg.Influx.Org, Bucket: cfg.Influx.Bucket, Token: cfg.InfluxToken(),
		OnBuffer: pl.met.SetInfluxBuffer, Logger: d.log}
	var ob influx.Outbox
	if st != nil {
		ob = pl.q
	}
	if dry && icfg.URL != "" {
		ob = txQueue{}
	}
	if pl.sink, err = influx.New(icfg, s, ob); err != nil {
		return nil, err
	}
	if cfg.Notify != nil {
		var snd notify.Sender = d.opts.Sender
		if snd == nil {
			if cfg.MailSpool != "" {
				snd = SpoolSender{Dir: cfg.MailSpool}
			} else {
				snd = &notify.SMTPSender{Cfg: cfg.Notify.SMTP}
			}
		}
		nc := *cfg.Notify
		nc.Currency = s.Energy.Currency
		nc.SiteFile = s.File // the ack command an alert prints names it
		pl.ntf = notify.New(nc, s.Name, pl.q, snd, nil, d.log)
	}
	wc := web.Config{Listen: cfg.Listen, TLSCert: cfg.Web.TLSCert, TLSKey: cfg.Web.TLSKey, IP: cfg.Web.IP,
		Extra: map[string]http.Handler{"/metrics": pl.met.Handler()}}
	if wc.Token, err = cfg.WebToken(); err != nil {
		return nil, err
	}
	if cfg.Web.BasicUser != "" {
		wc.BasicUser = cfg.Web.BasicUser
		if wc.BasicPassword, err = cfg.BasicPassword(); err != nil {
			return nil, err
		}
	}
	if pl.web, err = web.New(wc, pl, d.log); err != nil {
		return nil, err
	}
	if dry {
		return pl, nil
	}
	clock := pl.Now
	if d.opts.Clock != nil {
		clock = d.opts.Clock
	}
	if pl.srcs, pl.hs, err = buildSources(s, st, pl.met, clock, pl.wm, d.opts.DropSettle, d.log); err != nil {
		return nil, err
	}
	return pl, nil
}

// restore loads lifecycle state, baselines and plot series.
func (pl *pipeline) restore(ctx context.Context) error {
	s := pl.p.site
	pr, is, err := loadLifecycle(ctx, pl.st, pl.p.shard, pl.ev)
	if err != nil {
		return err
	}
	pl.prog = pr
	for _, why := range is.Dropped {
		pl.d.log.Warn("lifecycle state: dropped on restore", "what", why)
	}
	n, err := loadBaselines(ctx, pl.st, pl.eng, s.TerminalIndex)
	if err != nil {
		pl.d.log.Warn("baselines: some not adopted", "err", err)
	}
	if err := loadSeries(ctx, pl.st, pl.ring, s.TerminalIndex); err != nil {
		pl.d.log.Warn("plot series: not restored", "err", err)
	}
	pl.open = pl.ev.Open()
	for i := range pl.open {
		pl.met.ObserveTransition(&pl.open[i])
	}
	pl.d.log.Info("state restored", "open_faults", len(pl.open), "baselines", n, "last_step", pr.LastStep, "trackers", is.Trackers)
	return nil
}

// run runs the pipeline until ctx ends (returns nil, nil) or a reload is
// accepted (returns the new plan).
func (pl *pipeline) run(parent context.Context) (*plan, error) {
	log := pl.d.log
	if err := pl.restore(parent); err != nil {
		return nil, err
	}
	// Deferred in this order so that cancel runs first and the goroutines
	// waited for see it (a reload returns with parent still live).
	var wg sync.WaitGroup
	defer wg.Wait()
	ctx, cancel := context.WithCancel(parent)
	defer cancel()

	ln, err := net.Listen("tcp", pl.p.cfg.Listen)
	if err != nil {
		return nil, fmt.Errorf("dashboard: %w", err)
	}
	pl.d.mu.Lock()
	pl.d.addr = ln.Addr()
	pl.d.mu.Unlock()
	wg.Add(1)
	go func() {
		defer wg.Done()
		if err := pl.web.Serve(ctx, ln); err != nil && ctx.Err() == nil {
			log.Error("dashboard stopped", "err", err)
		}
	}()
	log.Info("dashboard listening", "addr", ln.Addr().String(), "site", pl.p.site.Name, "shard", pl.p.shard, "terminals", len(pl.p.site.Terminals))
	select {
	case <-pl.d.ready:
	default:
		close(pl.d.ready)
	}

	samples := make(chan []collector.Sample, 16)
	asmErr := make(chan error, 1)
	wg.Add(1)
	go func() {
		defer wg.Done()
		if gate := pl.d.opts.SourcesAfter; gate != nil {
			select {
			case <-gate:
			case <-ctx.Done():
				asmErr <- ctx.Err()
				close(samples)
				return
			}
		}
		asmErr <- pl.asm.Run(ctx, pl.srcs, samples)
		close(samples)
	}()
	if pl.sink.Enabled() {
		wg.Add(1)
		go func() { defer wg.Done(); _ = pl.sink.Run(ctx) }()
	}
	if pl.ntf != nil {
		wg.Add(1)
		go func() { defer wg.Done(); pl.notifyLoop(ctx) }()
	}
	stopReport := pl.startReports(ctx)
	defer stopReport()

	persist := time.NewTicker(pl.p.cfg.PersistEvery)
	defer persist.Stop()
	ackPoll := time.NewTicker(pl.d.opts.AckPoll)
	defer ackPoll.Stop()
	snap := time.NewTicker(pl.d.opts.SnapshotEvery)
	defer snap.Stop()
	purge := time.NewTicker(pl.d.opts.PurgeEvery)
	defer purge.Stop()
	pl.purgeSent(ctx)
	var evs []fdd.Evidence
	var trs []rules.Transition
	dirty := false // lifecycle changed since the last snapshot
	idle := time.NewTimer(time.Hour)
	defer idle.Stop()
	backlogDone := false

	shutdown := func() {
		pl.persistAll(context.WithoutCancel(parent), true)
	}
	for {
		select {
		case <-parent.Done():
			shutdown()
			return nil, nil
		case next := <-pl.d.reload:
			log.Info("reload: stopping the running pipeline")
			shutdown()
			return next, nil
		case batch, ok := <-samples:
			if !ok {
				err := <-asmErr
				shutdown()
				if err != nil && !errors.Is(err, context.Canceled) {
					return nil, fmt.Errorf("sources: %w", err)
				}
				log.Info("every source has ended; the daemon stops")
				return nil, nil
			}
			if len(batch) == 0 || !batch[0].At.After(pl.prog.LastStep) {
				continue // empty, or a replay of steps analysed before a restart
			}
			t0 := time.Now()
			pl.mu.Lock() // the dashboard reads the engine's records (Latest)
			evs = pl.eng.StepView(batch)
			pl.view.set(evs)
			pl.mu.Unlock()
			trs = pl.ev.Step(evs, pl.eng.Loops(), trs[:0])
			pl.publishStep(ctx, evs, trs, batch[0].At)
			if pl.wm != nil {
				_ = pl.wm.Accept(batch[0].At) // never commits by itself (see newPipeline)
			}
			if len(trs) > 0 {
				if err := pl.commit(ctx, trs); err != nil {
					log.Error("step not stored", "at", batch[0].At, "err", err)
				}
				dirty = false
			} else {
				dirty = true
			}
			pl.met.StepDone(time.Since(t0))
			pl.steps++
			if !backlogDone {
				idle.Reset(3 * time.Second)
				if pl.caughtUp(batch[0].At) {
					backlogDone = true
					pl.backlogDone(ctx)
				}
			}
		case <-idle.C:
			if !backlogDone {
				backlogDone = true
				pl.backlogDone(ctx)
			}
		case <-snap.C:
			if dirty {
				if err := pl.commit(ctx, nil); err != nil {
					log.Error("lifecycle state not stored", "err", err)
				}
				dirty = false
			}
		case <-persist.C:
			pl.persistAll(ctx, false)
		case <-purge.C:
			pl.purgeSent(ctx)
		case reply := <-pl.applyReq:
			reply <- pl.applyAcks(ctx)
		case <-ackPoll.C:
			if err := pl.applyAcks(ctx); err != nil {
				log.Warn("acknowledgements not applied", "err", err)
			}
		}
	}
}

// caughtUp reports whether the step at is within five steps of the
// source clock (Options.Clock, default the wall clock): the backlog is analysed even though new
// steps keep arriving (a source that polls live values never goes idle).
func (pl *pipeline) caughtUp(at time.Time) bool {
	now := time.Now()
	if pl.d.opts.Clock != nil {
		now = pl.d.opts.Clock()
	}
	return !now.IsZero() && now.Sub(at) <= 5*pl.p.cfg.Step
}

// backlogDone runs once the history at start is analysed: it stores the
// baselines and series and, for the demo, writes the first report.
func (pl *pipeline) backlogDone(ctx context.Context) {
	pl.d.log.Info("backlog analysed", "steps", pl.steps, "newest", pl.Now(), "open_faults", len(pl.Faults0()))
	pl.persistAll(ctx, false)
	if pl.d.opts.ReportOnStart {
		go pl.runReport(ctx, pl.Now(), true, true)
	}
}

// publishStep hands one step to the in-memory outputs.
func (pl *pipeline) publishStep(ctx context.Context, evs []fdd.Evidence, trs []rules.Transition, at time.Time) {
	for i := range evs {
		pl.met.ObserveEvidence(&evs[i])
		pl.sink.AddEvidence(&evs[i])
	}
	for _, l := range pl.eng.Loops() {
		pl.met.ObserveLoop(&l)
		pl.sink.AddLoop(&l)
	}
	pl.ring.add(evs)
	pl.mu.Lock()
	pl.prog.LastStep = at
	pl.stepWall = time.Now()
	pl.mu.Unlock()
	for i := range trs {
		pl.sink.AddTransition(&trs[i])
	}
	if err := pl.sink.Commit(ctx, at); err != nil {
		pl.d.log.Warn("influx sink: step kept in memory", "err", err)
	}
}

// commit stores transitions, the lifecycle state, the progress marks and
// the e-mail events in one transaction, then updates the outputs that must
// follow persistence (fault gauges, the open list).
func (pl *pipeline) commit(ctx context.Context, trs []rules.Transition) error {
	snap, err := json.Marshal(pl.ev.Export())
	if err != nil {
		return fmt.Errorf("encode lifecycle state: %w", err)
	}
	pl.mu.RLock()
	pr, err := json.Marshal(pl.prog)
	pl.mu.RUnlock()
	if err != nil {
		return err
	}
	var lastErr error
	for attempt := 0; attempt < 3; attempt++ {
		lastErr = pl.st.Update(ctx, func(tx *store.Tx) error {
			for _, tr := range trs {
				if err := tx.RecordTransition(ctx, tr); err != nil {
					return err
				}
			}
			if err := tx.SaveState(ctx, stateKey(pl.p.shard, "lifecycle"), snap); err != nil {
				return err
			}
			if err := tx.SaveState(ctx, stateKey(pl.p.shard, "progress"), pr); err != nil {
				return err
			}
			if pl.ntf != nil && len(trs) > 0 {
				return pl.ntf.Handle(withTx(ctx, tx), trs)
			}
			return nil
		})
		if lastErr == nil || ctx.Err() != nil {
			break
		}
		time.Sleep(store.Backoff(attempt, 100*time.Millisecond, time.Second))
	}
	if lastErr != nil {
		return lastErr
	}
	// The lifecycle state now covers every accepted step: move the
	// watermark and the sources' read positions up to it.
	if pl.wm != nil {
		if err := pl.wm.Commit(); err != nil {
			pl.d.log.Warn("source positions not stored (a restart re-reads more)", "err", err)
		}
	}
	for i := range trs {
		pl.met.ObserveTransition(&trs[i])
		pl.d.log.Info("fault", "id", trs[i].FaultID, "from", trs[i].From.String(), "to", trs[i].To.String(), "at", trs[i].At, "cost_week", trs[i].Impact.WeeklyCost)
	}
	if len(trs) > 0 {
		open := pl.ev.Open()
		pl.mu.Lock()
		pl.open = open
		pl.mu.Unlock()
	}
	return nil
}

// persistAll writes baselines and plot series (and, at shutdown, the
// lifecycle state) to the store.
func (pl *pipeline) persistAll(ctx context.Context, final bool) {
	ids := func(ti int) string { return pl.p.site.Terminals[ti].ID }
	n, err := saveBaselines(ctx, pl.st, pl.eng, pl.ring, ids)
	if err != nil {
		pl.d.log.Error("baselines and series not stored", "err", err)
	}
	if final {
		if err := pl.commit(ctx, nil); err != nil {
			pl.d.log.Error("lifecycle state not stored at shutdown", "err", err)
		}
		pl.d.log.Info("state stored", "baselines", n, "last_step", pl.Now())
	}
}
