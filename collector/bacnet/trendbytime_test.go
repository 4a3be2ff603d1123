package bacnet

import (
	"cmp"
	"errors"
	"fmt"
	"slices"
	"strconv"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
)

// byTimeRig is a rig whose every log holds an untied position a few
// records before its newest (as a daemon before the watermark rule left
// it), and a stored watermark at minute wmMin.
type byTimeRig struct {
	*wmRig
	w        *world
	readFrom time.Time // the Progress's readFrom (watermark less lookback)
	ref      time.Time // the by-time reference untiedResume asks for
}

func newByTimeRig(t *testing.T, rg *wmRig, wmMin int) *byTimeRig {
	t.Helper()
	w := &world{ck: map[string][]byte{}}
	wm := wmStart.Add(time.Duration(wmMin) * time.Minute)
	w.ck["assembler"] = []byte(strconv.FormatInt(wm.UnixNano(), 10))
	prog, err := collector.OpenProgress(w, "assembler", time.Hour)
	if err != nil {
		t.Fatal(err)
	}
	if !prog.Watermark().Equal(wm) {
		t.Fatalf("watermark %s stored, %s read back", wm, prog.Watermark())
	}
	for _, l := range wmLogs {
		recs := deviceRecords(t, rg, l)
		w.ck[TrendKey(l.dev, l.tl)] = trendPosition{Seq: recs[len(recs)-6].Seq}.encode()
	}
	from := wm.Add(-prog.Lookback())
	return &byTimeRig{wmRig: rg, w: w, readFrom: from, ref: from.Add(-untiedMargin)}
}

func deviceRecords(t *testing.T, rg *wmRig, l wmLog) []bacnetdev.StoredRecord {
	t.Helper()
	recs, err := rg.devs[l.dev].TrendRecords(l.tl)
	if err != nil || len(recs) < 10 {
		t.Fatalf("device %d trend-log %d: %d records, %v", l.dev, l.tl, len(recs), err)
	}
	return recs
}

func (br *byTimeRig) misbehave(m bacnetdev.Misbehaviour) {
	for _, d := range br.devs {
		d.SetMisbehaviour(m)
	}
}

// sweep runs one trend sweep of a source following a Progress on the
// rig's store and returns each log's result and the readings delivered
// per point.
func (br *byTimeRig) sweep(t *testing.T) (map[string]TrendResult, map[string][]collector.Reading) {
	t.Helper()
	src := startProgressSource(t, br.wmRig, br.w)
	got := map[string][]collector.Reading{}
	res, err := src.SweepTrends(ctxT(t), func(rs []collector.Reading) error {
		for _, r := range rs {
			got[r.Point] = append(got[r.Point], r)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	byKey := map[string]TrendResult{}
	for _, r := range res {
		byKey[TrendKey(r.Device, r.Log)] = r
	}
	return byKey, got
}

// sameAsDevice checks that a log's sweep read the device's records from
// sequence number first to the newest, each once, none lost.
func sameAsDevice(t *testing.T, l wmLog, res TrendResult, got []collector.Reading, recs []bacnetdev.StoredRecord, first uint32) {
	t.Helper()
	newest := recs[len(recs)-1].Seq
	k := slices.IndexFunc(recs, func(r bacnetdev.StoredRecord) bool { return r.Seq == first })
	if k < 0 {
		t.Fatalf("%s: record %d is not in the device's buffer %d..%d", l.name, first, recs[0].Seq, newest)
	}
	want := recs[k:]
	if res.FirstSeq != first || res.LastSeq != newest || res.Records != len(want) || res.Lost != 0 {
		t.Fatalf("%s: sweep %+v, want records %d..%d (%d), none lost", l.name, res, first, newest, len(want))
	}
	// A batch is sorted by time: on a log whose clock stepped back the
	// readings of one point are not in sequence order.
	byAt := func(a, b collector.Reading) int {
		return cmp.Or(a.At.Compare(b.At), cmp.Compare(a.Value, b.Value))
	}
	exp := make([]collector.Reading, len(want))
	for i, r := range want {
		exp[i] = collector.Reading{Point: l.name, At: r.At, Value: r.Value}
	}
	got = slices.Clone(got)
	slices.SortFunc(got, byAt)
	slices.SortFunc(exp, byAt)
	if len(got) != len(exp) {
		t.Fatalf("%s: %d readings delivered for %d records", l.name, len(got), len(exp))
	}
	for i := range exp {
		if !got[i].At.Equal(exp[i].At) || got[i].Value != exp[i].Value {
			t.Fatalf("%s: reading %d is %s %v, the device's record %s %v", l.name, i,
				got[i].At.Format(time.RFC3339), got[i].Value, exp[i].At.Format(time.RFC3339), exp[i].Value)
		}
	}
}

// firstAfter is the sequence number of the first record in sequence
// stamped after ref (ok false when none is).
func firstAfter(recs []bacnetdev.StoredRecord, ref time.Time) (uint32, bool) {
	for _, r := range recs {
		if r.At.After(ref) {
			return r.Seq, true
		}
	}
	return 0, false
}

// byTime asks device 70's trend-log 1 directly for the first record
// stamped after the reference (ReadRange by time, count 1).
func (br *byTimeRig) byTime(t *testing.T) (wire.ReadRangeACK, error) {
	t.Helper()
	c := newClient(t, Options{Timeout: time.Second, Retries: 1})
	d := c.AddDevice(70, Address{IP: br.srv.Addr()})
	rd, rt := wire.DateTimeOf(br.ref)
	return c.ReadRange(ctxT(t), d, wire.ReadRangeRequest{Object: wire.ObjectID{Type: wire.ObjectTrendLog, Instance: 1},
		PropertyRef: wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex},
		Kind:        wire.RangeByTime, RefDate: rd, RefTime: rt, Count: 1})
}

// TestTrendUntiedByTimeRefused: a device that refuses ReadRange by time
// (Reject, Error) or answers it without a first sequence number cannot
// say where an untied position may resume: every log is read from its
// oldest record, all the device holds, none lost. The device that answers
// (the control) moves each log back to its first record after the
// reference, no further.
func TestTrendUntiedByTimeRefused(t *testing.T) {
	for _, tc := range []struct {
		name   string
		m      bacnetdev.Misbehaviour
		answer func(wire.ReadRangeACK, error) bool // the by-time answer is the misbehaviour's
		oldest bool
	}{
		{"answers", bacnetdev.Misbehaviour{}, func(a wire.ReadRangeACK, err error) bool { return err == nil && a.HasFirstSeq }, false},
		{"reject", bacnetdev.Misbehaviour{RejectReadRangeByTime: true}, func(_ wire.ReadRangeACK, err error) bool {
			var r *RejectError
			return errors.As(err, &r) && r.Reason == wire.RejectInvalidTag
		}, true},
		{"error", bacnetdev.Misbehaviour{ErrorReadRangeByTime: true}, func(_ wire.ReadRangeACK, err error) bool {
			var s *ServiceError
			return errors.As(err, &s) && s.Class == wire.ErrClassServices && s.Code == wire.ErrCodeOptionalNotSupported
		}, true},
		{"no first sequence number", bacnetdev.Misbehaviour{OmitFirstSeqByTime: true}, func(a wire.ReadRangeACK, err error) bool {
			return err == nil && a.ItemCount == 1 && !a.HasFirstSeq
		}, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rg := newWMRig(t, 2000)
			rg.log(t, 300)
			br := newByTimeRig(t, rg, 200)
			br.misbehave(tc.m)
			if ack, err := br.byTime(t); !tc.answer(ack, err) {
				t.Fatalf("by-time answer %+v, %v: not what the misbehaviour gives", ack, err)
			}
			res, got := br.sweep(t)
			for _, l := range wmLogs {
				recs := deviceRecords(t, rg, l)
				first := recs[0].Seq
				if !tc.oldest {
					var ok bool
					if first, ok = firstAfter(recs, br.ref); !ok || first == recs[0].Seq {
						t.Fatalf("%s: first record after the reference %d: the case shows nothing", l.name, first)
					}
				}
				sameAsDevice(t, l, res[TrendKey(l.dev, l.tl)], got[l.name], recs, first)
			}
		})
	}
}

// TestTrendUpgradeWithByTimeRefused is the upgrade from per-sweep
// positions (TestTrendCheckpointsUpgradeFromPerSweepPositions) onto
// controllers that refuse ReadRange by time: the upgraded daemon reads
// every log from its oldest record and the consumer still gets every
// step from the watermark on once, with the values of an uninterrupted
// run (the assembler drops the steps before the watermark).
func TestTrendUpgradeWithByTimeRefused(t *testing.T) {
	for _, m := range []bacnetdev.Misbehaviour{{RejectReadRangeByTime: true}, {OmitFirstSeqByTime: true}} {
		rg := newWMRig(t, 2000)
		rg.log(t, 300)
		w := &world{ck: map[string][]byte{}, legacy: true}
		if wmRun(t, rg, w, crashPlan{"accept", 120, 0}, 30) {
			t.Fatal("the old daemon's run finished before its planned crash")
		}
		rg.log(t, 100)
		for _, d := range rg.devs {
			d.SetMisbehaviour(m)
		}
		before := rg.srv.Stats.Requests.Load()
		w.legacy = false
		if !wmRun(t, rg, w, crashPlan{}, 30) {
			t.Fatal("the upgraded daemon's run did not finish")
		}
		if m.RejectReadRangeByTime && rg.srv.Stats.Rejected.Load() < uint64(len(wmLogs)) {
			t.Fatalf("%d requests rejected: the upgraded run did not ask by time", rg.srv.Stats.Rejected.Load())
		}
		if rg.srv.Stats.Requests.Load() == before {
			t.Fatal("the upgraded run sent no request")
		}
		for _, d := range rg.devs {
			d.SetMisbehaviour(bacnetdev.Misbehaviour{})
		}
		sameWMSteps(t, w.out, cleanWM(t, rg))
	}
}

// TestTrendUntiedClockSteppedBack: the controllers' clock steps back
// three hours after 400 minutes of logging (records later in sequence
// stamped earlier) and they bisect their buffers to answer ReadRange by
// time, so the record they name for the reference follows records
// stamped after it, some of them at or after readFrom. Resuming there
// would skip those; every log must be read from a point before every
// record stamped after the reference. With no step (the control) the
// device's answer is checked and kept.
func TestTrendUntiedClockSteppedBack(t *testing.T) {
	for _, tc := range []struct {
		name string
		step time.Duration
	}{
		{"clock stepped back 3 h", 3 * time.Hour},
		{"no step", 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rg := newWMRig(t, 2000)
			rg.log(t, 400)
			m := bacnetdev.Misbehaviour{ByTimeBisect: true, ClockOffset: -tc.step}
			for _, d := range rg.devs {
				d.SetMisbehaviour(m)
			}
			rg.log(t, 200) // stamped minutes 400..599 less the step
			// readFrom minute 379, the reference 318: with the step the
			// records of minutes 319..399 precede those of minutes
			// 220..419 in sequence.
			br := newByTimeRig(t, rg, 400)
			recs := deviceRecords(t, rg, wmLogs[0])
			exact, ok := firstAfter(recs, br.ref)
			if !ok {
				t.Fatal("no record after the reference")
			}
			ack, err := br.byTime(t)
			if err != nil || !ack.HasFirstSeq {
				t.Fatalf("by-time answer %+v, %v", ack, err)
			}
			if tc.step > 0 {
				// The device's answer comes after records stamped at or
				// after readFrom: resuming there loses them.
				if !slices.ContainsFunc(recs, func(r bacnetdev.StoredRecord) bool {
					return int32(r.Seq-ack.FirstSeq) < 0 && !r.At.Before(br.readFrom)
				}) {
					t.Fatalf("by-time answer %d (first after the reference %d): no record before it at or after readFrom; the case shows nothing", ack.FirstSeq, exact)
				}
			} else if ack.FirstSeq != exact {
				t.Fatalf("by-time answer %d on an ascending log, want %d", ack.FirstSeq, exact)
			}
			res, got := br.sweep(t)
			for li, l := range wmLogs {
				recs := deviceRecords(t, rg, l)
				exact, ok := firstAfter(recs, br.ref)
				if !ok {
					t.Fatalf("%s: no record after the reference", l.name)
				}
				r := res[TrendKey(l.dev, l.tl)]
				if int32(r.FirstSeq-exact) > 0 {
					t.Fatalf("%s: sweep from record %d skips records %d..%d, the first stamped after the reference is %d", l.name, r.FirstSeq, exact, r.FirstSeq-1, exact)
				}
				// The device's answer, checked and kept, or the oldest record
				// when the check found the step (always on the 1-min log,
				// whose answer was seen to skip above).
				switch {
				case tc.step == 0 && r.FirstSeq != exact:
					t.Fatalf("%s: sweep from record %d on an ascending log, want the device's answer %d", l.name, r.FirstSeq, exact)
				case tc.step > 0 && r.FirstSeq != recs[0].Seq && (r.FirstSeq != exact || li == 0):
					t.Fatalf("%s: sweep from record %d, want the oldest %d", l.name, r.FirstSeq, recs[0].Seq)
				}
				sameAsDevice(t, l, r, got[l.name], recs, r.FirstSeq)
			}
		})
	}
}

// TestTrendUntiedStepBackOverPages: the check of a by-time answer reads
// back as far as it must, page by page. A device without segmentation
// (answers of about 20 records) logs every 20 s; its clock steps back
// 100 min (less than untiedStepBack), and the record it names by
// bisection lies about 90 records after the step: the records between
// the two, all stamped at or before the reference, fill several pages
// before the check reaches the step's earlier records, stamped after it.
// The log must be read from its oldest record. Without the step the
// check stops two hours before the reference and the answer is kept.
// Both hold for an untied position after the device's answer (the answer
// is checked) and between the step and the answer (the position is).
func TestTrendUntiedStepBackOverPages(t *testing.T) {
	t0 := time.Date(2025, 10, 6, 0, 0, 0, 0, time.UTC)
	at := func(k int) time.Time { return t0.Add(time.Duration(k) * 20 * time.Second) } // record k+1 before the step
	readFrom := t0.Add(490 * time.Minute)
	ref := readFrom.Add(-untiedMargin)
	for _, tc := range []struct {
		step   time.Duration
		stored uint32 // the untied position: after the device's answer, or between the step and it
	}{{100 * time.Minute, 2090}, {100 * time.Minute, 1550}, {0, 2090}, {0, 1550}} {
		step := tc.step
		t.Run(fmt.Sprintf("step back %s from seq %d", step, tc.stored), func(t *testing.T) {
			s, d := newSim(t, bacnetdev.DeviceConfig{Instance: 80, MaxAPDU: 480, Segmentation: wire.NoSegmentation,
				Misbehaviour: bacnetdev.Misbehaviour{ByTimeBisect: true}}, 1)
			d.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Logged: ai(1), BufferSize: 3000})
			for k := 0; k < 2100; k++ {
				if k == 1500 { // minute 500
					d.SetMisbehaviour(bacnetdev.Misbehaviour{ByTimeBisect: true, ClockOffset: -step})
				}
				if err := d.Record(1, at(k), float64(k), [4]bool{}); err != nil {
					t.Fatal(err)
				}
			}
			recs, err := d.TrendRecords(1)
			if err != nil || len(recs) != 2100 {
				t.Fatalf("%d records, %v", len(recs), err)
			}
			exact, _ := firstAfter(recs, ref)
			c := newClient(t, Options{Timeout: time.Second, Retries: 1})
			dev := c.AddDevice(80, Address{IP: s.Addr()})
			ck := &MemCheckpoints{}
			if err := ck.Put(TrendKey(80, 1), trendPosition{Seq: tc.stored}.encode()); err != nil {
				t.Fatal(err)
			}
			tr := &TrendReader{Client: c, Checkpoints: ck, Page: 100,
				known:    func(string) (uint32, bool) { return 0, false },
				readFrom: func() (time.Time, bool) { return readFrom, true }}
			var got []TrendRecord
			res, err := tr.Backfill(ctxT(t), dev, 1, func(rs []TrendRecord) error { got = append(got, rs...); return nil })
			if err != nil {
				t.Fatal(err)
			}
			if step == 0 {
				if res.FirstSeq != exact || int(exact) < 6*60*3 {
					t.Fatalf("ascending log: read from record %d, want the device's answer %d", res.FirstSeq, exact)
				}
			} else {
				// The device's answer (bisected: the record after the
				// reference past the step, some pages of records after it)
				// follows records stamped at or after readFrom.
				rd, rt := wire.DateTimeOf(ref)
				ack, err := c.ReadRange(ctxT(t), dev, wire.ReadRangeRequest{Object: wire.ObjectID{Type: wire.ObjectTrendLog, Instance: 1},
					PropertyRef: wire.PropertyRef{Prop: wire.PropLogBuffer, Index: wire.NoIndex},
					Kind:        wire.RangeByTime, RefDate: rd, RefTime: rt, Count: 1})
				answer := ack.FirstSeq
				if err != nil || !ack.HasFirstSeq || answer-1500 < 3*20 || recs[1499].At.Before(readFrom) || tc.stored < 1500 {
					t.Fatalf("by-time answer %+v, %v: the case shows nothing", ack, err)
				}
				if res.FirstSeq != recs[0].Seq {
					t.Fatalf("log stepped back: read from record %d (the device names %d), want the oldest %d", res.FirstSeq, answer, recs[0].Seq)
				}
			}
			if res.Lost != 0 || res.LastSeq != 2100 || len(got) != int(2100-res.FirstSeq+1) {
				t.Fatalf("backfill %+v, %d records delivered", res, len(got))
			}
			for i, r := range got {
				want := recs[int(res.FirstSeq)-1+i]
				if r.Seq != want.Seq || !r.At.Equal(want.At) || r.Value != want.Value {
					t.Fatalf("record %d: %d %s %v, the device's %d %s %v", i, r.Seq, r.At, r.Value, want.Seq, want.At, want.Value)
				}
			}
		})
	}
}
