package bacnetdev

import (
	"slices"
	"sort"

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
	n := l.count()
	oldest := l.total - uint32(n) + 1
	// faulty: the by-sequence misbehaviours apply to this request.
	faulty := q.Kind == wire.RangeBySequence && (!d.cfg.BySeqBackwardOnly || q.Count < 0)
	lo, hi := 0, -1 // inclusive index range, empty when hi < lo
	switch q.Kind {
	case wire.RangeAll:
		lo, hi = 0, n-1
	case wire.RangeByPosition:
		lo, hi = span(int64(q.Ref)-1, q.Count, n)
	case wire.RangeBySequence:
		off := q.Ref - oldest // modulo 2^32
		if n > 0 && off < uint32(n) {
			ref := int64(off)
			if faulty {
				ref = min(max(ref+int64(d.cfg.BySeqShift), 0), int64(n)-1)
			}
			lo, hi = span(ref, q.Count, n)
		}
	case wire.RangeByTime:
		refT, err := wire.ToTime(q.RefDate, q.RefTime, d.cfg.Location)
		if err != nil {
			return wire.ReadRangeACK{}, &wire.PropertyError{Class: wire.ErrClassServices, Code: 37} // value-out-of-range
		}
		ref := refT.UnixNano()
		switch {
		case d.cfg.ByTimeBisect && q.Count > 0:
			if i := sort.Search(n, func(i int) bool { return l.rec(i).at > ref }); i < n {
				lo, hi = span(int64(i), q.Count, n)
			}
		case d.cfg.ByTimeBisect:
			if i := sort.Search(n, func(i int) bool { return l.rec(i).at >= ref }) - 1; i >= 0 {
				lo, hi = span(int64(i), q.Count, n)
			}
		case q.Count > 0:
			for i := 0; i < n; i++ {
				if l.rec(i).at > ref {
					lo, hi = span(int64(i), q.Count, n)
					break
				}
			}
		default:
			for i := n - 1; i >= 0; i-- {
				if l.rec(i).at < ref {
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
	// Cut to fit: forward counts keep the oldest, backward counts the
	// newest. loK and hiK are the first and last index sent.
	var sel []wire.LogRecord
	var scratch []byte
	size, total := 0, hi-lo+1
	loK, hiK := n, -1
	for k := 0; k < total; k++ {
		i := lo + k
		if q.Count < 0 {
			i = hi - k
		}
		if faulty && d.cfg.BySeqSkip != 0 && oldest+uint32(i) == d.cfg.BySeqSkip {
			continue
		}
		r := l.record(i, d.cfg.Location)
		scratch = wire.AppendLogRecord(scratch[:0], r)
		if size += len(scratch); size > budget {
			ack.Flags.More = true
			break
		}
		sel = append(sel, r)
		loK, hiK = min(loK, i), max(hiK, i)
	}
	if len(sel) == 0 {
		return ack, nil
	}
	if q.Count < 0 {
		slices.Reverse(sel)
	}
	ack.Records = sel
	ack.ItemCount = uint32(len(ack.Records))
	ack.Flags.First, ack.Flags.Last = loK == 0, hiK == n-1
	if q.Kind == wire.RangeBySequence || q.Kind == wire.RangeByTime {
		ack.FirstSeq, ack.HasFirstSeq = oldest+uint32(loK), true
		if q.Kind == wire.RangeByTime && d.cfg.OmitFirstSeqByTime {
			ack.HasFirstSeq = false
		}
		if faulty {
			ack.FirstSeq += uint32(d.cfg.BySeqFirstSeqOffset) // modulo 2^32
		}
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
