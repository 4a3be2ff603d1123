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
