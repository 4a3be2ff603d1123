// Package daemon wires every part of risewatch into the long-running
// process behind `risewatch run` and `risewatch demo`: sources (trend files,
// BACnet/IP on cron schedules, InfluxDB) → assembler → evidence engine →
// rules → one store transaction per step (transitions, lifecycle state and
// the e-mail events they cause) → Prometheus metrics, InfluxDB sink, e-mail,
// dashboard and the weekly contractor report.
//
// Memory per terminal is bounded: the engine's fixed windows, the newest
// evidence record and the open hour of the hourly plot aggregates (the
// eight closed days are in the store). Lifecycle state, baselines and plot
// series live in the store, so a restart resumes open faults without
// opening or mailing them again. `risewatch run` sets the Go runtime's soft
// memory limit from the terminal count (memlimit.go).
package daemon

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"os"
	"path/filepath"
	"sync"
	"time"

	"risewatch/publish/notify"
	"risewatch/rules"
	"risewatch/site"
	"risewatch/store"
)

// Options configure a Daemon. Flags override the daemon: section.
type Options struct {
	ConfigPath string     // site file with its daemon: section (re-read on Reload)
	Site       *site.Site // instead of ConfigPath (demo); Config then gives the daemon section
	Config     *Config

	DataDir string // overrides daemon.data_dir
	Listen  string // overrides daemon.listen ("127.0.0.1:0" picks a free port; see Addr)
	Shard   string
	// ShardFromHostname picks the shard from a StatefulSet ordinal.
	ShardFromHostname bool

	// DataClock makes Now the newest analysed step instead of the wall clock
	// (the demo runs simulated time).
	DataClock bool
	// Clock, when set, stamps polled values (default: Now). The demo
	// passes the simulator's time, so polls carry simulated timestamps.
	Clock func() time.Time
	// SourcesAfter, when set, holds the sources back until it is closed
	// (the demo fills its devices' trend logs with the history first).
	SourcesAfter <-chan struct{}
	// Sender overrides how mail leaves (tests); default SMTP, or the
	// mail_spool directory.
	Sender notify.Sender
	// ReportOnStart writes the report of the newest full week once the
	// backlog is analysed (the demo).
	ReportOnStart bool

	// DropSettle is how long a drop-folder file must stay unchanged before
	// it is read (zero: the trend-file reader's default).
	DropSettle time.Duration
	// Intervals (zero: defaults).
	NotifyEvery   time.Duration
	AckPoll       time.Duration
	SnapshotEvery time.Duration
	PurgeEvery    time.Duration // sent outbox rows (default DefaultPurgeEvery)

	Logger *slog.Logger
}

// Daemon is one risewatch process.
type Daemon struct {
	opts Options
	log  *slog.Logger
	st   *store.Store

	mu     sync.Mutex
	cur    *pipeline
	last   *plan // the newest accepted configuration
	addr   net.Addr
	ready  chan struct{}
	reload chan *plan
}

// plan is a validated configuration: what a pipeline runs.
type plan struct {
	name  string     // the site's name (the whole site is not kept: a shard needs only its part)
	site  *site.Site // the shard's part
	cfg   *Config
	rules *rules.Ruleset
	shard string
}

// New checks the configuration and returns a daemon (nothing runs yet).
func New(opts Options) (*Daemon, *plan, error) {
	if opts.Logger == nil {
		opts.Logger = slog.Default()
	}
	if opts.NotifyEvery == 0 {
		opts.NotifyEvery = DefaultNotifyEvery
	}
	if opts.AckPoll == 0 {
		opts.AckPoll = DefaultAckPoll
	}
	if opts.SnapshotEvery == 0 {
		opts.SnapshotEvery = DefaultSnapshot
	}
	if opts.PurgeEvery == 0 {
		opts.PurgeEvery = DefaultPurgeEvery
	}
	d := &Daemon{opts: opts, log: opts.Logger, ready: make(chan struct{}), reload: make(chan *plan, 1)}
	p, err := d.loadPlan()
	if err != nil {
		return nil, nil, err
	}
	d.last = p
	return d, p, nil
}

// loadPlan reads and checks the configuration: site, daemon section, shard
// and rules. It changes nothing.
func (d *Daemon) loadPlan() (*plan, error) {
	s, cfg := d.opts.Site, d.opts.Config
	if d.opts.ConfigPath != "" {
		var err error
		if s, err = site.Load(d.opts.ConfigPath); err != nil {
			return nil, err
		}
		cfg = nil
	}
	if s == nil {
		return nil, errors.New("daemon: no site configuration")
	}
	if cfg == nil {
		var err error
		if cfg, err = DecodeConfig(s); err != nil {
			return nil, err
		}
	}
	if d.opts.DataDir != "" {
		cfg.DataDir = d.opts.DataDir
	}
	if d.opts.Listen != "" {
		cfg.Listen = d.opts.Listen
	}
	shard := d.opts.Shard
	if d.opts.ShardFromHostname && shard == "" {
		var err error
		if shard, err = ShardFromHostname(cfg); err != nil {
			return nil, err
		}
	}
	sub, err := SelectShard(s, cfg, shard)
	if err != nil {
		return nil, err
	}
	var files []*rules.File
	if cfg.Rules != "" {
		path := cfg.Rules
		if !filepath.IsAbs(path) && s.File != "" {
			path = filepath.Join(filepath.Dir(s.File), path)
		}
		f, err := rules.LoadFile(path)
		if err != nil {
			return nil, err
		}
		files = append(files, f)
	}
	rs, err := rules.Build(files...)
	if err != nil {
		return nil, err
	}
	p := &plan{name: s.Name, site: sub, cfg: cfg, rules: rs, shard: shard}
	// Build the parts that can fail on configuration now, not after the
	// running pipeline has been stopped.
	if _, err := newPipeline(d, p, nil, true); err != nil {
		return nil, err
	}
	return p, nil
}

// Reload re-reads the configuration. A bad one is reported and the running
// pipeline keeps going; a good one replaces it (state is persisted first
// and carried over through the store).
func (d *Daemon) Reload() error {
	p, err := d.loadPlan()
	if err != nil {
		d.log.Error("reload: configuration rejected; the running configuration stays", "err", err)
		return err
	}
	if d.st != nil && filepath.Clean(p.cfg.DataDir) != filepath.Dir(d.st.Path()) {
		d.log.Warn("reload: data_dir changes only at restart", "running", filepath.Dir(d.st.Path()), "new", p.cfg.DataDir)
	}
	d.mu.Lock()
	d.last = p
	d.mu.Unlock()
	select {
	case d.reload <- p:
	default:
		<-d.reload
		d.reload <- p
	}
	d.log.Info("reload: new configuration accepted", "site", p.name, "terminals", len(p.site.Terminals))
	return nil
}

// MemoryLimit is the soft memory limit the newest accepted configuration
// asks for (memory_limit, by default from the shard's terminal count; 0
// when it is off) and whether it is the automatic one. The caller that owns
// the process applies it (runtime/debug.SetMemoryLimit); a library user of
// the daemon need not.
func (d *Daemon) MemoryLimit() (bytes int64, auto bool) {
	d.mu.Lock()
	p := d.last
	d.mu.Unlock()
	if p == nil {
		return 0, false
	}
	n, ok := p.cfg.MemoryLimitFor(len(p.site.Terminals))
	if !ok {
		return 0, false
	}
	return n, p.cfg.memLimit.bytes == 0
}

// Ready is closed once the dashboard listens (Addr is then set).
func (d *Daemon) Ready() <-chan struct{} { return d.ready }

// Addr is the dashboard's listen address (after Ready).
func (d *Daemon) Addr() net.Addr {
	d.mu.Lock()
	defer d.mu.Unlock()
	return d.addr
}

// Store is the open state store (after Ready).
func (d *Daemon) Store() *store.Store { return d.st }

// Run runs the daemon until ctx ends, replacing the pipeline on each
// accepted Reload. It persists baselines, series and lifecycle state on the
// way out.
func (d *Daemon) Run(ctx context.Context, first *plan) error {
	if err := os.MkdirAll(first.cfg.DataDir, 0o750); err != nil {
		return fmt.Errorf("data dir: %w", err)
	}
	st, err := store.Open(ctx, first.cfg.DataDir, store.Options{})
	if err != nil {
		return err
	}
	d.st = st
	defer st.Close()
	d.log.Info("store open", "path", st.Path())
	p := first
	for {
		pl, err := newPipeline(d, p, st, false)
		if err != nil {
			return err
		}
		if d.opts.ConfigPath != "" {
			// The sources hold what they read; the site loaded for this
			// plan (a reload loads it again) need not keep the addresses.
			p.site.ReleaseAddresses()
		}
		d.mu.Lock()
		d.cur = pl
		d.mu.Unlock()
		next, err := pl.run(ctx)
		if err != nil || next == nil {
			return err
		}
		p = next
	}
}
