package influx

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"os"
	"time"

	influxdb2 "github.com/influxdata/influxdb-client-go/v2"
	"github.com/influxdata/influxdb-client-go/v2/api"

	"risewatch/collector"
	"risewatch/site"
	"risewatch/units"
)

// Checkpoints is the small durable key/value store for read positions;
// store.Store.Checkpoints(namespace) implements it.
type Checkpoints interface {
	Get(key string) ([]byte, bool, error)
	Put(key string, value []byte) error
}

// Options configure a Source.
type Options struct {
	Name   string // site.SourceConfig.Name
	Config site.InfluxConfig
	Token  string // resolved token; TokenFromEnv reads Config.TokenEnv
	Site   *site.Site

	Start time.Time // first time to read when a point has no checkpoint
	End   time.Time // history mode: read up to End and return; zero = follow
	// Page is the time span of one query (default Config.Page, else 6 h).
	Page time.Duration
	// PollInterval (follow mode) is the wait between sweeps (default 1 min).
	PollInterval time.Duration
	// Lag (follow mode) keeps reads behind now, for writes that arrive late
	// (default 1 min).
	Lag         time.Duration
	HTTPTimeout time.Duration // per query (default 30 s)
	Checkpoints Checkpoints   // nil = no checkpoints (always from Start)
	// OnRead, when set, is told about every query: its duration, the
	// readings it returned and its error (for source-health metrics).
	OnRead func(d time.Duration, readings int, err error)
	Logger *slog.Logger
}

// TokenFromEnv returns the token named by cfg.TokenEnv ("" when unset).
func TokenFromEnv(cfg site.InfluxConfig) string {
	if cfg.TokenEnv == "" {
		return ""
	}
	return os.Getenv(cfg.TokenEnv)
}

type point struct {
	name   string
	ref    *site.InfluxRef
	unit   units.Unit
	hasU   bool
	binary bool
}

// Source reads InfluxDB trends for one configured source.
type Source struct {
	opt    Options
	points []point
	client influxdb2.Client
	query  api.QueryAPI
}

// New prepares a source. It fails when a point's unit is unknown or its
// reference is incomplete, naming the point.
func New(opt Options) (*Source, error) {
	if opt.Site == nil {
		return nil, errors.New("influx source: nil site")
	}
	if opt.Config.URL == "" || opt.Config.Bucket == "" {
		return nil, fmt.Errorf("influx source %s: url and bucket are required", opt.Name)
	}
	if opt.Page <= 0 {
		opt.Page = opt.Config.Page
	}
	if opt.Page <= 0 {
		opt.Page = 6 * time.Hour
	}
	if opt.PollInterval <= 0 {
		opt.PollInterval = time.Minute
	}
	if opt.Lag < 0 {
		opt.Lag = 0
	} else if opt.Lag == 0 && opt.End.IsZero() {
		opt.Lag = time.Minute
	}
	if opt.HTTPTimeout <= 0 {
		opt.HTTPTimeout = 30 * time.Second
	}
	if opt.Logger == nil {
		opt.Logger = slog.Default()
	}
	if opt.Start.IsZero() {
		return nil, fmt.Errorf("influx source %s: a start time is required", opt.Name)
	}
	s := &Source{opt: opt}
	for _, p := range collector.Points(opt.Site) {
		if p.Kind != site.PointInflux || p.Source != opt.Name || p.Fixed != nil {
			continue
		}
		if p.Influx == nil || p.Influx.Measurement == "" || p.Influx.Field == "" {
			return nil, fmt.Errorf("influx source %s: point %s: measurement and field are required", opt.Name, p.Name)
		}
		pt := point{name: p.Name, ref: p.Influx, binary: p.Binary}
		if p.Unit != "" && !p.Binary {
			u, err := units.ParseUnit(p.Unit)
			if err != nil {
				return nil, fmt.Errorf("influx source %s: point %s: %w", opt.Name, p.Name, err)
			}
			pt.unit, pt.hasU = u, true
		}
		s.points = append(s.points, pt)
	}
	// Log level 0: the client library's logger is process-global (every
	// NewClientWithOptions sets it), and the sink silences it; a source
	// left at the default would switch its "E!" lines back on. Failed
	// queries reach OnRead and the daemon's own logs instead.
	opts := influxdb2.DefaultOptions().SetHTTPRequestTimeout(uint(max(1, opt.HTTPTimeout/time.Second))).SetLogLevel(0)
	s.client = influxdb2.NewClientWithOptions(opt.Config.URL, opt.Token, opts)
	s.query = s.client.QueryAPI(opt.Config.Org)
	return s, nil
}

// Name returns the source name.
func (s *Source) Name() string { return s.opt.Name }

// Points returns the names of the points this source reads.
func (s *Source) Points() []string {
	out := make([]string, len(s.points))
	for i, p := range s.points {
		out[i] = p.name
	}
	return out
}

// Run reads pages until the end of the range (history) or until ctx is
// cancelled (follow). A point's checkpoint moves only after its page was
// handed to out, so nothing is skipped; a crash repeats at most one page.
func (s *Source) Run(ctx context.Context, out chan<- []collector.Reading) error {
	defer s.client.Close()
	cursors := make([]time.Time, len(s.points))
	for i, p := range s.points {
		c, err := s.loadCursor(p.name)
		if err != nil {
			return err
		}
		cursors[i] = c
	}
	for {
		end := s.opt.End
		follow := end.IsZero()
		if follow {
			end = time.Now().Add(-s.opt.Lag)
		}
		if err := s.sweep(ctx, out, cursors, end); err != nil {
			if ctx.Err() != nil {
				return nil
			}
			if !follow {
				return err
			}
			s.opt.Logger.Warn("influx source: sweep failed; retrying at the next poll", "source", s.opt.Name, "err", err)
		}
		if !follow {
			return nil
		}
		t := time.NewTimer(s.opt.PollInterval)
		select {
		case <-ctx.Done():
			t.Stop()
			return nil
		case <-t.C:
		}
	}
}

// sweep reads every point from its cursor up to end, page window by page
// window over all points.
func (s *Source) sweep(ctx context.Context, out chan<- []collector.Reading, cursors []time.Time, end time.Time) error {
	if len(s.points) == 0 {
		return nil
	}
	lo := end
	for _, c := range cursors {
		if c.Before(lo) {
			lo = c
		}
	}
	for wStart := lo; wStart.Before(end); wStart = wStart.Add(s.opt.Page) {
		wEnd := wStart.Add(s.opt.Page)
		if wEnd.After(end) {
			wEnd = end
		}
		for i, p := range s.points {
			if !cursors[i].Before(wEnd) {
				continue
			}
			from := cursors[i]
			if from.Before(wStart) {
				from = wStart
			}
			readings, err := s.readPage(ctx, p, from, wEnd)
			if err != nil {
				return err
			}
			if len(readings) > 0 {
				select {
				case out <- readings:
				case <-ctx.Done():
					return ctx.Err()
				}
			}
			if err := s.saveCursor(p.name, wEnd); err != nil {
				return err
			}
			cursors[i] = wEnd
		}
	}
	return nil
}

// readPage queries one point over [from, to).
func (s *Source) readPage(ctx context.Context, p point, from, to time.Time) ([]collector.Reading, error) {
	t0 := time.Now()
	res, err := s.query.Query(ctx, pageQuery(s.opt.Config.Bucket, p.ref, from, to))
	var out []collector.Reading
	if err == nil {
		for res.Next() {
			r := res.Record()
			at := r.Time()
			// range() is [start, stop) in Flux, but InfluxDB 1.8 also
			// returns points at stop; keep pages disjoint on the client.
			if at.Before(from) || !at.Before(to) {
				continue
			}
			v, q := s.value(p, r.Value())
			out = append(out, collector.Reading{Point: p.name, At: at, Value: v, Quality: q})
		}
		err = res.Err()
		res.Close()
	}
	if s.opt.OnRead != nil {
		s.opt.OnRead(time.Since(t0), len(out), err)
	}
	if err != nil {
		return nil, fmt.Errorf("influx source %s: point %s: query %s..%s: %w", s.opt.Name, p.name,
			from.UTC().Format(time.RFC3339), to.UTC().Format(time.RFC3339), err)
	}
	return out, nil
}

// value converts a Flux value to SI with a quality.
func (s *Source) value(p point, raw any) (float64, collector.Quality) {
	var v float64
	switch x := raw.(type) {
	case float64:
		v = x
	case int64:
		v = float64(x)
	case uint64:
		v = float64(x)
	case bool:
		if x {
			v = 1
		}
	case nil:
		return math.NaN(), collector.Missing
	default:
		return math.NaN(), collector.Bad // strings and other types are not values
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return math.NaN(), collector.Missing
	}
	if p.binary {
		if v != 0 {
			return 1, collector.Good
		}
		return 0, collector.Good
	}
	if p.hasU {
		v = p.unit.ToSI(v)
	}
	return v, collector.Good
}

func (s *Source) loadCursor(name string) (time.Time, error) {
	if s.opt.Checkpoints == nil {
		return s.opt.Start, nil
	}
	b, ok, err := s.opt.Checkpoints.Get(name)
	if err != nil {
		return time.Time{}, fmt.Errorf("influx source %s: point %s: checkpoint: %w", s.opt.Name, name, err)
	}
	if !ok {
		return s.opt.Start, nil
	}
	t, err := time.Parse(time.RFC3339Nano, string(b))
	if err != nil {
		return time.Time{}, fmt.Errorf("influx source %s: point %s: checkpoint %q: %w", s.opt.Name, name, b, err)
	}
	if t.Before(s.opt.Start) {
		return s.opt.Start, nil
	}
	return t, nil
}

func (s *Source) saveCursor(name string, t time.Time) error {
	if s.opt.Checkpoints == nil {
		return nil
	}
	if err := s.opt.Checkpoints.Put(name, []byte(t.UTC().Format(time.RFC3339Nano))); err != nil {
		return fmt.Errorf("influx source %s: point %s: checkpoint: %w", s.opt.Name, name, err)
	}
	return nil
}
