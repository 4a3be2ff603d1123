package bacnet

import (
	"bytes"
	"context"
	"fmt"
	"strconv"
	"strings"
	"sync"
	"time"

	"risewatch/collector/bacnet/wire"
)

// Checkpoints is a small durable key/value store for trend-log positions.
// A Put that returns nil must survive a crash. It has the same shape as the
// trend-file source's interface, so one store (file or SQLite) serves both.
type Checkpoints interface {
	Get(key string) ([]byte, bool, error)
	Put(key string, val []byte) error
}

// MemCheckpoints keeps checkpoints in memory (tests, discovery, demo); it
// also implements BatchCheckpoints.
type MemCheckpoints struct {
	mu sync.Mutex
	m  map[string][]byte
}

// Get returns the stored value.
func (m *MemCheckpoints) Get(key string) ([]byte, bool, error) {
	m.mu.Lock()
	defer m.mu.Unlock()
	v, ok := m.m[key]
	return append([]byte(nil), v...), ok, nil
}

// Put stores a value.
func (m *MemCheckpoints) Put(key string, val []byte) error {
	m.mu.Lock()
	defer m.mu.Unlock()
	if m.m == nil {
		m.m = map[string][]byte{}
	}
	m.m[key] = append([]byte(nil), val...)
	return nil
}

// PutMany stores several values at once.
func (m *MemCheckpoints) PutMany(kv map[string][]byte) error {
	for k, v := range kv {
		if err := m.Put(k, v); err != nil {
			return err
		}
	}
	return nil
}

// trendPosition is what a checkpoint holds: the sequence number of the
// last record not read again, "seq N".
//
// A Progress commit (Source.UseProgress) stores the same value under the
// log's key and its tiedKey, the position first: the two agree when the
// position keeps the watermark's rule (no record stamped at or after that
// commit's readFrom is at or before Seq). A position alone, or different
// from its tied copy, says only that Seq was delivered: a sweep stores it
// so without UseProgress, and so did every daemon before trend-log
// checkpoints followed the watermark, ahead of what its consumer had
// accepted. A reader that follows a Progress therefore does not trust
// such an untied position past the records its readFrom needs
// (TrendReader.untiedResume). (A second key, not a second form of the
// value: the value stays what every reader of the store parses.)
type trendPosition struct {
	Seq uint32
}

func (p trendPosition) encode() []byte { return []byte("seq " + strconv.FormatUint(uint64(p.Seq), 10)) }

func decodePosition(b []byte) (trendPosition, error) {
	s, ok := strings.CutPrefix(string(b), "seq ")
	n, err := strconv.ParseUint(s, 10, 32)
	if !ok || err != nil {
		return trendPosition{}, fmt.Errorf("bacnet: trend checkpoint %q is not \"seq N\"", b)
	}
	return trendPosition{Seq: uint32(n)}, nil
}

// tiedKey is the key of the copy a Progress commit stores of a log's
// position (see trendPosition).
func tiedKey(key string) string { return key + "/tied" }

// TrendKey is the checkpoint key of one trend log.
func TrendKey(device, trendLog uint32) string {
	return "bacnet/device/" + strconv.FormatUint(uint64(device), 10) + "/trend-log/" + strconv.FormatUint(uint64(trendLog), 10)
}

// TrendRecord is one log record with its sequence number.
type TrendRecord struct {
	Seq uint32
	At  time.Time
	wire.LogRecord
}

// TrendResult summarises one backfill of one trend log.
type TrendResult struct {
	Device, Log uint32
	Records     int    // records delivered
	Lost        uint64 // records overwritten in the device before they could be read (a counted gap)
	Reset       bool   // the device's record numbering restarted (buffer cleared or device replaced)
	FirstSeq    uint32
	LastSeq     uint32
}

// TrendReader reads trend logs by sequence number from per-log checkpoints.
type TrendReader struct {
	Client      *Client
	Checkpoints Checkpoints
	Location    *time.Location // time zone of device clocks (default UTC)
	// Page is the record count asked per ReadRange (default 100; devices cut
	// answers to their max-APDU and set more-items, so this is an upper bound).
	Page int32
	// known, when set, gives a log's position in this process (the
	// sequence number of the next record to read); it takes the place of
	// the stored checkpoint, which then lags behind (Source.UseProgress).
	known func(key string) (next uint32, ok bool)
	// readFrom, when set (with known), gives the Progress's readFrom
	// (watermark less lookback; ok false when no watermark is stored): a
	// stored position not tied to the watermark is resumed no later than
	// the first record stamped at or after it (untiedResume).
	readFrom func() (from time.Time, ok bool)
}

// Backfill reads every record of trend log tl on d that follows the log's
// checkpoint, passing them to deliver in pages, and moves the checkpoint
// after each page deliver accepted. Records are never delivered twice and
// never skipped silently: records the device overwrote before they were
// read are counted in TrendResult.Lost; an answer that starts elsewhere
// than asked while the device still holds the record asked for, or that
// stops short of the newest record without more-items (a record left
// out), ends the backfill with an error before its records are delivered.
// Without a checkpoint the whole buffer is read.
func (r *TrendReader) Backfill(ctx context.Context, d *Device, tl uint32, deliver func([]TrendRecord) error) (TrendResult, error) {
	c, err := r.open(ctx, d, tl)
	if err != nil {
		return c.res, err
	}
	for !c.done {
		recs, err := c.fetch(ctx)
		if err != nil {
			return c.res, err
		}
		if len(recs) == 0 {
			continue
		}
		if err := deliver(recs); err != nil {
			return c.res, err
		}
		if err := c.commit(recs); err != nil {
			return c.res, err
		}
	}
	return c.res, nil
}

// trendCursor walks one trend log by sequence number: open reads the
// record counts and the checkpoint, fetch reads the next page, commit moves
// the checkpoint past delivered records. The checkpoint never moves in
// fetch, so records fetched but not delivered are read again next time.
type trendCursor struct {
	r      *TrendReader
	d      *Device
	tl     uint32
	obj    wire.ObjectID
	key    string
	loc    *time.Location
	page   int32
	next   uint32 // sequence number of the next record to fetch
	newest uint32
	done   bool // nothing more to fetch in this sweep
	empty  bool // the log holds no record
	res    TrendResult
	// stored is the resume sequence number of the stored checkpoint (its
	// Seq + 1), when hasStored; set when open read a tied one.
	stored    uint32
	hasStored bool
	// untied: open found a position not tied to the watermark and, reading
	// for a Progress, resumed at or before the records its readFrom needs.
	untied bool
}

// open reads the log's record count and total record count (ASHRAE 135
// clause 12.25.16/17) and its checkpoint.
func (r *TrendReader) open(ctx context.Context, d *Device, tl uint32) (*trendCursor, error) {
	c := &trendCursor{r: r, d: d, tl: tl, obj: wire.ObjectID{Type: wire.ObjectTrendLog, Instance: tl},
		key: TrendKey(d.Instance, tl), loc: r.Location, page: r.Page, res: TrendResult{Device: d.Instance, Log: tl}}
	if c.loc == nil {
		c.loc = time.UTC
	}
	if c.page <= 0 {
		c.page = 100
	}
	count, total, err := c.counts(ctx)
	if err != nil {
		c.done = true
		return c, err
	}
	if count == 0 {
		c.done, c.empty = true, true
		return c, nil
	}
	c.newest = total
	oldest := total - count + 1 // modulo 2^32, like the device's counter
	c.next = oldest
	next, ok := uint32(0), false
	if r.known != nil {
		next, ok = r.known(c.key)
	}
	if !ok {
		raw, found, err := r.Checkpoints.Get(c.key)
		if err != nil {
			c.done = true
			return c, fmt.Errorf("%s: checkpoint: %w", c.key, err)
		}
		if found {
			pos, err := decodePosition(raw)
			if err != nil {
				c.done = true
				return c, fmt.Errorf("%s: %w", c.key, err)
			}
			next, ok = pos.Seq+1, true
			tied := r.readFrom == nil // only a Progress needs to know
			if !tied {
				cp, found, err := r.Checkpoints.Get(tiedKey(c.key))
				if err != nil {
					c.done = true
					return c, fmt.Errorf("%s: checkpoint: %w", tiedKey(c.key), err)
				}
				tied = found && bytes.Equal(cp, raw)
			}
			switch {
			case tied:
				c.stored, c.hasStored = next, true
			case int32(next-oldest) > 0 && int32(next-(c.newest+1)) <= 0:
				// Within the buffer (else the rules below apply). Not
				// hasStored: the next commit stores a tied position.
				next, c.untied = r.untiedResume(ctx, c, next, oldest), true
			}
		}
	}
	if ok {
		c.next = next
		switch {
		case int32(c.next-(c.newest+1)) > 0:
			// Checkpoint ahead of the newest record: numbering restarted.
			c.res.Reset, c.next = true, oldest
		case int32(oldest-c.next) > 0:
			c.res.Lost += uint64(oldest - c.next) // overwritten while we were away
			c.next = oldest
		}
	}
	c.done = int32(c.newest-c.next) < 0
	return c, nil
}

// counts reads the log's record-count and total-record-count.
func (c *trendCursor) counts(ctx context.Context) (count, total uint32, err error) {
	st := c.r.Client.ReadMany(ctx, c.d, []Read{
		{c.obj, wire.PropertyRef{Prop: wire.PropRecordCount, Index: wire.NoIndex}},
		{c.obj, wire.PropertyRef{Prop: wire.PropTotalRecordCount, Index: wire.NoIndex}},
	})
	for _, s := range st {
		if s.Err != nil {
			return 0, 0, fmt.Errorf("device %d trend-log %d: %w", c.d.Instance, c.tl, s.Err)
		}
		if len(s.Values) != 1 || s.Values[0].Tag != wire.TagUnsigned {
			return 0, 0, fmt.Errorf("device %d trend-log %d: record counts are not Unsigned", c.d.Instance, c.tl)
		}
	}
	return uint32(st[0].Values[0].U), uint32(st[1].Values[0].U), nil
}

// untiedMargin is how far before readFrom untiedResume asks the device:
// the reference is a wall time in the device's zone, which a device may
// read in the repeated hour after a change from summer time (an hour
// later than meant), and a minute more for rounding.
const untiedMargin = time.Hour + time.Minute

// untiedStepBack is how far back of the reference untiedResume checks the
// records before a resume point the device named: a single step back of
// the log's clock (records later in sequence stamped earlier) of up to
// this much is always seen. It covers a device logging wall time across
// the end of summer time (an hour) and clock corrections (seconds to
// minutes) with room to spare; each untied log is checked once, so the
// cost is two hours of records, at most what reading from the oldest
// record would cost.
const untiedStepBack = 2 * time.Hour

// untiedResume is where a log read for a Progress resumes from an untied
// stored position next (oldest < next ≤ newest + 1): next when no record
// before it is stamped after ref = readFrom − untiedMargin, else the first
// record that is. The device finds it: ReadRange by time (ASHRAE 135
// clause 15.8.1.1.4.3) with a count of 1 answers the first record in the
// buffer stamped after the reference time. On a log whose clock stepped
// back that need not be the first in sequence (a device that bisects its
// buffer, taking the stamps to ascend, may name one after records stamped
// later than ref), so the records before the resume point are checked
// (untiedChecked). When that cannot be told (no watermark stored, the
// device refuses or answers without a first sequence number, the check
// fails or finds a record stamped after ref) it is the oldest record:
// reading again is safe (the assembler drops the steps before the
// watermark), skipping is not.
func (r *TrendReader) untiedResume(ctx context.Context, c *trendCursor, next, oldest uint32) uint32 {
	from, ok := time.Time{}, false
	if r.readFrom != nil {
		from, ok = r.readFrom()
	}
	if !ok {
		return oldest
	}
	ref := from.Add(-untiedMargin).In(c.loc)
	rd, rt := wire.DateTimeOf(ref)
	ack, err := r.Client.ReadRange(ctx, c.d, wire.ReadRangeRequest{Object: c.obj,
		PropertyRef: wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex},
		Kind:        wire.RangeByTime, RefDate: rd, RefTime: rt, Count: 1})
	at := next
	switch {
	case err != nil:
		return oldest
	case ack.ItemCount == 0 && !ack.Flags.More:
		// every record predates the reference
	case ack.ItemCount == 0 || !ack.HasFirstSeq:
		return oldest
	case int32(ack.FirstSeq-oldest) < 0:
		return oldest // the buffer moved on since the counts were read
	case int32(ack.FirstSeq-next) < 0:
		at = ack.FirstSeq
	}
	if !r.untiedChecked(ctx, c, at, oldest, ref) {
		return oldest
	}
	return at
}

// untiedChecked reports whether the records before at (oldest < at) are
// stamped at or before ref, reading them by sequence number backward from
// at − 1 (count −Page, ASHRAE 135 clause 15.8.1.1.4.2) until the oldest
// record or one stamped at or before ref − untiedStepBack; every record
// read must be at or before ref. That sees any single step back of the
// clock of up to untiedStepBack before at that left a record stamped
// after ref before the step: the records between the step and at are
// stamped from the step's new time on, later than ref − untiedStepBack,
// so the read goes past the step and meets that record. A record stamped
// after ref before the oldest one read needs the clock to have stepped
// back by more than untiedStepBack in all (plus the time logged) between
// the two. A device that answers out of order (not ending at the record
// asked for, no first sequence number) fails the check. Stamps in the
// repeated hour after a change from summer time may be read an hour off;
// ref is untiedMargin before readFrom, so a record at or after readFrom is
// still seen after ref (near that hour the check may fail where it need
// not: the log is then read from its oldest record).
func (r *TrendReader) untiedChecked(ctx context.Context, c *trendCursor, at, oldest uint32, ref time.Time) bool {
	floor := ref.Add(-untiedStepBack)
	for last := at - 1; int32(last-oldest) >= 0; {
		ack, err := r.Client.ReadRange(ctx, c.d, wire.ReadRangeRequest{Object: c.obj,
			PropertyRef: wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex},
			Kind:        wire.RangeBySequence, Ref: last, Count: -c.page})
		n := uint32(len(ack.Records))
		if err != nil || n == 0 || !ack.HasFirstSeq || ack.FirstSeq+n-1 != last || int32(ack.FirstSeq-oldest) < 0 {
			return false
		}
		reached := false
		for _, l := range ack.Records {
			t, err := wire.ToTime(l.Date, l.Time, c.loc)
			if err != nil || t.After(ref) {
				return false
			}
			reached = reached || !t.After(floor)
		}
		if reached {
			return true
		}
		last = ack.FirstSeq - 1
	}
	return true // back to the oldest record
}

// fetch reads the next page (at least one record unless it sets done).
func (c *trendCursor) fetch(ctx context.Context) ([]TrendRecord, error) {
	d, tl := c.d, c.tl
	ack, err := c.r.Client.ReadRange(ctx, d, wire.ReadRangeRequest{Object: c.obj,
		PropertyRef: wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex},
		Kind:        wire.RangeBySequence, Ref: c.next, Count: c.page})
	if err != nil {
		c.done = true
		return nil, err
	}
	if ack.ItemCount == 0 {
		c.done = true
		if !ack.Flags.More {
			// The records from next on are gone (overwritten between the count read and now).
			return nil, nil
		}
		return nil, fmt.Errorf("device %d trend-log %d: empty answer with more-items set", d.Instance, tl)
	}
	first := c.next
	if ack.HasFirstSeq {
		first = ack.FirstSeq
	}
	if int32(first-c.next) < 0 {
		c.done = true
		return nil, fmt.Errorf("device %d trend-log %d: asked from record %d, answer starts at %d", d.Instance, tl, c.next, first)
	}
	// An answer of fewer records than asked, more-items unset, says it
	// holds every record from first on (a device that cuts an answer to
	// fit sets more-items): it ends at or after the newest record counted
	// in open, as records only leave a log at its oldest end. One that ends
	// before it left records out, and the records after the hole would
	// take wrong sequence numbers (a hole in a full page cannot be seen).
	n := uint32(len(ack.Records))
	if end := first + n - 1; !ack.Flags.More && int32(n) < c.page && int32(end-c.newest) < 0 {
		c.done = true
		return nil, fmt.Errorf("device %d trend-log %d: answer of records %d..%d without more-items ends before record %d: records left out", d.Instance, tl, first, end, c.newest)
	}
	if int32(first-c.next) > 0 {
		// Records next..first−1 were not sent: lost if the buffer wrapped
		// past them since the counts were read, a faulty answer (shifted or
		// misnumbered) if the device still holds any record before first.
		count, total, err := c.counts(ctx)
		if err != nil {
			c.done = true
			return nil, err
		}
		if oldest := total - count + 1; count == 0 || int32(oldest-first) < 0 {
			c.done = true
			return nil, fmt.Errorf("device %d trend-log %d: asked from record %d, answer starts at %d, yet the log holds records from %d", d.Instance, tl, c.next, first, oldest)
		}
		c.res.Lost += uint64(first - c.next) // wrapped past us between reads
	}
	recs := make([]TrendRecord, 0, len(ack.Records))
	for i, l := range ack.Records {
		at, err := wire.ToTime(l.Date, l.Time, c.loc)
		if err != nil {
			c.done = true
			return nil, fmt.Errorf("device %d trend-log %d record %d: %w", d.Instance, tl, first+uint32(i), err)
		}
		recs = append(recs, TrendRecord{Seq: first + uint32(i), At: at, LogRecord: l})
	}
	c.next = first + uint32(len(recs))
	if (!ack.Flags.More && ack.Flags.Last) || int32(c.newest-c.next) < 0 {
		c.done = true
	}
	return recs, nil
}

// commit records that recs (a prefix of what fetch returned, in order)
// were delivered and moves the checkpoint past the last of them.
func (c *trendCursor) commit(recs []TrendRecord) error {
	if len(recs) == 0 {
		return nil
	}
	last := recs[len(recs)-1].Seq
	if err := c.r.Checkpoints.Put(c.key, trendPosition{Seq: last}.encode()); err != nil {
		return fmt.Errorf("%s: checkpoint: %w", c.key, err)
	}
	c.advance(recs)
	return nil
}

// position is the checkpoint key and value after delivering recs.
func (c *trendCursor) position(recs []TrendRecord) (string, []byte) {
	return c.key, trendPosition{Seq: recs[len(recs)-1].Seq}.encode()
}

// advance counts recs as delivered (their checkpoint is stored).
func (c *trendCursor) advance(recs []TrendRecord) {
	last := recs[len(recs)-1].Seq
	if c.res.Records == 0 {
		c.res.FirstSeq = recs[0].Seq
	}
	c.res.Records += len(recs)
	c.res.LastSeq = last
}

// BatchCheckpoints is a Checkpoints that can store several positions in
// one durable write (the sweep moves every log's checkpoint after each
// merged batch; one transaction instead of one per log).
type BatchCheckpoints interface {
	Checkpoints
	PutMany(kv map[string][]byte) error
}
