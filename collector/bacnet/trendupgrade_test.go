package bacnet

import (
	"strconv"
	"testing"
	"time"

	"risewatch/collector"
)

// TestTrendCheckpointsUpgradeFromPerSweepPositions: a daemon of the
// version before trend-log checkpoints followed the watermark stored each
// log's position after every sweep, ahead of what its consumer had
// accepted. It is killed with its sweeps far ahead of the consumer; the
// controllers log on; the upgraded daemon starts on the same store (those
// positions, newer than its watermark allows, and the watermark) and runs
// to the end. Every step from the watermark on must reach the consumer
// exactly once with the values of an uninterrupted run: the old positions
// must not make it skip the records at or after watermark − lookback.
func TestTrendCheckpointsUpgradeFromPerSweepPositions(t *testing.T) {
	for _, batch := range []bool{true, false} {
		rg := newWMRig(t, 2000)
		rg.log(t, 300)
		w := &world{ck: map[string][]byte{}, batch: batch, legacy: true}
		if wmRun(t, rg, w, crashPlan{"accept", 120, 0}, 30) {
			t.Fatal("the old daemon's run finished before its planned crash")
		}
		// The store now holds the watermark of the last commit (minute 90)
		// and per-sweep positions of records the consumer never accepted.
		prog, err := collector.OpenProgress(w, "assembler", time.Hour)
		if err != nil {
			t.Fatal(err)
		}
		wm := prog.Watermark()
		raw, ok, _ := w.Get(TrendKey(70, 1))
		pos, err := decodePosition(raw)
		if !ok || err != nil {
			t.Fatalf("no position stored by the old daemon: %q %v", raw, err)
		}
		// Record k of the 1-min log is minute k−1: the position must be
		// past the first record the upgraded daemon needs (watermark less
		// the lookback), or the test shows nothing.
		need := uint32(wm.Add(-prog.Lookback()).Sub(wmStart)/time.Minute) + 1
		if pos.Seq < need {
			t.Fatalf("old position %d is not past record %d (watermark %s): the test needs the sweeps ahead of the consumer", pos.Seq, need, wm.Format(time.RFC3339))
		}
		rg.log(t, 100) // the controllers log on during the upgrade
		w.legacy = false
		if !wmRun(t, rg, w, crashPlan{}, 30) {
			t.Fatal("the upgraded daemon's run did not finish")
		}
		sameWMSteps(t, w.out, cleanWM(t, rg))
		// The upgraded daemon's commits replaced the old positions by tied ones.
		for _, l := range wmLogs {
			key := TrendKey(l.dev, l.tl)
			raw, _, _ := w.Get(key)
			cp, ok, _ := w.Get(tiedKey(key))
			if _, err := decodePosition(raw); err != nil || !ok || string(cp) != string(raw) {
				t.Errorf("device %d trend-log %d: position %q, tied copy %q (stored %v) after the upgraded run, want the same", l.dev, l.tl, raw, cp, ok)
			}
		}
	}
}

// TestTrendUntiedPositionResume: where a log read for a Progress resumes
// from each kind of stored position, on a 1-min log of 300 records
// (record k stamped minute k−1) with the watermark at minute 200 and the
// default lookback (readFrom minute 179): an untied position no later than
// the first record after readFrom − untiedMargin (minute 118), record 120.
func TestTrendUntiedPositionResume(t *testing.T) {
	rg := newWMRig(t, 2000)
	rg.log(t, 300)
	wm := wmStart.Add(200 * time.Minute)
	if wm.Add(-collector.DefaultMaxGap-collector.DefaultInterval-untiedMargin) != wmStart.Add(118*time.Minute) {
		t.Fatal("the cases below assume the default lookback and untiedMargin")
	}
	for _, tc := range []struct {
		name      string
		stored    string // device 70 trend-log 1's checkpoint ("" none)
		tied      string // its tied copy ("" none)
		watermark bool
		first     uint32 // the first record the sweep reads
	}{
		{"untied past readFrom", "seq 250", "", true, 120},
		{"untied within the margin", "seq 150", "", true, 120},
		{"untied before the margin", "seq 50", "", true, 51},
		{"untied at the margin", "seq 119", "", true, 120},
		{"untied, no watermark", "seq 250", "", false, 1},
		{"tied copy of another position", "seq 250", "seq 240", true, 120},
		{"tied", "seq 250", "seq 250", true, 251},
		{"none", "", "", true, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			w := &world{ck: map[string][]byte{}}
			if tc.stored != "" {
				w.ck[TrendKey(70, 1)] = []byte(tc.stored)
			}
			if tc.tied != "" {
				w.ck[tiedKey(TrendKey(70, 1))] = []byte(tc.tied)
			}
			if tc.watermark {
				w.ck["assembler"] = []byte(strconv.FormatInt(wm.UnixNano(), 10))
			}
			src := startProgressSource(t, rg, w)
			res, err := src.SweepTrends(ctxT(t), func([]collector.Reading) error { return nil })
			if err != nil {
				t.Fatal(err)
			}
			for _, r := range res {
				if r.Device == 70 && r.Log == 1 {
					if r.FirstSeq != tc.first || r.LastSeq != 300 || r.Records != int(300-tc.first+1) || r.Lost != 0 {
						t.Fatalf("sweep of device 70 trend-log 1: %+v, want records %d..300", r, tc.first)
					}
					return
				}
			}
			t.Fatal("device 70 trend-log 1 not swept")
		})
	}
}
