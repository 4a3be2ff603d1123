package trendfile

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"os"
	"sync"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// Defaults for the drop folder.
const (
	DefaultPollInterval    = 2 * time.Second
	DefaultSettleTime      = 10 * time.Second
	DefaultCheckpointEvery = time.Second
)

// Config configures one trend-file source.
type Config struct {
	Name string
	Site *site.Site
	File site.TrendfileConfig
	// Checkpoints records how far each file was read. Needed to survive
	// restarts in drop-folder mode; nil keeps positions in memory only.
	Checkpoints Checkpoints
	// PollInterval is how often the drop folder is listed.
	PollInterval time.Duration
	// SettleTime is how long a file's size and modification time must stay
	// unchanged before it is read (it may still be arriving by transfer).
	SettleTime time.Duration
	// CheckpointEvery bounds how often a checkpoint is written while a file
	// is read (one is always written at the end and when ctx ends).
	CheckpointEvery time.Duration
	// Progress, when set, ties the checkpoints to the steps the consumer
	// accepted instead of the batches the channel took, so that a restart
	// or a crash neither loses nor repeats a step (collector.Progress; give
	// the same Progress to collector.AssembleConfig). Files are then moved
	// to ProcessedDir, or marked done, once a commit covers their last row.
	Progress *collector.Progress
	// Workers is how many goroutines parse a wide file: 0 means one per
	// CPU (GOMAXPROCS), 1 the sequential reader. Results do not depend on
	// it (parallel.go).
	Workers int
	Logger  *slog.Logger
}

// Source reads exported CSV trend files: one file, or every file in a
// directory (once, or watched as a drop folder). It implements
// collector.Source.
type Source struct {
	cfg Config
	fmt format
	pts *pointTable
	log *slog.Logger

	mu    sync.Mutex
	stats Stats

	fmu   sync.Mutex            // guards files (ingest and Progress commits)
	files map[string]*fileState // per checkpoint key, Progress mode only
	// pending holds drop-folder files read to their end that wait for a
	// commit before they are moved (Progress mode; the watch goroutine's).
	pending map[string]bool
	// markEvery is the least input between two resume marks (tests set it low).
	markEvery int64
	// slots keeps the parallel reader's chunk slots between files.
	slots sync.Pool
	// modes keeps the parallel reader's measured rates between files.
	modes modeRates
	// batches are the batches Run's consumer handed back (Recycle).
	batches batchPool
}

// Recycle takes back a batch Run sent once the consumer is done with it
// (collector.Recycler); Run's later batches reuse its array.
func (s *Source) Recycle(b []collector.Reading) { s.batches.put(b) }

var _ collector.Recycler = (*Source)(nil)

// batchPool holds handed-back batches for Run's flushes and the parallel
// reader's segments (at most limit; more go to the garbage collector).
// Safe for concurrent use.
type batchPool struct {
	mu    sync.Mutex
	free  [][]collector.Reading
	limit int // 0: batchPoolSize
}

// batchPoolSize covers the batches in flight between a source and the
// assembler (their channels hold a few each) with room to spare; the
// parallel reader raises the limit by what its chunk slots hold
// (reserve).
const batchPoolSize = 16

// put keeps b for reuse if there is room.
func (bp *batchPool) put(b []collector.Reading) {
	if cap(b) == 0 {
		return
	}
	// Not cleared: a reading refers only to point names, which live as
	// long as the source, and every reuse overwrites what it appends.
	bp.mu.Lock()
	if len(bp.free) < max(bp.limit, batchPoolSize) {
		bp.free = append(bp.free, b[:0])
	}
	bp.mu.Unlock()
}

// get returns an empty handed-back batch with room for at least n
// readings, or nil if none is at hand (a smaller one is dropped).
func (bp *batchPool) get(n int) []collector.Reading {
	bp.mu.Lock()
	defer bp.mu.Unlock()
	k := len(bp.free) - 1
	if k < 0 {
		return nil
	}
	b := bp.free[k]
	bp.free[k] = nil
	bp.free = bp.free[:k]
	if cap(b) < n {
		return nil
	}
	return b
}

// reserve raises the pool's limit to at least n batches.
func (bp *batchPool) reserve(n int) {
	bp.mu.Lock()
	if n > bp.limit {
		bp.limit = n
		if cap(bp.free) < n {
			bp.free = append(make([][]collector.Reading, 0, n), bp.free...)
		}
	}
	bp.mu.Unlock()
}

// parser returns a parser for one file of this source.
func (s *Source) parser(file string) (*parser, error) {
	p, err := newParser(s.fmt, s.pts, file, s.log)
	if err != nil {
		return nil, err
	}
	p.slots, p.modes, p.pool = &s.slots, &s.modes, &s.batches
	return p, nil
}

var _ collector.Source = (*Source)(nil)

// New checks the configuration against the site and returns the source.
func New(cfg Config) (*Source, error) {
	if cfg.Site == nil {
		return nil, fmt.Errorf("trend source %s: no site", cfg.Name)
	}
	if cfg.File.Path == "" {
		return nil, fmt.Errorf("trend source %s: no path", cfg.Name)
	}
	f, err := resolveFormat(cfg.Name, cfg.File, cfg.Site.Location)
	if err != nil {
		return nil, err
	}
	pts, err := buildPoints(cfg.Name, cfg.Site)
	if err != nil {
		return nil, err
	}
	if cfg.PollInterval <= 0 {
		cfg.PollInterval = DefaultPollInterval
	}
	if cfg.SettleTime <= 0 {
		cfg.SettleTime = DefaultSettleTime
	}
	if cfg.CheckpointEvery <= 0 {
		cfg.CheckpointEvery = DefaultCheckpointEvery
	}
	if cfg.Logger == nil {
		cfg.Logger = slog.Default()
	}
	if cfg.Checkpoints == nil {
		cfg.Checkpoints = &MemCheckpoints{}
	}
	if cfg.Workers < 0 {
		return nil, fmt.Errorf("trend source %s: workers %d: want 0 (one per CPU) or more", cfg.Name, cfg.Workers)
	}
	f.workers = cfg.Workers
	s := &Source{cfg: cfg, fmt: f, pts: pts, log: cfg.Logger, markEvery: markBytes}
	if cfg.Progress != nil {
		s.files = map[string]*fileState{}
		cfg.Progress.Register(cfg.Name, s.commit)
	}
	return s, nil
}

// FromSiteWith builds the source named name from the site's source list
// with the rest of cfg (Checkpoints, Progress, timings, Logger) as given.
func FromSiteWith(s *site.Site, name string, cfg Config) (*Source, error) {
	for _, sc := range s.Sources {
		if sc.Name == name && sc.Trendfile != nil {
			cfg.Name, cfg.Site, cfg.File = name, s, *sc.Trendfile
			return New(cfg)
		}
	}
	return nil, fmt.Errorf("site %s: no trend-file source %q", s.Name, name)
}

// FromSite builds the source named name from the site's source list.
func FromSite(s *site.Site, name string, ck Checkpoints, log *slog.Logger) (*Source, error) {
	for _, sc := range s.Sources {
		if sc.Name == name && sc.Trendfile != nil {
			return New(Config{Name: name, Site: s, File: *sc.Trendfile, Checkpoints: ck, Logger: log})
		}
	}
	return nil, fmt.Errorf("site %s: no trend-file source %q", s.Name, name)
}

// Name returns the source name.
func (s *Source) Name() string { return s.cfg.Name }

// Stats returns the counts so far.
func (s *Source) Stats() Stats {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.stats
}

// Run reads the configured path and sends readings in time order per file.
// A single file, or a directory without Watch, is read once and Run
// returns nil at its end; with Watch it polls until ctx ends.
func (s *Source) Run(ctx context.Context, out chan<- []collector.Reading) error {
	st, err := os.Stat(s.cfg.File.Path)
	if err != nil {
		return fmt.Errorf("trend source %s: %w", s.cfg.Name, err)
	}
	if st.IsDir() || s.cfg.File.Watch {
		return s.watch(ctx, out)
	}
	_, err = s.ingest(ctx, s.cfg.File.Path, true, true, out)
	return err
}

// ReadStream parses one trend file from r (a single pass, no checkpoint)
// and calls emit with each batch of readings. The batch is reused once emit
// returns: copy what you keep (this is the allocation-free path, e.g. to
// feed collector.Assembler.Add directly). name is used in messages.
func (s *Source) ReadStream(ctx context.Context, r io.Reader, name string, emit func([]collector.Reading) error) (Stats, error) {
	p, err := s.parser(name)
	if err != nil {
		return Stats{}, err
	}
	p.reuse = true
	sc := newScanner(r, 0, 1, true)
	if err := p.readHeader(sc); err != nil {
		return p.st, err
	}
	err = p.readRows(ctx, sc, func(b []collector.Reading, _, _ int64) error {
		if len(b) == 0 {
			return nil
		}
		return emit(b)
	})
	p.st.Files = 1
	p.warn.summary(p.st)
	s.mu.Lock()
	s.stats.add(p.st)
	s.mu.Unlock()
	return p.st, err
}

// ReadRows parses one trend file from r like ReadStream but calls fn once
// per row with the row's SI values side by side (no Reading per value):
// the fastest way through a wide file. The Row's slices are reused.
func (s *Source) ReadRows(ctx context.Context, r io.Reader, name string, fn func(Row) error) (Stats, error) {
	p, err := s.parser(name)
	if err != nil {
		return Stats{}, err
	}
	p.rowFn = fn
	sc := newScanner(r, 0, 1, true)
	if err := p.readHeader(sc); err != nil {
		return p.st, err
	}
	err = p.readRows(ctx, sc, func([]collector.Reading, int64, int64) error { return nil })
	p.st.Files = 1
	p.warn.summary(p.st)
	s.mu.Lock()
	s.stats.add(p.st)
	s.mu.Unlock()
	return p.st, err
}

// send hands one batch to the consumer.
func send(ctx context.Context, out chan<- []collector.Reading, b []collector.Reading) error {
	if len(b) == 0 {
		return nil
	}
	select {
	case out <- b:
		return nil
	case <-ctx.Done():
		return ctx.Err()
	}
}
