package bacnet

import (
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
)

func TestTrendBackfillNoGapNoDuplicate(t *testing.T) {
	s, dev := newSim(t, bacnetdev.DeviceConfig{Instance: 30, MaxAPDU: 480}, 1)
	dev.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Logged: ai(1), BufferSize: 50})
	t0 := time.Date(2025, 1, 6, 8, 0, 0, 0, time.UTC)
	n := 0
	add := func(k int) {
		for i := 0; i < k; i++ {
			if err := dev.Record(1, t0.Add(time.Duration(n)*time.Minute), float64(n), [4]bool{}); err != nil {
				t.Fatal(err)
			}
			n++
		}
	}
	c := newClient(t, Options{})
	d := discoverOne(t, c, s.Addr(), 30)
	cp := &MemCheckpoints{}
	var got []TrendRecord
	sweep := func() TrendResult {
		// A fresh reader each sweep: only the checkpoint carries state, as after a restart.
		r := &TrendReader{Client: c, Checkpoints: cp, Page: 7}
		res, err := r.Backfill(ctxT(t), d, 1, func(rs []TrendRecord) error { got = append(got, rs...); return nil })
		if err != nil {
			t.Fatal(err)
		}
		return res
	}
	add(30)
	if res := sweep(); res.Records != 30 || res.Lost != 0 {
		t.Fatalf("first sweep: %+v", res)
	}
	add(10)
	if res := sweep(); res.Records != 10 || res.Lost != 0 || res.FirstSeq != 31 {
		t.Fatalf("second sweep: %+v", res)
	}
	if res := sweep(); res.Records != 0 {
		t.Fatalf("idle sweep delivered %d records", res.Records)
	}
	// Outage: the device is silent while 80 records are logged into a 50-record buffer.
	dev.SetMisbehaviour(bacnetdev.Misbehaviour{Silent: true})
	add(80)
	r := &TrendReader{Client: c, Checkpoints: cp}
	if _, err := r.Backfill(ctxT(t), d, 1, func([]TrendRecord) error { return nil }); err == nil {
		t.Fatal("backfill from a silent device succeeded")
	}
	dev.SetMisbehaviour(bacnetdev.Misbehaviour{})
	res := sweep()
	if res.Records != 50 || res.Lost != 30 {
		t.Fatalf("after outage: %+v; want 50 records and 30 lost (buffer of 50 wrapped)", res)
	}
	// Every record delivered once, in order; the only hole is the counted one.
	if len(got) != 90 {
		t.Fatalf("%d records delivered, want 90", len(got))
	}
	for i := 1; i < len(got); i++ {
		step := got[i].Seq - got[i-1].Seq
		want := uint32(1)
		if got[i-1].Seq == 40 {
			want = 31 // records 41..70 were overwritten during the outage
		}
		if step != want {
			t.Fatalf("record %d seq %d follows %d", i, got[i].Seq, got[i-1].Seq)
		}
		if got[i].Value != float64(got[i].Seq-1) || !got[i].At.Equal(t0.Add(time.Duration(got[i].Seq-1)*time.Minute)) {
			t.Fatalf("record seq %d: value %v at %v", got[i].Seq, got[i].Value, got[i].At)
		}
	}
}

func TestTrendBackfillSegmented(t *testing.T) {
	s, dev := newSim(t, bacnetdev.DeviceConfig{Instance: 31, MaxAPDU: 206, Segmentation: wire.SegmentedBoth}, 1)
	dev.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 2, Logged: ai(1), BufferSize: 500})
	t0 := time.Date(2025, 1, 6, 0, 0, 0, 0, time.UTC)
	for i := 0; i < 300; i++ {
		_ = dev.Record(2, t0.Add(time.Duration(i)*time.Minute), float64(i)/10, [4]bool{false, i%50 == 0, false, false})
	}
	c := newClient(t, Options{Timeout: time.Second})
	d := discoverOne(t, c, s.Addr(), 31)
	r := &TrendReader{Client: c, Checkpoints: &MemCheckpoints{}, Page: 200}
	var got []TrendRecord
	res, err := r.Backfill(ctxT(t), d, 2, func(rs []TrendRecord) error { got = append(got, rs...); return nil })
	if err != nil || res.Records != 300 || len(got) != 300 {
		t.Fatalf("%+v %v", res, err)
	}
	if s.Stats.SegmentsSent.Load() == 0 {
		t.Error("no segmented answers on a 206-octet device reading 200 records per page")
	}
	for _, g := range got {
		if g.Flags.Bit(wire.StatusFault) != ((g.Seq-1)%50 == 0) {
			t.Fatalf("record %d: fault flag %v", g.Seq, g.Flags.Bit(wire.StatusFault))
		}
	}
}
