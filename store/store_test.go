package store

import (
	"context"
	"errors"
	"math"
	"reflect"
	"testing"
	"time"

	"risewatch/fdd"
	"risewatch/rules"
)

func openTest(t *testing.T) *Store {
	t.Helper()
	st, err := Open(context.Background(), t.TempDir(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	return st
}

func TestPragmas(t *testing.T) {
	st := openTest(t)
	ctx := context.Background()
	var mode string
	var sync int
	if err := st.DB().QueryRowContext(ctx, "PRAGMA journal_mode").Scan(&mode); err != nil {
		t.Fatal(err)
	}
	if err := st.DB().QueryRowContext(ctx, "PRAGMA synchronous").Scan(&sync); err != nil {
		t.Fatal(err)
	}
	// SQLite docs: PRAGMA synchronous returns 2 for FULL.
	if mode != "wal" || sync != 2 {
		t.Fatalf("journal_mode=%s synchronous=%d, want wal and 2 (FULL)", mode, sync)
	}
	if err := st.IntegrityCheck(ctx); err != nil {
		t.Fatal(err)
	}
}

func sampleTransition(at time.Time) rules.Transition {
	// Invented example values; only their round trip is checked.
	return rules.Transition{
		FaultID: "VAV-2-07/leaking-valve", Entity: "VAV-2-07", EntityKind: rules.EntityTerminal,
		Kind: fdd.KindLeakingValve, Rule: "leak-closed-rise", From: rules.StatePending, To: rules.StateOpen,
		At: at, Since: at.Add(-45 * time.Minute), Severity: 2, Confidence: 0.91,
		Evidence: rules.Evidence{ObservedRiseK: 4.2, ExpectedRiseK: 0, SigmaK: 0.6, ValveFrac: 0,
			AirflowM3s: 0.12, UAFactor: math.NaN(), FlowFactor: math.Inf(1), LeakRiseK: 4.2, LeakFlowFrac: 0.03,
			Extra: map[string]float64{"closed_min": 240, "nan_extra": math.NaN()}},
		Impact:  rules.Impact{WastedHeatW: 610, AddedCoolingW: 610, WeeklyHeatKWh: 30, WeeklyCost: 12.5},
		Message: "rise 4.2 K with valve closed", Causes: []string{"seat worn"}, Checks: []string{"close valve manually"},
		AHU: "AHU-2", Loop: "HW-1",
	}
}

// equalNaN compares with NaN == NaN.
func equalNaN(a, b rules.Transition) bool {
	fix := func(tr *rules.Transition) {
		if math.IsNaN(tr.Evidence.UAFactor) {
			tr.Evidence.UAFactor = -12345
		}
		if v, ok := tr.Evidence.Extra["nan_extra"]; ok && math.IsNaN(v) {
			tr.Evidence.Extra["nan_extra"] = -12345
		}
	}
	a.Evidence.Extra = cloneMap(a.Evidence.Extra)
	b.Evidence.Extra = cloneMap(b.Evidence.Extra)
	fix(&a)
	fix(&b)
	return reflect.DeepEqual(a, b)
}

func cloneMap(m map[string]float64) map[string]float64 {
	out := map[string]float64{}
	for k, v := range m {
		out[k] = v
	}
	return out
}

func TestTransitionHistory(t *testing.T) {
	st := openTest(t)
	ctx := context.Background()
	t0 := time.Date(2025, 1, 14, 6, 0, 0, 0, time.UTC)
	tr := sampleTransition(t0)
	if err := st.RecordTransition(ctx, tr); err != nil {
		t.Fatal(err)
	}
	if err := st.RecordTransition(ctx, tr); err != nil { // replay: no duplicate
		t.Fatal(err)
	}
	other := sampleTransition(t0.Add(time.Hour))
	other.FaultID, other.Entity, other.Kind = "VAV-3-01/fouled-coil", "VAV-3-01", fdd.KindFouledCoil
	other.Impact.WeeklyCost = 1
	if err := st.RecordTransition(ctx, other); err != nil {
		t.Fatal(err)
	}
	all, err := st.History(ctx, HistoryQuery{})
	if err != nil {
		t.Fatal(err)
	}
	if len(all) != 2 {
		t.Fatalf("history has %d transitions, want 2", len(all))
	}
	if !equalNaN(all[0], tr) {
		t.Fatalf("round trip changed the transition:\n got %+v\nwant %+v", all[0], tr)
	}
	cases := []struct {
		name string
		q    HistoryQuery
		want int
	}{
		{"kind", HistoryQuery{Kind: fdd.KindFouledCoil}, 1},
		{"range", HistoryQuery{From: t0, To: t0.Add(time.Minute)}, 1},
		{"range-empty", HistoryQuery{From: t0.Add(2 * time.Hour)}, 0},
		{"cost", HistoryQuery{MinWeeklyCost: 10}, 1},
		{"fault", HistoryQuery{FaultID: "VAV-3-01/fouled-coil"}, 1},
		{"limit", HistoryQuery{Limit: 1, Newest: true}, 1},
	}
	for _, c := range cases {
		got, err := st.History(ctx, c.q)
		if err != nil {
			t.Fatal(err)
		}
		if len(got) != c.want {
			t.Errorf("%s: %d transitions, want %d", c.name, len(got), c.want)
		}
	}
	newest, _ := st.History(ctx, HistoryQuery{Limit: 1, Newest: true})
	if newest[0].FaultID != other.FaultID {
		t.Errorf("newest first returned %s", newest[0].FaultID)
	}
	if err := st.RecordTransition(ctx, rules.Transition{}); err == nil {
		t.Error("transition without ID accepted")
	}
}

func TestStateBlobs(t *testing.T) {
	st := openTest(t)
	ctx := context.Background()
	if _, ok, err := st.LoadState(ctx, "faults/VAV-1"); ok || err != nil {
		t.Fatalf("empty store: ok=%v err=%v", ok, err)
	}
	for _, v := range []string{"one", "two"} {
		if err := st.SaveState(ctx, "faults/VAV-1", []byte(v)); err != nil {
			t.Fatal(err)
		}
	}
	_ = st.SaveState(ctx, "faults/VAV-2", []byte("x"))
	_ = st.SaveState(ctx, "other", []byte("y"))
	b, ok, err := st.LoadState(ctx, "faults/VAV-1")
	if err != nil || !ok || string(b) != "two" {
		t.Fatalf("LoadState = %q %v %v, want two", b, ok, err)
	}
	m, err := st.States(ctx, "faults/")
	if err != nil || len(m) != 2 {
		t.Fatalf("States(faults/) = %v %v, want 2 entries", m, err)
	}
	if err := st.DeleteState(ctx, "faults/VAV-1"); err != nil {
		t.Fatal(err)
	}
	if _, ok, _ := st.LoadState(ctx, "faults/VAV-1"); ok {
		t.Fatal("deleted state still there")
	}
}

func TestAcknowledgementsAndSnoozes(t *testing.T) {
	st := openTest(t)
	ctx := context.Background()
	t0 := time.Date(2025, 1, 14, 8, 0, 0, 0, time.UTC)
	id := "VAV-2-07/leaking-valve"
	must := func(a Ack) {
		t.Helper()
		if err := st.Acknowledge(ctx, a); err != nil {
			t.Fatal(err)
		}
	}
	must(Ack{FaultID: id, Action: ActionAck, Who: "r.okafor", At: t0, Note: "work order 118"})
	must(Ack{FaultID: id, Action: ActionSnooze, Who: "r.okafor", At: t0.Add(time.Hour), Until: t0.Add(48 * time.Hour), Note: "parts on order"})
	until, err := st.SnoozedUntil(ctx, id, t0.Add(2*time.Hour))
	if err != nil || !until.Equal(t0.Add(48*time.Hour)) {
		t.Fatalf("SnoozedUntil = %v %v", until, err)
	}
	if u, _ := st.SnoozedUntil(ctx, id, t0.Add(30*time.Minute)); !u.IsZero() {
		t.Fatalf("snoozed before the snooze was made: %v", u)
	}
	if u, _ := st.SnoozedUntil(ctx, id, t0.Add(49*time.Hour)); !u.IsZero() {
		t.Fatalf("snoozed after it ended: %v", u)
	}
	must(Ack{FaultID: id, Action: ActionUnsnooze, Who: "m.lind", At: t0.Add(3 * time.Hour)})
	if u, _ := st.SnoozedUntil(ctx, id, t0.Add(4*time.Hour)); !u.IsZero() {
		t.Fatalf("still snoozed after unsnooze: %v", u)
	}
	active, err := st.ActiveSnoozes(ctx, t0.Add(2*time.Hour))
	if err != nil || len(active) != 1 {
		t.Fatalf("ActiveSnoozes = %v %v", active, err)
	}
	acks, _ := st.Acks(ctx, id)
	if len(acks) != 3 || acks[0].Note != "work order 118" || acks[0].Who != "r.okafor" {
		t.Fatalf("Acks = %+v", acks)
	}
	bad := []Ack{
		{FaultID: id, Action: ActionSnooze, Who: "x", At: t0, Until: t0},
		{FaultID: id, Action: "poke", Who: "x", At: t0},
		{FaultID: id, Action: ActionAck, At: t0},
		{Action: ActionAck, Who: "x", At: t0},
	}
	for _, a := range bad {
		if err := st.Acknowledge(ctx, a); err == nil {
			t.Errorf("accepted invalid %+v", a)
		}
	}
}

func TestTerminalBlobsAndCheckpoints(t *testing.T) {
	st := openTest(t)
	ctx := context.Background()
	if err := st.PutTerminalBlob(ctx, "VAV-1", BlobBaseline, []byte(`{"ua":1}`)); err != nil {
		t.Fatal(err)
	}
	_ = st.PutTerminalBlob(ctx, "VAV-1", BlobBaseline, []byte(`{"ua":0.9}`))
	_ = st.PutTerminalBlob(ctx, "VAV-2", BlobBaseline, []byte(`{"ua":1.1}`))
	_ = st.PutTerminalBlob(ctx, "VAV-1", BlobCalibration, []byte(`{"k":2}`))
	b, _, ok, err := st.TerminalBlob(ctx, "VAV-1", BlobBaseline)
	if err != nil || !ok || string(b) != `{"ua":0.9}` {
		t.Fatalf("TerminalBlob = %s %v %v", b, ok, err)
	}
	all, _ := st.TerminalBlobs(ctx, BlobBaseline)
	if len(all) != 2 {
		t.Fatalf("TerminalBlobs = %v", all)
	}
	_ = st.DeleteTerminalBlob(ctx, "VAV-1", BlobBaseline)
	if _, _, ok, _ := st.TerminalBlob(ctx, "VAV-1", BlobBaseline); ok {
		t.Fatal("deleted baseline still there")
	}

	cp := st.Checkpoints("bacnet:campus/")
	other := st.Checkpoints("trendfile:exports/")
	if _, ok, err := cp.Get("trend-log-7"); ok || err != nil {
		t.Fatalf("empty checkpoint: %v %v", ok, err)
	}
	if err := cp.Put("trend-log-7", []byte("1042")); err != nil {
		t.Fatal(err)
	}
	_ = cp.Put("trend-log-7", []byte("1043"))
	_ = other.Put("trend-log-7", []byte("other"))
	v, ok, err := cp.Get("trend-log-7")
	if err != nil || !ok || string(v) != "1043" {
		t.Fatalf("Get = %q %v %v", v, ok, err)
	}
	keys, _ := cp.Keys()
	if !reflect.DeepEqual(keys, []string{"trend-log-7"}) {
		t.Fatalf("Keys = %v", keys)
	}
	_ = cp.Delete("trend-log-7")
	if _, ok, _ := cp.Get("trend-log-7"); ok {
		t.Fatal("deleted checkpoint still there")
	}
	if v, _, _ := other.Get("trend-log-7"); string(v) != "other" {
		t.Fatal("namespaces are not separate")
	}
}

func TestUpdateRollsBack(t *testing.T) {
	st := openTest(t)
	ctx := context.Background()
	boom := errors.New("boom")
	err := st.Update(ctx, func(tx *Tx) error {
		if err := tx.SaveState(ctx, "k", []byte("v")); err != nil {
			return err
		}
		if err := tx.Enqueue(ctx, "mail-1", "email", []byte("m")); err != nil {
			return err
		}
		return boom
	})
	if !errors.Is(err, boom) {
		t.Fatalf("Update returned %v", err)
	}
	if _, ok, _ := st.LoadState(ctx, "k"); ok {
		t.Fatal("rolled-back state is visible")
	}
	if n, _, _ := st.Pending(ctx, ""); n != 0 {
		t.Fatal("rolled-back outbox item is visible")
	}
}
