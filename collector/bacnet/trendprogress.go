package bacnet

import (
	"fmt"
	"math"
	"time"

	"risewatch/collector"
)

// With UseProgress the trend-log checkpoints follow the consumer, not the
// sweep: a sweep stores nothing, it only notes, per log, the sequence
// number and time of each record it delivered. On each commit of the
// collector.Progress (watermark W first, then this source) every log's
// checkpoint becomes the sequence number R from which every record stamped
// at or after readFrom = W − lookback is read again:
//
//	R = the first record delivered since the last commit that is stamped
//	    at or after readFrom (every record before it predates readFrom,
//	    also across a device clock stepped back), or a mark a little
//	    before it (see maxTrackMarks); the log's next sequence number when
//	    every record delivered since the last commit predates readFrom.
//
// A restart reads each log from R; the assembler rebuilds the steps
// before W from those records (its resamplers' hold) without emitting
// them, so every step is handed on once whatever moment the process was
// killed at: after a sweep before the consumer accepted its steps, after
// it accepted them before a commit, or between the watermark's write and
// this source's. Sequence numbers are compared modulo 2^32 (the device's
// Unsigned32 counter wraps). A log whose buffer wrapped past R while the
// daemon was away, or whose numbering restarted (buffer cleared, device
// replaced), is resumed at its oldest record and the overwritten records
// are counted in TrendResult.Lost; records already delivered
// before a crash that the device overwrote before the restart are counted
// there too (they cannot be read again).
//
// A commit stores each position twice, under the log's key and its tied
// key (see trendPosition), so that a position stored any other way (per
// sweep, as before an upgrade to this rule) is known for what it is: such
// a log is resumed no later than its first record stamped at or after
// readFrom (TrendReader.untiedResume), the next commit ties it.
//
// Present values polled by the source have no history to re-read: a
// value polled but not accepted before a crash is gone, and the steps it
// fed are rebuilt from the point's trend log when it has one (else the
// point is Missing for them).

// maxTrackMarks bounds the marks kept per log between commits (a consumer
// that commits rarely, or a backfill that runs far ahead of the consumer).
// Marks are kept at least a stride of sequence numbers apart; when there
// are too many the stride doubles and the marks closer than it are
// dropped. That only moves a resume point earlier (more is read again,
// nothing is skipped) and keeps the marks evenly spread over the records
// delivered since the last commit: the next readFrom may fall anywhere in
// them (while history is backfilled it trails the sweep by the consumer's
// queue), and a resume point is at most about 2·n/maxTrackMarks records
// early for n records delivered.
const maxTrackMarks = 16

// noTime is the "before" time of a mark with no record before it.
const noTime = math.MinInt64

// seqMark is a position a log can be resumed from: sequence number seq,
// and the latest time of the records delivered between the log's resume
// point and seq (noTime when none).
type seqMark struct {
	seq    uint32
	before int64
}

// trendTrack is what the source knows, in this process, of one log whose
// checkpoint follows a Progress. marks[0] is the resume point (the last
// committed one, or where the log was first opened); every record before
// marks[0].seq is stamped before the last commit's readFrom.
type trendTrack struct {
	next      uint32 // sequence number after the last record delivered
	maxAt     int64  // latest time of the records in [marks[0].seq, next)
	marks     []seqMark
	stride    uint32 // least distance between marks (≥ 1)
	stored    uint32 // resume sequence number in the store, when hasStored
	hasStored bool
}

func newTrack(next uint32) *trendTrack {
	return &trendTrack{next: next, maxAt: noTime, marks: []seqMark{{seq: next, before: noTime}}, stride: 1}
}

// restart forgets the records noted (the log's numbering restarted) and
// resumes at next.
func (tk *trendTrack) restart(next uint32) {
	tk.next, tk.maxAt, tk.stride = next, noTime, 1
	tk.marks = append(tk.marks[:0], seqMark{seq: next, before: noTime})
}

// note records delivered records (in sequence order). Records at or
// behind next were noted already (a second point on the same log).
func (tk *trendTrack) note(recs []TrendRecord) {
	for i := range recs {
		r := &recs[i]
		if int32(r.Seq-tk.next) < 0 {
			continue
		}
		if last := tk.marks[len(tk.marks)-1].seq; r.Seq-last >= tk.stride {
			tk.marks = append(tk.marks, seqMark{seq: r.Seq, before: tk.maxAt})
			for len(tk.marks) > maxTrackMarks {
				tk.thin()
			}
		}
		tk.maxAt = max(tk.maxAt, r.At.UnixNano())
		tk.next = r.Seq + 1
	}
}

// thin doubles the stride and drops the marks closer than it to the last
// one kept (marks[0], the resume point, stays).
func (tk *trendTrack) thin() {
	tk.stride *= 2
	k := 1
	for i := 1; i < len(tk.marks); i++ {
		if tk.marks[i].seq-tk.marks[k-1].seq >= tk.stride {
			tk.marks[k] = tk.marks[i]
			k++
		}
	}
	tk.marks = tk.marks[:k]
}

// resume returns the sequence number from which every noted record
// stamped at or after from (ns) is read again, and drops the marks before
// it (from only grows: the watermark never moves back).
func (tk *trendTrack) resume(from int64) uint32 {
	if tk.maxAt < from {
		tk.restart(tk.next) // everything delivered predates from
		return tk.next
	}
	best := 0
	for i, m := range tk.marks {
		if m.before >= from {
			break
		}
		best = i
	}
	tk.marks = append(tk.marks[:0], tk.marks[best:]...)
	tk.marks[0].before = noTime
	// New marks as dense as the records left allow.
	tk.stride = max(1, (tk.next-tk.marks[0].seq)/maxTrackMarks)
	return tk.marks[0].seq
}

// UseProgress ties the source's trend-log checkpoints to p (see above):
// the sweeps no longer store positions, p's commits do. Present-value
// polls are not affected: they have no history to read again. Call it
// once, before Run or the first SweepTrends.
func (s *Source) UseProgress(p *collector.Progress) {
	s.tmu.Lock()
	s.prog = p
	if s.tracks == nil {
		s.tracks = map[string]*trendTrack{}
	}
	s.tmu.Unlock()
	p.Register("bacnet:"+s.name, s.commitTrends)
}

// following reports whether the checkpoints follow a Progress.
func (s *Source) following() bool {
	s.tmu.Lock()
	defer s.tmu.Unlock()
	return s.prog != nil
}

// readFrom is the TrendReader's readFrom (Progress mode): the watermark
// less the lookback, ok false when no watermark is stored.
func (s *Source) readFrom() (time.Time, bool) {
	s.tmu.Lock()
	p := s.prog
	s.tmu.Unlock()
	if p == nil {
		return time.Time{}, false
	}
	wm := p.Watermark()
	if wm.IsZero() {
		return time.Time{}, false
	}
	return wm.Add(-p.Lookback()), true
}

// knownNext is the TrendReader's in-process position of a log (Progress
// mode): where the last delivered record left it.
func (s *Source) knownNext(key string) (uint32, bool) {
	s.tmu.Lock()
	defer s.tmu.Unlock()
	tk := s.tracks[key]
	if tk == nil {
		return 0, false
	}
	return tk.next, true
}

// opened updates a log's track after its cursor was opened: a new track
// starts where the cursor does; a known one restarts on renumbering and
// skips the records the device overwrote (counted in the cursor's Lost).
func (s *Source) opened(c *trendCursor) {
	if c.empty {
		return
	}
	s.tmu.Lock()
	defer s.tmu.Unlock()
	tk := s.tracks[c.key]
	switch {
	case tk == nil:
		tk = newTrack(c.next)
		tk.stored, tk.hasStored = c.stored, c.hasStored
		s.tracks[c.key] = tk
	case c.res.Reset:
		tk.restart(c.next)
	case int32(c.next-tk.next) > 0:
		tk.next = c.next
	}
}

// delivered notes the records of a log that emit accepted.
func (s *Source) delivered(key string, recs []TrendRecord) {
	if len(recs) == 0 {
		return
	}
	s.tmu.Lock()
	defer s.tmu.Unlock()
	if tk := s.tracks[key]; tk != nil {
		tk.note(recs)
	}
}

// commitTrends is the source's collector.CommitFunc: store, for every log
// read in this process, the position from which every record stamped at
// or after readFrom is read again (one write when the store batches).
func (s *Source) commitTrends(_, readFrom time.Time) error {
	from := readFrom.UnixNano()
	s.tmu.Lock()
	defer s.tmu.Unlock()
	s.mu.Lock()
	cp := s.cp
	s.mu.Unlock()
	kv := map[string][]byte{}
	resume := map[string]uint32{}
	for key, tk := range s.tracks {
		r := tk.resume(from)
		if tk.hasStored && tk.stored == r {
			continue
		}
		v := trendPosition{Seq: r - 1}.encode() // the stored value names the last record not read again
		kv[key], kv[tiedKey(key)] = v, v
		resume[key] = r
	}
	if len(kv) == 0 {
		return nil
	}
	bc, batch := cp.(BatchCheckpoints)
	if batch {
		if err := bc.PutMany(kv); err != nil {
			return fmt.Errorf("source %s: trend checkpoints: %w", s.name, err)
		}
	}
	for key, r := range resume {
		if !batch {
			// The position before its tied copy: a crash between the two
			// leaves an untied position (read again from readFrom), never
			// a tied copy of a position not stored.
			for _, k := range []string{key, tiedKey(key)} {
				if err := cp.Put(k, kv[k]); err != nil {
					return fmt.Errorf("source %s: %s: checkpoint: %w", s.name, k, err)
				}
			}
		}
		tk := s.tracks[key]
		tk.stored, tk.hasStored = r, true
	}
	return nil
}
