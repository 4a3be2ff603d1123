package bacnetdev

import (
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
)

// TestTrendRingWraps: a 5-record buffer after 12 records holds records
// 8..12 (oldest overwritten, ASHRAE 135 clause 12.25: stop-when-full false),
// answers by sequence number and by time from the ring, and cuts answers to
// the octet budget with more-items set.
func TestTrendRingWraps(t *testing.T) {
	d := newDevice(DeviceConfig{Instance: 1})
	ai := wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 1}
	d.AddObject(Object{ID: ai})
	d.AddTrendLog(TrendLogConfig{Instance: 1, Logged: ai, BufferSize: 5})
	t0 := time.Date(2025, 1, 14, 0, 0, 0, 0, time.UTC)
	for i := 1; i <= 12; i++ {
		if err := d.Record(1, t0.Add(time.Duration(i)*time.Minute), float64(i), [4]bool{false, i == 9, false, false}); err != nil {
			t.Fatal(err)
		}
	}
	tl := wire.ObjectID{Type: wire.ObjectTrendLog, Instance: 1}
	prop := wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex}
	ack, perr := d.readRange(wire.ReadRangeRequest{Object: tl, PropertyRef: prop, Kind: wire.RangeBySequence, Ref: 9, Count: 10}, 1000)
	if perr != nil || ack.ItemCount != 4 || ack.FirstSeq != 9 || !ack.Flags.Last || ack.Flags.First {
		t.Fatalf("by sequence from 9: %+v %v", ack, perr)
	}
	for k, r := range ack.Records {
		if r.Value != float64(9+k) || r.Flags.Bit(wire.StatusFault) != (k == 0) {
			t.Errorf("record %d: value %v fault %v", 9+k, r.Value, r.Flags.Bit(wire.StatusFault))
		}
	}
	if ack, _ := d.readRange(wire.ReadRangeRequest{Object: tl, PropertyRef: prop, Kind: wire.RangeBySequence, Ref: 7, Count: 3}, 1000); ack.ItemCount != 0 {
		t.Errorf("record 7 was overwritten, yet %d records came back", ack.ItemCount)
	}
	rd, rt := wire.DateTimeOf(t0.Add(10 * time.Minute))
	ack, _ = d.readRange(wire.ReadRangeRequest{Object: tl, PropertyRef: prop, Kind: wire.RangeByTime, RefDate: rd, RefTime: rt, Count: -2}, 1000)
	if ack.ItemCount != 2 || ack.Records[0].Value != 8 || ack.Records[1].Value != 9 {
		t.Errorf("two records before minute 10: %+v", ack.Records)
	}
	one := len(wire.AppendLogRecord(nil, ack.Records[0]))
	ack, _ = d.readRange(wire.ReadRangeRequest{Object: tl, PropertyRef: prop, Kind: wire.RangeAll}, 2*one+1)
	if ack.ItemCount != 2 || !ack.Flags.More || ack.Records[0].Value != 8 {
		t.Errorf("budget for two records: %+v", ack)
	}
}

// TestByTimeOnSteppedClock: ClockOffset lowered mid-log steps the log's
// stamps back (records 1..6 at minutes 1..6, 7..12 at minutes 3..8). A
// by-time search from the oldest record names the first in sequence
// stamped after the reference; ByTimeBisect names the one bisection finds,
// after records stamped later than the reference; OmitFirstSeqByTime
// leaves the first sequence number out of by-time answers only.
func TestByTimeOnSteppedClock(t *testing.T) {
	d := newDevice(DeviceConfig{Instance: 1})
	ai := wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 1}
	d.AddObject(Object{ID: ai})
	d.AddTrendLog(TrendLogConfig{Instance: 1, Logged: ai, BufferSize: 20})
	t0 := time.Date(2025, 1, 14, 0, 0, 0, 0, time.UTC)
	for i := 1; i <= 12; i++ {
		if i == 7 {
			d.SetMisbehaviour(Misbehaviour{ClockOffset: -4 * time.Minute})
		}
		if err := d.Record(1, t0.Add(time.Duration(i)*time.Minute), float64(i), [4]bool{}); err != nil {
			t.Fatal(err)
		}
	}
	recs, err := d.TrendRecords(1)
	if err != nil || len(recs) != 12 {
		t.Fatalf("%d records, %v", len(recs), err)
	}
	for k, r := range recs {
		m := k + 1
		if m >= 7 {
			m -= 4
		}
		if r.Seq != uint32(k+1) || !r.At.Equal(t0.Add(time.Duration(m)*time.Minute)) || r.Value != float64(k+1) {
			t.Fatalf("record %d: %+v, want minute %d", k+1, r, m)
		}
	}
	tl := wire.ObjectID{Type: wire.ObjectTrendLog, Instance: 1}
	prop := wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex}
	rd, rt := wire.DateTimeOf(t0.Add(4 * time.Minute))
	byTime := func(count int32) wire.ReadRangeACK {
		ack, perr := d.readRange(wire.ReadRangeRequest{Object: tl, PropertyRef: prop, Kind: wire.RangeByTime, RefDate: rd, RefTime: rt, Count: count}, 1000)
		if perr != nil {
			t.Fatal(perr)
		}
		return ack
	}
	for _, tc := range []struct {
		m          Misbehaviour
		after      uint32 // first record named for count 1
		before     uint32 // last record named for count −1
		hasFirstSq bool
	}{
		{Misbehaviour{}, 5, 7, true},                          // minute 5 (first in sequence); minute 3 (newest before)
		{Misbehaviour{ByTimeBisect: true}, 9, 7, true},        // bisection: minute 5 after the step (minutes 5, 6 before it)
		{Misbehaviour{OmitFirstSeqByTime: true}, 5, 7, false}, // same records, no first sequence number
		{Misbehaviour{ByTimeBisect: true, OmitFirstSeqByTime: true}, 9, 7, false},
	} {
		d.SetMisbehaviour(tc.m)
		a, b := byTime(1), byTime(-1)
		if a.ItemCount != 1 || b.ItemCount != 1 || a.HasFirstSeq != tc.hasFirstSq || b.HasFirstSeq != tc.hasFirstSq ||
			a.Records[0].Value != float64(tc.after) || b.Records[0].Value != float64(tc.before) ||
			(tc.hasFirstSq && (a.FirstSeq != tc.after || b.FirstSeq != tc.before)) {
			t.Errorf("%+v: by time +1 %+v, −1 %+v; want records %d and %d", tc.m, a, b, tc.after, tc.before)
		}
		if s, _ := d.readRange(wire.ReadRangeRequest{Object: tl, PropertyRef: prop, Kind: wire.RangeBySequence, Ref: 3, Count: 2}, 1000); !s.HasFirstSeq || s.FirstSeq != 3 {
			t.Errorf("%+v: by sequence %+v, want records from 3 with their first sequence number", tc.m, s)
		}
	}
}
