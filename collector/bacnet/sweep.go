package bacnet

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"sync"

	"risewatch/collector"
	"risewatch/collector/bacnet/wire"
)

// sweepBudget bounds the records a sweep holds fetched but not yet
// delivered, over all logs (the page size shrinks when there are many logs).
const sweepBudget = 200_000

// sweepLog is one trend log during a sweep.
type sweepLog struct {
	p   *point
	cur *trendCursor
	buf []TrendRecord // fetched, buf[pos:] not yet delivered
	pos int
	err error
}

// SweepTrends backfills every configured trend log from its checkpoint and
// passes the readings to emit. The logs are read in lockstep by time, so
// the readings reach emit in time order across all points (a consumer that
// assembles steps on a time grid, with a bounded lateness window, can take
// days of history from many logs without dropping any as late):
//
//  1. every log's counts and checkpoint are read;
//  2. each log whose fetched records are all delivered reads its next page;
//  3. the frontier T is the oldest "newest fetched record" among the logs
//     not yet caught up; every fetched record at or before T is delivered,
//     merged by time, in one batch; each log's checkpoint then moves past
//     the records it delivered (only after emit returned nil). With
//     UseProgress the records are only noted, and the Progress's commits
//     store the positions (see trendprogress.go).
//
// Steps 2 and 3 repeat until every log is caught up. At most one page per
// log is held at once. A log that fails is reported and left out; the
// others go on.
func (s *Source) SweepTrends(ctx context.Context, emit func([]collector.Reading) error) ([]TrendResult, error) {
	s.mu.Lock()
	c := s.client
	s.mu.Unlock()
	if c == nil {
		return nil, fmt.Errorf("source %s: not started", s.name)
	}
	var logs []*sweepLog
	for i := range s.points {
		p := &s.points[i]
		if p.hasTrend && s.devices[p.device] != nil {
			logs = append(logs, &sweepLog{p: p})
		}
	}
	if len(logs) == 0 {
		return nil, nil
	}
	page := int32(min(100, max(10, sweepBudget/len(logs))))
	tr := &TrendReader{Client: c, Checkpoints: s.cp, Location: s.loc, Page: page}
	follow := s.following()
	if follow {
		tr.known, tr.readFrom = s.knownNext, s.readFrom
	}
	s.parallel(logs, func(l *sweepLog) {
		l.cur, l.err = tr.open(ctx, s.devices[l.p.device], l.p.trend)
		if follow && l.err == nil {
			s.opened(l.cur)
		}
	})
	if follow {
		untied := 0
		for _, l := range logs {
			if l.err == nil && l.cur.untied {
				untied++
			}
		}
		if untied > 0 {
			s.log.Info("bacnet: trend-log positions not tied to the watermark (stored per sweep, as before an upgrade): those logs are read again from the watermark less the lookback",
				"source", s.name, "logs", untied)
		}
	}
	var batch []collector.Reading
	var delivered [][]TrendRecord
	for ctx.Err() == nil {
		var need []*sweepLog
		for _, l := range logs {
			if l.err == nil && !l.cur.done && l.pos == len(l.buf) {
				need = append(need, l)
			}
		}
		s.parallel(need, func(l *sweepLog) {
			recs, err := l.cur.fetch(ctx)
			l.buf, l.pos, l.err = recs, 0, err
		})
		// The frontier: no log still fetching can deliver anything older.
		frontier, lead := int64(math.MaxInt64), -1
		for i, l := range logs {
			if l.err == nil && !l.cur.done && l.pos < len(l.buf) {
				if at := l.buf[len(l.buf)-1].At.UnixNano(); at < frontier {
					frontier, lead = at, i
				}
			}
		}
		batch, delivered = batch[:0], delivered[:0]
		for i, l := range logs {
			if l.err != nil || l.pos == len(l.buf) {
				delivered = append(delivered, nil)
				continue
			}
			end := l.pos
			for end < len(l.buf) && (i == lead || l.buf[end].At.UnixNano() <= frontier) {
				end++
			}
			recs := l.buf[l.pos:end]
			delivered = append(delivered, recs)
			batch = s.appendReadings(l.p, batch, recs)
		}
		if len(batch) == 0 && lead < 0 {
			break // every log caught up (or failed)
		}
		slices.SortFunc(batch, func(a, b collector.Reading) int {
			if c := a.At.Compare(b.At); c != 0 {
				return c
			}
			return strings.Compare(a.Point, b.Point)
		})
		if len(batch) > 0 {
			if err := emit(batch); err != nil {
				return s.results(logs), err
			}
			batch = make([]collector.Reading, 0, cap(batch)) // emit may keep the slice
		}
		if err := s.storePositions(logs, delivered); err != nil {
			return s.results(logs), err
		}
	}
	var errs []error
	for _, l := range logs {
		res := l.cur.res
		if res.Lost > 0 || res.Reset {
			s.log.Warn("bacnet: trend log lost records before they were read", "source", s.name, "point", l.p.name,
				"device", l.p.device, "trend_log", l.p.trend, "lost", res.Lost, "renumbered", res.Reset)
		}
		if l.err != nil {
			errs = append(errs, fmt.Errorf("point %s: %w", l.p.name, l.err))
		}
	}
	if err := ctx.Err(); err != nil {
		errs = append(errs, err)
	}
	return s.results(logs), errors.Join(errs...)
}

// storePositions moves the checkpoint of every log that delivered records
// (in one write when the store supports it). With UseProgress it only
// notes them: the Progress's commits store the positions.
func (s *Source) storePositions(logs []*sweepLog, delivered [][]TrendRecord) error {
	if s.following() {
		for i, l := range logs {
			if recs := delivered[i]; len(recs) > 0 {
				s.delivered(l.cur.key, recs)
				l.cur.advance(recs)
				l.pos += len(recs)
			}
		}
		return nil
	}
	bc, batch := s.cp.(BatchCheckpoints)
	if !batch {
		for i, l := range logs {
			if recs := delivered[i]; len(recs) > 0 {
				if err := l.cur.commit(recs); err != nil && l.err == nil {
					l.err = err
				}
				l.pos += len(recs)
			}
		}
		return nil
	}
	kv := map[string][]byte{}
	for i, l := range logs {
		if recs := delivered[i]; len(recs) > 0 {
			k, v := l.cur.position(recs)
			kv[k] = v
		}
	}
	if len(kv) == 0 {
		return nil
	}
	if err := bc.PutMany(kv); err != nil {
		return fmt.Errorf("source %s: trend checkpoints: %w", s.name, err)
	}
	for i, l := range logs {
		if recs := delivered[i]; len(recs) > 0 {
			l.cur.advance(recs)
			l.pos += len(recs)
		}
	}
	return nil
}

func (s *Source) results(logs []*sweepLog) []TrendResult {
	out := make([]TrendResult, 0, len(logs))
	for _, l := range logs {
		if l.cur != nil {
			out = append(out, l.cur.res)
		}
	}
	return out
}

// parallel runs fn for every log on up to s.Workers goroutines (the client
// bounds what is outstanding per device).
func (s *Source) parallel(logs []*sweepLog, fn func(*sweepLog)) {
	if len(logs) == 0 {
		return
	}
	jobs := make(chan *sweepLog)
	var wg sync.WaitGroup
	for w := 0; w < max(1, min(s.Workers, len(logs))); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for l := range jobs {
				fn(l)
			}
		}()
	}
	for _, l := range logs {
		jobs <- l
	}
	close(jobs)
	wg.Wait()
}

// appendReadings converts trend records to readings of p (clock-change
// markers are not values and are left out).
func (s *Source) appendReadings(p *point, out []collector.Reading, recs []TrendRecord) []collector.Reading {
	for _, rec := range recs {
		r := Reading(p.name, rec.At)
		switch {
		case rec.Numeric():
			r.Value, r.Quality = s.convert(p, rec.Value, rec.Flags, rec.HasFlags)
		case rec.Kind == wire.LogTimeChange:
			continue
		}
		out = append(out, r)
	}
	return out
}
