package rules

import (
	"encoding/json"
	"testing"
	"time"

	"risewatch/fdd"
)

// The lifecycle tests drive the Guideline 36 leaking-valve rule (open:
// DAT − SAT > 3 K for 15 min; clear: ≤ 2.75 K for 15 min with the valve
// closed 15 min, ASHRAE Guideline 36-2021 §5.6.6 with the Modelica
// hysteresis) through a script of minutes.

const leakID = "VAV-1-01/leaking-valve"

// phase is a run of minutes with one evidence shape.
type phase struct {
	minutes int
	riseK   float64 // DAT − SAT with the valve closed
	fanOff  bool    // gated sample (fan off)
	nan     bool    // DAT unavailable (unknown)
}

type lifeStep struct {
	at    int // minute
	from  State
	to    State
	extra string // "ack", "suppress:<minutes>" applied before this minute's step
}

func script(phases []phase) []fdd.Evidence {
	var out []fdd.Evidence
	i, closed := 0, 0
	for _, p := range phases {
		for m := 0; m < p.minutes; m++ {
			e := quiet(0, minute(i))
			e.ClosedMinutes = float64(closed)
			closed++
			e.DATMinusSATK = p.riseK
			e.DischargeC = e.SupplyC + p.riseK
			if p.fanOff {
				e.FanOn = false
				e.Gates |= fdd.GateFanOff
			}
			if p.nan {
				e.DATMinusSATK = nan()
			}
			out = append(out, e)
			i++
		}
	}
	return out
}

func nan() float64 { var z float64; return z / z }

func TestLifecycle(t *testing.T) {
	cases := []struct {
		name   string
		phases []phase
		acts   map[int]string // minute → action before stepping it
		want   []lifeStep
	}{
		{name: "persistence opens at 15 min",
			phases: []phase{{30, 4, false, false}},
			want:   []lifeStep{{at: 15, from: StatePending, to: StateOpen}}},
		{name: "false sample resets persistence",
			phases: []phase{{10, 4, false, false}, {1, 1, false, false}, {20, 4, false, false}},
			want:   []lifeStep{{at: 26, from: StatePending, to: StateOpen}}},
		{name: "short gated gap holds persistence",
			phases: []phase{{8, 4, false, false}, {3, 4, true, false}, {10, 4, false, false}},
			want:   []lifeStep{{at: 15, from: StatePending, to: StateOpen}}},
		{name: "unknown samples hold persistence",
			phases: []phase{{8, 4, false, false}, {3, 0, false, true}, {10, 4, false, false}},
			want:   []lifeStep{{at: 15, from: StatePending, to: StateOpen}}},
		{name: "gap longer than max_gap resets",
			phases: []phase{{8, 4, false, false}, {12, 4, true, false}, {20, 4, false, false}},
			want:   []lifeStep{{at: 35, from: StatePending, to: StateOpen}}},
		{name: "hysteresis band holds, clear after clear_for",
			phases: []phase{{20, 4, false, false}, {60, 2.9, false, false}, {20, 2, false, false}},
			want:   []lifeStep{{at: 15, from: StatePending, to: StateOpen}, {at: 95, from: StateOpen, to: StateClear}}},
		{name: "fan off does not clear an open fault",
			phases: []phase{{20, 4, false, false}, {600, 0, true, false}, {10, 4, false, false}},
			want:   []lifeStep{{at: 15, from: StatePending, to: StateOpen}}},
		{name: "re-opens after clearing",
			phases: []phase{{20, 4, false, false}, {20, 1, false, false}, {20, 4, false, false}},
			want: []lifeStep{{at: 15, from: StatePending, to: StateOpen}, {at: 35, from: StateOpen, to: StateClear},
				{at: 55, from: StatePending, to: StateOpen}}},
		{name: "ack keeps it visible, clear from acked, re-open unacked",
			phases: []phase{{20, 4, false, false}, {20, 1, false, false}, {20, 4, false, false}},
			acts:   map[int]string{18: "ack"},
			want: []lifeStep{{at: 15, from: StatePending, to: StateOpen}, {at: 18, from: StateOpen, to: StateAcked, extra: "ack"},
				{at: 35, from: StateAcked, to: StateClear}, {at: 55, from: StatePending, to: StateOpen}}},
		{name: "suppressed before it opens, visible when the date passes",
			phases: []phase{{90, 4, false, false}},
			acts:   map[int]string{0: "suppress:60"},
			want: []lifeStep{{at: 15, from: StatePending, to: StateSuppressed},
				{at: 60, from: StateSuppressed, to: StateOpen}}},
		{name: "suppress an open fault, clears while suppressed",
			phases: []phase{{20, 4, false, false}, {40, 1, false, false}},
			acts:   map[int]string{16: "suppress:600"},
			want: []lifeStep{{at: 15, from: StatePending, to: StateOpen}, {at: 16, from: StateOpen, to: StateSuppressed, extra: "s"},
				{at: 35, from: StateSuppressed, to: StateClear}}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			e := mustEval(t, testSite(1, 1))
			var got []lifeStep
			for i, ev := range script(tc.phases) {
				switch a := tc.acts[i]; {
				case a == "ack":
					tr, err := e.Ack(leakID, "tech@example.invalid", minute(i))
					if err != nil {
						t.Fatal(err)
					}
					got = append(got, lifeStep{at: i, from: tr.From, to: tr.To, extra: "ack"})
				case len(a) > 9 && a[:9] == "suppress:":
					var m int
					for _, c := range a[9:] {
						m = m*10 + int(c-'0')
					}
					tr, err := e.Suppress(leakID, minute(m))
					if err != nil {
						t.Fatal(err)
					}
					if tr != nil {
						got = append(got, lifeStep{at: i, from: tr.From, to: tr.To, extra: "s"})
					}
				}
				for _, tr := range e.Step([]fdd.Evidence{ev}, nil, nil) {
					if tr.FaultID != leakID {
						t.Fatalf("unexpected fault %s", tr.FaultID)
					}
					got = append(got, lifeStep{at: int(tr.At.Sub(t0) / time.Minute), from: tr.From, to: tr.To})
				}
			}
			if len(got) != len(tc.want) {
				t.Fatalf("transitions %+v, want %+v", got, tc.want)
			}
			for i := range got {
				g, w := got[i], tc.want[i]
				if g.at != w.at || g.from != w.from || g.to != w.to {
					t.Errorf("transition %d: %+v, want %+v", i, g, w)
				}
			}
		})
	}
}

func TestAckStaysVisibleAndIsNotNotice(t *testing.T) {
	e := mustEval(t, testSite(1, 1))
	for _, ev := range script([]phase{{20, 4, false, false}}) {
		e.Step([]fdd.Evidence{ev}, nil, nil)
	}
	tr, err := e.Ack(leakID, "j.doe", minute(20))
	if err != nil || tr == nil || tr.IsNotice() {
		t.Fatalf("ack: %v %+v", err, tr)
	}
	if again, err := e.Ack(leakID, "j.doe", minute(21)); err != nil || again != nil {
		t.Errorf("second ack should be a no-op, got %+v %v", again, err)
	}
	open := e.Open()
	if len(open) != 1 || open[0].To != StateAcked || open[0].AckedBy != "j.doe" {
		t.Fatalf("Open() = %+v", open)
	}
	if _, err := e.Ack("VAV-1-01/hunting", "x", minute(1)); err == nil {
		t.Error("ack of a fault that is not raised should fail")
	}
	if _, err := e.Suppress("NOPE-1/leaking-valve", minute(1)); err == nil {
		t.Error("suppress of an unknown terminal should fail")
	}
	if _, err := e.Suppress("VAV-1-01/not-a-kind", minute(1)); err == nil {
		t.Error("suppress of an unknown kind should fail")
	}
}

// A restart resumes from the exported state: an open fault is not opened
// again, a pending timer keeps its start, acks survive.
func TestRestartResume(t *testing.T) {
	ev := script([]phase{{40, 4, false, false}, {30, 1, false, false}})
	roundTrip := func(t *testing.T, e *Evaluator) *Evaluator {
		t.Helper()
		data, err := json.Marshal(e.Export())
		if err != nil {
			t.Fatal(err)
		}
		var s Snapshot
		if err := json.Unmarshal(data, &s); err != nil {
			t.Fatal(err)
		}
		n := mustEval(t, testSite(1, 1))
		st, err := n.Import(s)
		if err != nil || len(st.Dropped) > 0 {
			t.Fatalf("import: %v %v", err, st.Dropped)
		}
		return n
	}
	t.Run("open fault stays open", func(t *testing.T) {
		e := mustEval(t, testSite(1, 1))
		for _, x := range ev[:20] {
			e.Step([]fdd.Evidence{x}, nil, nil)
		}
		if _, err := e.Ack(leakID, "night shift", minute(19)); err != nil {
			t.Fatal(err)
		}
		n := roundTrip(t, e)
		if open := n.Open(); len(open) != 1 || open[0].To != StateAcked || !open[0].OpenedAt.Equal(minute(15)) {
			t.Fatalf("after import Open() = %+v", open)
		}
		var trs []Transition
		for _, x := range ev[20:] {
			trs = n.Step([]fdd.Evidence{x}, nil, trs)
		}
		if len(trs) != 1 || trs[0].To != StateClear || trs[0].From != StateAcked || !trs[0].At.Equal(minute(55)) {
			t.Fatalf("after restart: %+v, want only the clear at minute 55", trs)
		}
	})
	t.Run("pending timer keeps its start", func(t *testing.T) {
		e := mustEval(t, testSite(1, 1))
		for _, x := range ev[:10] {
			e.Step([]fdd.Evidence{x}, nil, nil)
		}
		n := roundTrip(t, e)
		var trs []Transition
		for _, x := range ev[10:20] {
			trs = n.Step([]fdd.Evidence{x}, nil, trs)
		}
		if len(trs) != 1 || !trs[0].At.Equal(minute(15)) || !trs[0].Since.Equal(t0) {
			t.Fatalf("after restart: %+v, want open at minute 15 since minute 0", trs)
		}
	})
	t.Run("suppression survives", func(t *testing.T) {
		e := mustEval(t, testSite(1, 1))
		if _, err := e.Suppress(leakID, minute(30)); err != nil {
			t.Fatal(err)
		}
		n := roundTrip(t, e)
		var trs []Transition
		for _, x := range ev[:35] {
			trs = n.Step([]fdd.Evidence{x}, nil, trs)
		}
		if len(trs) != 2 || trs[0].To != StateSuppressed || trs[1].To != StateOpen || !trs[1].At.Equal(minute(30)) {
			t.Fatalf("got %+v", trs)
		}
	})
	t.Run("removed rule drops its fault", func(t *testing.T) {
		e := mustEval(t, testSite(1, 1))
		for _, x := range ev[:20] {
			e.Step([]fdd.Evidence{x}, nil, nil)
		}
		n := mustEval(t, testSite(1, 1), mustParse(t, "overrides:\n  - id: g36-valve-leak\n    disabled: true\n"))
		st, err := n.Import(e.Export())
		if err != nil || st.Faults != 0 || len(st.Dropped) == 0 {
			t.Fatalf("import: %+v %v", st, err)
		}
	})
}
