package bacnetdev

import (
	"slices"
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
)

// TestTrendRingWraps: a 5-record buffer after 12 records holds records
// 8..12 (oldest overwritten, ASHRAE 135 clause 12.25: stop-when-full false),
// answers by sequence number and by time from the ring, and cuts answers to
// the octet budget with more-items set.
func TestTrendRingWraps(t *testing.T) {
	d, t0 := oneLog(t, 5, 12, nil, func(i int) [4]bool { return [4]bool{false, i == 9, false, false} })
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
	d, t0 := oneLog(t, 20, 12, func(d *Device, i int) {
		if i == 7 {
			d.SetMisbehaviour(Misbehaviour{ClockOffset: -4 * time.Minute})
		}
	}, nil)
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

// TestBySeqFaults: each by-sequence misbehaviour, on records 1..20 (value
// = sequence number), changes answers to ReadRange by sequence number as
// its doc says, forward (from record 5, count 4) and backward (to record
// 10, count −4), and leaves by-time answers alone. BySeqBackwardOnly keeps
// forward reads right.
func TestBySeqFaults(t *testing.T) {
	d, t0 := oneLog(t, 50, 20, nil, nil)
	tl := wire.ObjectID{Type: wire.ObjectTrendLog, Instance: 1}
	prop := wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex}
	read := func(q wire.ReadRangeRequest) wire.ReadRangeACK {
		t.Helper()
		q.Object, q.PropertyRef = tl, prop
		ack, perr := d.readRange(q, 1000)
		if perr != nil {
			t.Fatal(perr)
		}
		return ack
	}
	// answer is what an answer should hold: its first sequence number,
	// the values (= the true sequence numbers) of its records, its flags.
	type answer struct {
		first      uint32
		values     []float64
		more, last bool
	}
	check := func(what string, m Misbehaviour, a wire.ReadRangeACK, w answer) {
		t.Helper()
		var vals []float64
		for _, r := range a.Records {
			vals = append(vals, r.Value)
		}
		if !a.HasFirstSeq || a.FirstSeq != w.first || a.ItemCount != uint32(len(w.values)) ||
			!slices.Equal(vals, w.values) || a.Flags.More != w.more || a.Flags.Last != w.last {
			t.Errorf("%+v, %s: first %d (%v) count %d values %v more %v last %v; want first %d values %v more %v last %v",
				m, what, a.FirstSeq, a.HasFirstSeq, a.ItemCount, vals, a.Flags.More, a.Flags.Last, w.first, w.values, w.more, w.last)
		}
	}
	for _, tc := range []struct {
		m        Misbehaviour
		fwd, bwd answer
	}{
		{Misbehaviour{}, answer{5, []float64{5, 6, 7, 8}, false, false}, answer{7, []float64{7, 8, 9, 10}, false, false}},
		{Misbehaviour{BySeqShift: 2}, answer{7, []float64{7, 8, 9, 10}, false, false}, answer{9, []float64{9, 10, 11, 12}, false, false}},
		{Misbehaviour{BySeqShift: -3}, answer{2, []float64{2, 3, 4, 5}, false, false}, answer{4, []float64{4, 5, 6, 7}, false, false}},
		{Misbehaviour{BySeqSkip: 8}, answer{5, []float64{5, 6, 7}, false, false}, answer{7, []float64{7, 9, 10}, false, false}},
		{Misbehaviour{BySeqSkip: 5}, answer{6, []float64{6, 7, 8}, false, false}, answer{7, []float64{7, 8, 9, 10}, false, false}},
		{Misbehaviour{BySeqFirstSeqOffset: 1}, answer{6, []float64{5, 6, 7, 8}, false, false}, answer{8, []float64{7, 8, 9, 10}, false, false}},
		{Misbehaviour{BySeqShift: 2, BySeqFirstSeqOffset: -2}, answer{5, []float64{7, 8, 9, 10}, false, false}, answer{7, []float64{9, 10, 11, 12}, false, false}},
		{Misbehaviour{BySeqShift: 2, BySeqBackwardOnly: true}, answer{5, []float64{5, 6, 7, 8}, false, false}, answer{9, []float64{9, 10, 11, 12}, false, false}},
		{Misbehaviour{BySeqSkip: 8, BySeqBackwardOnly: true}, answer{5, []float64{5, 6, 7, 8}, false, false}, answer{7, []float64{7, 9, 10}, false, false}},
		{Misbehaviour{BySeqFirstSeqOffset: 1, BySeqBackwardOnly: true}, answer{5, []float64{5, 6, 7, 8}, false, false}, answer{8, []float64{7, 8, 9, 10}, false, false}},
	} {
		d.SetMisbehaviour(tc.m)
		check("forward from 5", tc.m, read(wire.ReadRangeRequest{Kind: wire.RangeBySequence, Ref: 5, Count: 4}), tc.fwd)
		check("backward to 10", tc.m, read(wire.ReadRangeRequest{Kind: wire.RangeBySequence, Ref: 10, Count: -4}), tc.bwd)
		rd, rt := wire.DateTimeOf(t0.Add(4*time.Minute + time.Second))
		check("by time after minute 4", tc.m, read(wire.ReadRangeRequest{Kind: wire.RangeByTime, RefDate: rd, RefTime: rt, Count: 2}),
			answer{5, []float64{5, 6}, false, false})
	}
	// A shift past the buffer's end is clipped to it; a skip at the end
	// leaves the newest record out, so the answer is not the last.
	d.SetMisbehaviour(Misbehaviour{BySeqShift: 5})
	check("forward from 19, shifted past the end", d.misbehaviour(), read(wire.ReadRangeRequest{Kind: wire.RangeBySequence, Ref: 19, Count: 4}),
		answer{20, []float64{20}, false, true})
	d.SetMisbehaviour(Misbehaviour{BySeqSkip: 20})
	check("forward from 18, newest skipped", d.misbehaviour(), read(wire.ReadRangeRequest{Kind: wire.RangeBySequence, Ref: 18, Count: 4}),
		answer{18, []float64{18, 19}, false, false})
	// A skip inside an answer cut to the octet budget still sets more-items
	// and keeps the oldest records sent.
	one := len(wire.AppendLogRecord(nil, read(wire.ReadRangeRequest{Kind: wire.RangeBySequence, Ref: 1, Count: 1}).Records[0]))
	d.SetMisbehaviour(Misbehaviour{BySeqSkip: 6})
	ack, perr := d.readRange(wire.ReadRangeRequest{Object: tl, PropertyRef: prop, Kind: wire.RangeBySequence, Ref: 4, Count: 10}, 3*one)
	if perr != nil {
		t.Fatal(perr)
	}
	check("forward from 4, budget of 3 records", d.misbehaviour(), ack, answer{4, []float64{4, 5, 7}, true, false})
}

// oneLog is a device with analog input 1 logged by trend log 1 (buffer
// size records), holding records 1..n stamped t0 + i min with value i;
// before record i, each(i) may change the device (nil: nothing) and
// flags(i) gives its status flags (nil: none).
func oneLog(t *testing.T, size, n int, each func(d *Device, i int), flags func(i int) [4]bool) (*Device, time.Time) {
	t.Helper()
	d := newDevice(DeviceConfig{Instance: 1})
	ai := wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 1}
	d.AddObject(Object{ID: ai})
	d.AddTrendLog(TrendLogConfig{Instance: 1, Logged: ai, BufferSize: size})
	t0 := time.Date(2025, 1, 14, 0, 0, 0, 0, time.UTC)
	for i := 1; i <= n; i++ {
		if each != nil {
			each(d, i)
		}
		var f [4]bool
		if flags != nil {
			f = flags(i)
		}
		if err := d.Record(1, t0.Add(time.Duration(i)*time.Minute), float64(i), f); err != nil {
			t.Fatal(err)
		}
	}
	return d, t0
}
