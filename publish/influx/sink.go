package influx

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"sync"
	"time"

	influxdb2 "github.com/influxdata/influxdb-client-go/v2"
	"github.com/influxdata/influxdb-client-go/v2/api"

	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/site"
	"risewatch/store"
)

// DefaultChannel is the outbox channel of the sink.
const DefaultChannel = "influx"

// Outbox is the durable buffer the sink writes through; *store.Store
// implements it.
type Outbox interface {
	Enqueue(ctx context.Context, key, channel string, payload []byte) error
	DueOn(ctx context.Context, channel string, now time.Time, limit int) ([]store.OutboxItem, error)
	MarkSent(ctx context.Context, key string, at time.Time) error
	MarkFailed(ctx context.Context, key string, cause error, retryAt time.Time) error
	Pending(ctx context.Context, channel string) (items int, bytes int64, err error)
}

// Config configures the sink. An empty URL disables it.
type Config struct {
	URL    string // e.g. http://127.0.0.1:8086
	Org    string // ignored by InfluxDB 1.8
	Bucket string // v2 bucket, or "database/retention-policy" on 1.8
	Token  string // v2 token, "user:password" on 1.8, or empty without auth

	Channel      string        // outbox channel (default "influx")
	ChunkLines   int           // lines per outbox item and per HTTP write (default 5000)
	RoundItems   int           // outbox items per delivery round (default 16)
	PollInterval time.Duration // idle wait between delivery rounds (default 2 s)
	RetryBase    time.Duration // first retry delay after a failed write (default 1 s)
	RetryMax     time.Duration // cap of the doubling retry delay (default 5 min)
	HTTPTimeout  time.Duration // per write request (default 10 s)

	// OnBuffer, when set, is told the durable buffer's size after every
	// delivery round (metrics.Metrics.SetInfluxBuffer fits).
	OnBuffer func(items int, bytes int64)
	Logger   *slog.Logger
}

func (c *Config) defaults() {
	if c.Channel == "" {
		c.Channel = DefaultChannel
	}
	if c.ChunkLines <= 0 {
		c.ChunkLines = 5000
	}
	if c.RoundItems <= 0 {
		c.RoundItems = 16
	}
	if c.PollInterval <= 0 {
		c.PollInterval = 2 * time.Second
	}
	if c.RetryBase <= 0 {
		c.RetryBase = time.Second
	}
	if c.RetryMax <= 0 {
		c.RetryMax = 5 * time.Minute
	}
	if c.HTTPTimeout <= 0 {
		c.HTTPTimeout = 10 * time.Second
	}
	if c.Logger == nil {
		c.Logger = slog.Default()
	}
}

// Sink writes observations, expected values, residuals and fault events to
// InfluxDB. Producers call Add* during an analysis step and Commit at its
// end; Commit makes the step's points durable in the outbox. Run delivers the
// outbox with the client's non-blocking write API (batched by ChunkLines) and
// retries failed writes with a doubling back-off. Every point has a fixed
// timestamp (the step or transition time) and fixed tags, so a replay after a
// crash or an outage rewrites the same points and duplicates nothing.
//
// A disabled sink (no URL) accepts and discards everything.
type Sink struct {
	cfg  Config
	site *site.Site
	ob   Outbox

	mu    sync.Mutex
	lines lineBuilder
	count int // lines in the builder
	// last is the size of the previous step's lines: the buffer is dropped
	// after each Commit (a step's lines are a megabyte or more at a few
	// thousand terminals, needed only from the first Add to Commit) and
	// made again at about this size.
	last int

	kick chan struct{}

	client influxdb2.Client
	// api writes each outbox item in one request as it is delivered. The
	// blocking API keeps nothing after a write; the buffered one held the
	// last batch's lines (a megabyte or more) until the next.
	api      api.WriteAPIBlocking
	failures int // consecutive failed rounds
	stats    Stats
	statsMu  sync.Mutex
}

// Stats count what the sink has done since it started.
type Stats struct {
	Lines     int // lines committed to the outbox
	Items     int // outbox items committed
	Sent      int // items delivered
	Failed    int // failed write attempts
	Discarded int // items dropped as undecodable
}

// New builds a sink for site s over the outbox ob. With an empty URL the sink
// is disabled and needs no outbox.
func New(cfg Config, s *site.Site, ob Outbox) (*Sink, error) {
	cfg.defaults()
	k := &Sink{cfg: cfg, site: s, ob: ob, kick: make(chan struct{}, 1)}
	if cfg.URL == "" {
		return k, nil
	}
	if s == nil || ob == nil {
		return nil, errors.New("influx sink: site and outbox are required")
	}
	if cfg.Bucket == "" {
		return nil, fmt.Errorf("influx sink %s: empty bucket", cfg.URL)
	}
	opts := influxdb2.DefaultOptions().
		SetBatchSize(uint(cfg.ChunkLines)).
		SetFlushInterval(uint(time.Hour.Milliseconds())). // the sink flushes after every outbox item
		SetMaxRetries(0).                                 // the durable outbox retries, not the client's memory
		SetHTTPRequestTimeout(uint(max(1, cfg.HTTPTimeout/time.Second))).
		SetUseGZip(true).
		SetPrecision(time.Nanosecond).
		SetLogLevel(0)
	k.client = influxdb2.NewClientWithOptions(cfg.URL, cfg.Token, opts)
	k.api = k.client.WriteAPIBlocking(cfg.Org, cfg.Bucket)
	return k, nil
}

// Enabled reports whether the sink writes anywhere.
func (k *Sink) Enabled() bool { return k.client != nil }

// AddEvidence adds a terminal's evidence for the current step.
func (k *Sink) AddEvidence(ev *fdd.Evidence) {
	if !k.Enabled() {
		return
	}
	k.mu.Lock()
	k.reserve()
	if appendEvidence(&k.lines, k.site, ev) {
		k.count++
	}
	k.mu.Unlock()
}

// AddLoop adds a loop's evidence for the current step.
func (k *Sink) AddLoop(ev *fdd.LoopEvidence) {
	if !k.Enabled() {
		return
	}
	k.mu.Lock()
	k.reserve()
	if appendLoop(&k.lines, k.site, ev) {
		k.count++
	}
	k.mu.Unlock()
}

// AddTransition adds a fault event.
func (k *Sink) AddTransition(tr *rules.Transition) {
	if !k.Enabled() {
		return
	}
	k.mu.Lock()
	k.reserve()
	if appendTransition(&k.lines, k.site, tr) {
		k.count++
	}
	k.mu.Unlock()
}

// reserve makes the line buffer of a new step about as large as the last
// step's. Called under k.mu.
func (k *Sink) reserve() {
	if k.lines.buf == nil && k.last > 0 {
		k.lines.buf = make([]byte, 0, k.last+k.last/8)
	}
}

// Commit moves the points added since the last Commit into the outbox as
// items keyed by the step time, chunk number and content hash. When it
// returns nil the points survive a crash; on error they stay in memory and
// the next Commit tries again.
func (k *Sink) Commit(ctx context.Context, step time.Time) error {
	if !k.Enabled() {
		return nil
	}
	k.mu.Lock()
	defer k.mu.Unlock()
	if k.count == 0 {
		return nil
	}
	parts := chunks(k.lines.buf, k.cfg.ChunkLines)
	for i, p := range parts {
		payload, err := encodePayload(p)
		if err != nil {
			return fmt.Errorf("influx sink: step %s: %w", step.Format(time.RFC3339), err)
		}
		if err := k.ob.Enqueue(ctx, stepKey(step, i, contentSum(p)), k.cfg.Channel, payload); err != nil {
			return fmt.Errorf("influx sink: step %s: %w", step.Format(time.RFC3339), err)
		}
	}
	k.statsMu.Lock()
	k.stats.Lines += k.count
	k.stats.Items += len(parts)
	k.statsMu.Unlock()
	k.last = len(k.lines.buf)
	k.lines.buf = nil
	k.count = 0
	select {
	case k.kick <- struct{}{}:
	default:
	}
	return nil
}

// Stats returns the sink's counters.
func (k *Sink) Stats() Stats {
	k.statsMu.Lock()
	defer k.statsMu.Unlock()
	return k.stats
}
