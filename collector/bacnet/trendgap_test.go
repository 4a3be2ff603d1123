package bacnet

import (
	"fmt"
	"strings"
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
)

// The tests below run the trend reader against a device whose answers to
// ReadRange by sequence number are wrong in the ways the simulator's
// BySeq* misbehaviours make them: shifted from the record asked for, with
// a record left out, or with a first sequence number that disagrees with
// the records. Whatever the fault, no record may be accepted under a
// sequence number other than the device's, twice, or out of order, and no
// checkpoint may pass a record not read: the reader either stops the log
// with an error naming the device and the log, or falls back to reading
// more than it needs.

// gapLog starts a device with one trend log (instance 1) holding records
// 1..n stamped by at (value = sequence number) and a client that knows it.
func gapLog(t *testing.T, instance uint32, n int, at func(seq uint32) time.Time, m bacnetdev.Misbehaviour) (*bacnetdev.Device, *Client, *Device) {
	t.Helper()
	s, dev := newSim(t, bacnetdev.DeviceConfig{Instance: instance}, 1)
	dev.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Logged: ai(1), BufferSize: 1000})
	for seq := uint32(1); seq <= uint32(n); seq++ {
		if err := dev.Record(1, at(seq), float64(seq), [4]bool{}); err != nil {
			t.Fatal(err)
		}
	}
	dev.SetMisbehaviour(m)
	c := newClient(t, Options{Timeout: time.Second, Retries: 1})
	return dev, c, c.AddDevice(instance, Address{IP: s.Addr()})
}

// sameRecords checks that got is the device's records from..to (to <
// from: none), each once, in sequence order, under its own sequence
// number, stamp and value.
func sameRecords(t *testing.T, what string, got []TrendRecord, dev *bacnetdev.Device, from, to uint32) {
	t.Helper()
	recs, err := dev.TrendRecords(1)
	if err != nil {
		t.Fatal(err)
	}
	bySeq := map[uint32]bacnetdev.StoredRecord{}
	for _, r := range recs {
		bySeq[r.Seq] = r
	}
	want := 0
	if to >= from {
		want = int(to - from + 1)
	}
	if len(got) != want {
		t.Fatalf("%s: %d records delivered, want records %d..%d (%d)", what, len(got), from, to, want)
	}
	for i, g := range got {
		w, ok := bySeq[from+uint32(i)]
		if !ok || g.Seq != w.Seq || !g.At.Equal(w.At) || g.Value != w.Value {
			t.Fatalf("%s: record %d delivered as seq %d %s value %v; the device's record %d is %s value %v",
				what, i, g.Seq, g.At.Format(time.RFC3339), g.Value, w.Seq, w.At.Format(time.RFC3339), w.Value)
		}
	}
}

// storedSeq is the position a checkpoint store holds for device/log 1.
func storedSeq(t *testing.T, ck Checkpoints, device uint32) uint32 {
	t.Helper()
	raw, ok, err := ck.Get(TrendKey(device, 1))
	if err != nil || !ok {
		t.Fatalf("no checkpoint for device %d trend-log 1: %v", device, err)
	}
	pos, err := decodePosition(raw)
	if err != nil {
		t.Fatal(err)
	}
	return pos.Seq
}

// TestTrendForwardBySeqFaults: a backfill from a checkpoint (page of 10
// records, 60 in the log) against each by-sequence fault. The reader must
// stop the log with an error naming the device and the log at the first
// faulty answer, having delivered only the device's records before it,
// with the checkpoint at the last of them and nothing counted lost (the
// records are still in the device, not overwritten). With the fault gone
// the next backfill reads the rest: every record once.
//
// A device that names the record asked for but sends later ones is only
// caught on the log's last page (the short answer ends before the newest
// record): the case starts one page from the end. On earlier pages such an
// answer cannot be told from a right one.
func TestTrendForwardBySeqFaults(t *testing.T) {
	t0 := time.Date(2025, 3, 3, 0, 0, 0, 0, time.UTC)
	at := func(seq uint32) time.Time { return t0.Add(time.Duration(seq) * time.Minute) }
	for i, tc := range []struct {
		name      string
		m         bacnetdev.Misbehaviour
		stored    uint32 // checkpoint before the backfill: the last record read
		delivered uint32 // the last record the faulty backfill delivers
		msg       string // the error's text after "device D trend-log 1: " ("" none)
	}{
		{"no fault", bacnetdev.Misbehaviour{}, 20, 60, ""},
		{"answer shifted later", bacnetdev.Misbehaviour{BySeqShift: 3}, 20, 20,
			"asked from record 21, answer starts at 24, yet the log holds records from 1"},
		{"answer shifted earlier", bacnetdev.Misbehaviour{BySeqShift: -3}, 20, 20,
			"asked from record 21, answer starts at 18"},
		{"first sequence number too high", bacnetdev.Misbehaviour{BySeqFirstSeqOffset: 2}, 20, 20,
			"asked from record 21, answer starts at 23, yet the log holds records from 1"},
		{"first sequence number too low", bacnetdev.Misbehaviour{BySeqFirstSeqOffset: -2}, 20, 20,
			"asked from record 21, answer starts at 19"},
		{"record left out inside a page", bacnetdev.Misbehaviour{BySeqSkip: 35}, 20, 30,
			"answer of records 31..39 without more-items ends before record 60"},
		{"record asked for left out", bacnetdev.Misbehaviour{BySeqSkip: 21}, 20, 20,
			"answer of records 22..30 without more-items ends before record 60"},
		{"answer names the record asked for, holds later ones", bacnetdev.Misbehaviour{BySeqShift: 3, BySeqFirstSeqOffset: -3}, 52, 52,
			"answer of records 53..57 without more-items ends before record 60"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			instance := uint32(90 + i)
			dev, c, d := gapLog(t, instance, 60, at, tc.m)
			ck := &MemCheckpoints{}
			if err := ck.Put(TrendKey(instance, 1), trendPosition{Seq: tc.stored}.encode()); err != nil {
				t.Fatal(err)
			}
			var got []TrendRecord
			tr := &TrendReader{Client: c, Checkpoints: ck, Page: 10}
			res, err := tr.Backfill(ctxT(t), d, 1, func(rs []TrendRecord) error { got = append(got, rs...); return nil })
			if res.Lost != 0 || res.Reset || res.Records != len(got) {
				t.Fatalf("faulty backfill %+v, %d records delivered, none lost", res, len(got))
			}
			sameRecords(t, "faulty backfill", got, dev, tc.stored+1, tc.delivered)
			if want := fmt.Sprintf("device %d trend-log 1: %s", instance, tc.msg); tc.msg == "" && err != nil || tc.msg != "" && (err == nil || !strings.Contains(err.Error(), want)) {
				t.Fatalf("backfill error %v, want %q", err, want)
			}
			if s := storedSeq(t, ck, instance); s != tc.delivered {
				t.Fatalf("checkpoint at record %d after a backfill that delivered up to %d", s, tc.delivered)
			}
			dev.SetMisbehaviour(bacnetdev.Misbehaviour{})
			got = nil
			res, err = (&TrendReader{Client: c, Checkpoints: ck, Page: 10}).Backfill(ctxT(t), d, 1, func(rs []TrendRecord) error { got = append(got, rs...); return nil })
			if err != nil || res.Lost != 0 || res.Reset {
				t.Fatalf("backfill after the fault: %+v, %v", res, err)
			}
			sameRecords(t, "backfill after the fault", got, dev, tc.delivered+1, 60)
		})
	}
}

// TestTrendUntiedBySeqFaults: the check of a by-time resume point
// (untiedChecked) reads backward by sequence number, and must not trust
// an answer that does not end at the record asked for. The log (300
// records, page of 10) has an untied position after record 119 and a
// device that bisects its buffer for ReadRange by time, naming a record
// after 120. Records before the needle are stamped more than
// untiedStepBack before the reference; the needle, when there is one, is
// stamped after readFrom, and every other record from it to 119 between
// the two; from record 120 on the clock stepped back. Reading backward
// from 119 must meet the needle, so the log is read from its oldest record
// and the needle is delivered. Each fault (on backward reads only) would
// hide the needle from a check that took the answer as asked: the
// reference left out, the needle itself left out, the answer numbered one
// low (the next page then starts a record early). Without a needle the
// right device's answer is kept (resume at 120), a faulty device's is not.
func TestTrendUntiedBySeqFaults(t *testing.T) {
	t0 := time.Date(2025, 10, 6, 0, 0, 0, 0, time.UTC)
	readFrom := t0.Add(10 * time.Hour)
	ref := readFrom.Add(-untiedMargin)
	floor := ref.Add(-untiedStepBack)
	for i, tc := range []struct {
		name   string
		fault  bacnetdev.Misbehaviour // on backward reads by sequence number
		needle uint32                 // 0: none (the records before 110 are all stamped before floor)
		first  uint32                 // the first record read
	}{
		{"no fault, needle before the position", bacnetdev.Misbehaviour{}, 119, 1},
		{"no fault, needle a page before", bacnetdev.Misbehaviour{}, 109, 1},
		{"no fault, no needle", bacnetdev.Misbehaviour{}, 0, 120},
		{"reference left out", bacnetdev.Misbehaviour{BySeqShift: -1}, 119, 1},
		{"reference left out, no needle", bacnetdev.Misbehaviour{BySeqShift: -1}, 0, 1},
		{"needle left out", bacnetdev.Misbehaviour{BySeqSkip: 109}, 109, 1},
		{"first sequence number one low", bacnetdev.Misbehaviour{BySeqFirstSeqOffset: -1}, 109, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := tc.needle
			if p == 0 {
				p = 109
			}
			at := func(seq uint32) time.Time {
				switch {
				case seq == tc.needle:
					return readFrom.Add(5 * time.Minute)
				case seq <= p:
					return floor.Add(-3*time.Hour + time.Duration(seq)*time.Minute)
				case seq < 120:
					return ref.Add(-30*time.Minute + time.Duration(seq-p)*time.Minute)
				default:
					return ref.Add(-100*time.Minute + time.Duration(seq-120)*time.Minute)
				}
			}
			m := tc.fault
			m.ByTimeBisect = true
			m.BySeqBackwardOnly = true
			instance := uint32(100 + i)
			dev, c, d := gapLog(t, instance, 300, at, m)
			rd, rt := wire.DateTimeOf(ref)
			ack, err := c.ReadRange(ctxT(t), d, wire.ReadRangeRequest{Object: wire.ObjectID{Type: wire.ObjectTrendLog, Instance: 1},
				PropertyRef: wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex},
				Kind:        wire.RangeByTime, RefDate: rd, RefTime: rt, Count: 1})
			if err != nil || !ack.HasFirstSeq || ack.FirstSeq <= 120 {
				t.Fatalf("by-time answer %+v, %v: want one after record 120 (the position is checked, not the answer)", ack, err)
			}
			ck := &MemCheckpoints{}
			if err := ck.Put(TrendKey(instance, 1), trendPosition{Seq: 119}.encode()); err != nil {
				t.Fatal(err)
			}
			tr := &TrendReader{Client: c, Checkpoints: ck, Page: 10,
				known:    func(string) (uint32, bool) { return 0, false },
				readFrom: func() (time.Time, bool) { return readFrom, true }}
			var got []TrendRecord
			res, err := tr.Backfill(ctxT(t), d, 1, func(rs []TrendRecord) error { got = append(got, rs...); return nil })
			if err != nil || res.Lost != 0 || res.Reset {
				t.Fatalf("backfill %+v, %v", res, err)
			}
			if res.FirstSeq != tc.first {
				t.Fatalf("read from record %d, want %d (needle %d)", res.FirstSeq, tc.first, tc.needle)
			}
			sameRecords(t, "backfill", got, dev, tc.first, 300)
		})
	}
}
