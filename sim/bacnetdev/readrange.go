package bacnetdev

import (
	"risewatch/collector/bacnet/wire"
)

// readRange answers a ReadRange on a trend log's log-buffer, cutting the
// answer to budget octets and setting more-items when it does (ASHRAE 135
// clause 15.8; positions are 1-based from the oldest record, the newest
// record's sequence number is total-record-count).
func (d *Device) readRange(q wire.ReadRangeRequest, budget int) (wire.ReadRangeACK, *wire.PropertyError) {
	d.mu.Lock()
	defer d.mu.Unlock()
	if q.Object.Type != wire.ObjectTrendLog {
		if d.objects[q.Object] == nil {
			return wire.ReadRangeACK{}, errUnknownObject
		}
		return wire.ReadRangeACK{}, &wire.PropertyError{Class: wire.ErrClassServices, Code: wire.ErrCodeServiceRequestDenied}
	}
	l := d.logs[q.Object.Instance]
	if l == nil {
		return wire.ReadRangeACK{}, errUnknownObject
	}
	if q.Prop != wire.PropLogBuffer {
		return wire.ReadRangeACK{}, errUnknownProperty
	}
	n := len(l.records)
	oldest := l.total - uint32(n) + 1
	lo, hi := 0, -1 // inclusive index range, empty when hi < lo
	switch q.Kind {
	case wire.RangeAll:
		lo, hi = 0, n-1
	case wire.RangeByPosition:
		lo, hi = span(int64(q.Ref)-1, q.Count, n)
	case wire.RangeBySequence:
		off := q.Ref - oldest // modulo 2^32
		if n > 0 && off < uint32(n) {
			lo, hi = span(int64(off), q.Count, n)
		}
	case wire.RangeByTime:
		ref, err := wire.ToTime(q.RefDate, q.RefTime, d.cfg.Location)
		if err != nil {
			return wire.ReadRangeACK{}, &wire.PropertyError{Class: wire.ErrClassServices, Code: 37} // value-out-of-range
		}
		if q.Count > 0 {
			for i, r := range l.records {
				if at, _ := wire.ToTime(r.Date, r.Time, d.cfg.Location); at.After(ref) {
					lo, hi = span(int64(i), q.Count, n)
					break
				}
			}
		} else {
			for i := n - 1; i >= 0; i-- {
				if at, _ := wire.ToTime(l.records[i].Date, l.records[i].Time, d.cfg.Location); at.Before(ref) {
					lo, hi = span(int64(i), q.Count, n)
					break
				}
			}
		}
	}
	ack := wire.ReadRangeACK{Object: q.Object, PropertyRef: q.PropertyRef}
	if hi < lo {
		return ack, nil
	}
	sel := l.records[lo : hi+1]
	// Cut to fit: forward counts keep the oldest, backward counts the newest.
	size, keep := 0, 0
	for k := range sel {
		i := k
		if q.Count < 0 {
			i = len(sel) - 1 - k
		}
		size += len(wire.AppendLogRecord(nil, sel[i]))
		if size > budget {
			break
		}
		keep++
	}
	if keep < len(sel) {
		ack.Flags.More = true
		if q.Count < 0 {
			lo = hi - keep + 1
		} else {
			hi = lo + keep - 1
		}
		if keep == 0 {
			return ack, nil
		}
	}
	ack.Records = append([]wire.LogRecord(nil), l.records[lo:hi+1]...)
	ack.ItemCount = uint32(len(ack.Records))
	ack.Flags.First, ack.Flags.Last = lo == 0, hi == n-1
	if q.Kind == wire.RangeBySequence || q.Kind == wire.RangeByTime {
		ack.FirstSeq, ack.HasFirstSeq = oldest+uint32(lo), true
	}
	return ack, nil
}

// span turns a reference index and a signed count into an inclusive index
// range clipped to [0, n).
func span(ref int64, count int32, n int) (int, int) {
	var lo, hi int64
	if count > 0 {
		lo, hi = ref, ref+int64(count)-1
	} else {
		lo, hi = ref+int64(count)+1, ref
	}
	if ref < 0 || ref >= int64(n) {
		return 0, -1
	}
	lo, hi = max(lo, 0), min(hi, int64(n)-1)
	return int(lo), int(hi)
}
