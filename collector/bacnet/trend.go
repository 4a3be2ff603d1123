package bacnet

import (
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

// MemCheckpoints keeps checkpoints in memory (tests, discovery, demo).
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

// trendPosition is what a checkpoint holds: the sequence number of the last
// record delivered.
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
}

// Backfill reads every record of trend log tl on d that follows the log's
// checkpoint, passing them to deliver in pages, and moves the checkpoint
// after each page deliver accepted. Records are never delivered twice and
// never skipped silently: records the device overwrote before they were
// read are counted in TrendResult.Lost. Without a checkpoint the whole
// buffer is read.
func (r *TrendReader) Backfill(ctx context.Context, d *Device, tl uint32, deliver func([]TrendRecord) error) (TrendResult, error) {
	res := TrendResult{Device: d.Instance, Log: tl}
	obj := wire.ObjectID{Type: wire.ObjectTrendLog, Instance: tl}
	key := TrendKey(d.Instance, tl)
	loc := r.Location
	if loc == nil {
		loc = time.UTC
	}
	page := r.Page
	if page <= 0 {
		page = 100
	}
	// Record count and total record count (ASHRAE 135 clause 12.25.16/17).
	st := r.Client.ReadMany(ctx, d, []Read{
		{obj, wire.PropertyRef{Prop: wire.PropRecordCount, Index: wire.NoIndex}},
		{obj, wire.PropertyRef{Prop: wire.PropTotalRecordCount, Index: wire.NoIndex}},
	})
	for _, s := range st {
		if s.Err != nil {
			return res, fmt.Errorf("device %d trend-log %d: %w", d.Instance, tl, s.Err)
		}
		if len(s.Values) != 1 || s.Values[0].Tag != wire.TagUnsigned {
			return res, fmt.Errorf("device %d trend-log %d: record counts are not Unsigned", d.Instance, tl)
		}
	}
	count, total := uint32(st[0].Values[0].U), uint32(st[1].Values[0].U)
	if count == 0 {
		return res, nil
	}
	newest := total
	oldest := total - count + 1 // modulo 2^32, like the device's counter
	next := oldest
	raw, ok, err := r.Checkpoints.Get(key)
	if err != nil {
		return res, fmt.Errorf("%s: checkpoint: %w", key, err)
	}
	if ok {
		pos, err := decodePosition(raw)
		if err != nil {
			return res, fmt.Errorf("%s: %w", key, err)
		}
		next = pos.Seq + 1
		switch {
		case int32(next-(newest+1)) > 0:
			// Checkpoint ahead of the newest record: numbering restarted.
			res.Reset, next = true, oldest
		case int32(oldest-next) > 0:
			res.Lost += uint64(oldest - next) // overwritten while we were away
			next = oldest
		}
	}
	for int32(newest-next) >= 0 {
		ack, err := r.Client.ReadRange(ctx, d, wire.ReadRangeRequest{Object: obj,
			PropertyRef: wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex},
			Kind:        wire.RangeBySequence, Ref: next, Count: page})
		if err != nil {
			return res, err
		}
		if ack.ItemCount == 0 {
			if !ack.Flags.More {
				// The records from next on are gone (overwritten between the count read and now).
				break
			}
			return res, fmt.Errorf("device %d trend-log %d: empty answer with more-items set", d.Instance, tl)
		}
		first := next
		if ack.HasFirstSeq {
			first = ack.FirstSeq
		}
		if int32(first-next) > 0 {
			res.Lost += uint64(first - next) // wrapped past us between reads
		} else if first != next {
			return res, fmt.Errorf("device %d trend-log %d: asked from record %d, answer starts at %d", d.Instance, tl, next, first)
		}
		recs := make([]TrendRecord, 0, len(ack.Records))
		for i, l := range ack.Records {
			at, err := wire.ToTime(l.Date, l.Time, loc)
			if err != nil {
				return res, fmt.Errorf("device %d trend-log %d record %d: %w", d.Instance, tl, first+uint32(i), err)
			}
			recs = append(recs, TrendRecord{Seq: first + uint32(i), At: at, LogRecord: l})
		}
		if err := deliver(recs); err != nil {
			return res, err
		}
		last := first + uint32(len(recs)) - 1
		if err := r.Checkpoints.Put(key, trendPosition{Seq: last}.encode()); err != nil {
			return res, fmt.Errorf("%s: checkpoint: %w", key, err)
		}
		if res.Records == 0 {
			res.FirstSeq = first
		}
		res.Records += len(recs)
		res.LastSeq = last
		next = last + 1
		if !ack.Flags.More && ack.Flags.Last {
			break
		}
	}
	return res, nil
}
