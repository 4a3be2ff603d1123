package collector

import (
	"errors"
	"fmt"
	"strconv"
	"sync"
	"time"
)

// Checkpoints is a small durable key/value store (the state store's
// checkpoint view and trendfile.FileCheckpoints implement it). A Put that
// returns nil must survive a crash.
type Checkpoints interface {
	Get(key string) ([]byte, bool, error)
	Put(key string, val []byte) error
}

// CommitFunc is a source's part of a commit: make durable a read position
// from which every reading at or after readFrom will be read again after a
// restart. watermark is the end of the last step the consumer accepted.
type CommitFunc func(watermark, readFrom time.Time) error

// Progress ties the sources' read positions to the steps the consumer has
// accepted, so that a restart (or kill -9 at any moment) neither loses nor
// repeats a step.
//
// The consumer calls Accept after it has handled a step's samples. A commit
// (every Every, and on Commit) first stores the watermark W, the end of the
// last accepted step, then asks every registered source to store a read
// position whose readings before it all lie at or before W − Lookback.
// Lookback is the resampler's hold limit (MaxGap) plus one step: a reading
// older than that cannot influence a step at or after W, so re-reading from
// there rebuilds the next steps exactly as an uninterrupted run would. On
// restart the Assembler skips every step before W (AssembleConfig.Progress)
// and the sources resume from their stored positions. Storing W first
// keeps every crash point safe: a source position is never newer than the
// stored W allows.
//
// Between two commits a crash repeats the steps accepted since the last
// one, with the same values. A consumer whose own output is durable makes
// that exact by writing a step idempotently keyed by its time, or by
// discarding on start what it wrote at or after Watermark().
type Progress struct {
	ck    Checkpoints
	key   string
	every time.Duration

	mu        sync.Mutex
	committed int64 // ns, stored watermark
	accepted  int64 // ns, end of the last accepted step
	interval  int64
	lookback  int64
	hooks     []namedHook
	lastPut   time.Time
}

type namedHook struct {
	name string
	fn   CommitFunc
}

// OpenProgress loads the watermark stored under key (none: the zero time,
// nothing accepted yet). every bounds how often Accept commits (0: at
// every Accept).
func OpenProgress(ck Checkpoints, key string, every time.Duration) (*Progress, error) {
	if ck == nil {
		return nil, errors.New("progress: no checkpoint store")
	}
	p := &Progress{ck: ck, key: key, every: every, committed: minNs, accepted: minNs,
		interval: int64(DefaultInterval), lookback: int64(DefaultMaxGap + DefaultInterval), lastPut: time.Now()}
	b, ok, err := ck.Get(key)
	if err != nil {
		return nil, fmt.Errorf("progress %s: %w", key, err)
	}
	if ok {
		ns, err := strconv.ParseInt(string(b), 10, 64)
		if err != nil {
			return nil, fmt.Errorf("progress %s: stored watermark %q: %w", key, b, err)
		}
		p.committed, p.accepted = ns, ns
	}
	return p, nil
}

const minNs = -1 << 63

// Watermark returns the stored watermark: every step that starts before it
// was accepted before the last commit. The zero time when there is none.
func (p *Progress) Watermark() time.Time {
	p.mu.Lock()
	defer p.mu.Unlock()
	return nsTime(p.committed)
}

// Lookback returns how far before the watermark sources must re-read.
func (p *Progress) Lookback() time.Duration {
	p.mu.Lock()
	defer p.mu.Unlock()
	return time.Duration(p.lookback)
}

func nsTime(ns int64) time.Time {
	if ns == minNs {
		return time.Time{}
	}
	return time.Unix(0, ns).UTC()
}

// setGrid is called by NewAssembler with its resampling configuration.
func (p *Progress) setGrid(c ResampleConfig) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.interval = int64(c.Interval)
	p.lookback = int64(c.MaxGap + c.Interval)
}

func (p *Progress) skipBefore() int64 {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.committed
}

// Register adds a source's commit function (a source calls it once).
func (p *Progress) Register(source string, fn CommitFunc) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.hooks = append(p.hooks, namedHook{source, fn})
}

// Accept records that the consumer has handled the step starting at
// stepStart (and every one before it), and commits when Every has passed.
func (p *Progress) Accept(stepStart time.Time) error {
	p.mu.Lock()
	end := stepStart.UnixNano() + p.interval
	if end > p.accepted {
		p.accepted = end
	}
	due := time.Since(p.lastPut) >= p.every
	p.mu.Unlock()
	if !due {
		return nil
	}
	return p.Commit()
}

// Commit stores the accepted watermark, then every source's read position
// for it. Call it at shutdown after the last Accept.
func (p *Progress) Commit() error {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.lastPut = time.Now()
	if p.accepted == minNs {
		return nil
	}
	if p.accepted != p.committed {
		if err := p.ck.Put(p.key, strconv.AppendInt(nil, p.accepted, 10)); err != nil {
			return fmt.Errorf("progress %s: %w", p.key, err)
		}
		p.committed = p.accepted
	}
	w := nsTime(p.committed)
	from := nsTime(p.committed - p.lookback)
	var errs []error
	for _, h := range p.hooks {
		if err := h.fn(w, from); err != nil {
			errs = append(errs, fmt.Errorf("source %s: commit: %w", h.name, err))
		}
	}
	return errors.Join(errs...)
}
