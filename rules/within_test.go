package rules

import (
	"encoding/json"
	"strings"
	"testing"
	"time"

	"risewatch/fdd"
)

// withinRule is a hunting-like rule whose hour is summed over a 3 h window
// (bins of 7.5 min); runRule is the same rule with a plain run.
const withinRule = `
rules:
  - id: x-intermittent
    kind: hunting
    severity: 4
    gates: [usable, fan_on]
    when: {field: reversals_per_hour, op: ">=", value: 30, clear: 15}
    for: 60m
    within: 3h
    clear_for: 30m
`

// wphase is a run of minutes: the reversal rate, and whether the fan is
// off (the rule's gates fail).
type wphase struct {
	minutes int
	rev     float64
	fanOff  bool
}

// runWithin steps terminal 0 through phases, one record a minute, and
// returns the minutes at which the fault opened and the next minute. The
// first from minutes of phases are skipped (an evaluator that already
// stepped them).
func runWithin(t *testing.T, e *Evaluator, phases []wphase, from int) (opened []int, next int) {
	t.Helper()
	i, skip := from, from
	var trs []Transition
	for _, p := range phases {
		for m := 0; m < p.minutes; m++ {
			if skip > 0 {
				skip--
				continue
			}
			ev := quiet(0, minute(i))
			ev.ReversalsPerHour = p.rev
			if p.fanOff {
				ev.FanOn = false
				ev.Gates |= fdd.GateFanOff
			}
			trs = e.Step([]fdd.Evidence{ev}, nil, trs[:0])
			for _, tr := range trs {
				if tr.To == StateOpen && tr.From == StatePending {
					opened = append(opened, i)
				}
			}
			i++
		}
	}
	return opened, i
}

func withinEval(t *testing.T, y string) *Evaluator {
	t.Helper()
	rs, err := BuildFrom(mustParse(t, y))
	if err != nil {
		t.Fatal(err)
	}
	e, err := NewEvaluator(testSite(1, 1), rs)
	if err != nil {
		t.Fatal(err)
	}
	return e
}

func TestWithinSumsIntermittentRuns(t *testing.T) {
	runRule := strings.Replace(withinRule, "    within: 3h\n", "", 1)
	cases := []struct {
		name   string
		phases []wphase
		within []int // minutes the within rule opens at
		run    []int // minutes the plain-run rule opens at
	}{
		// Two 40-min runs 20 min apart: 39 min held in the first (its
		// first record starts the credit), 21 more in the second.
		{"two runs sum to the hour", []wphase{{40, 40, false}, {20, 5, false}, {40, 40, false}}, []int{81}, nil},
		// A gated stretch inside a run counts as in a run (5 min ≤ the
		// default gap), as it does for a plain run.
		{"short gated gap", []wphase{{30, 40, false}, {5, 40, true}, {40, 40, false}}, []int{60}, []int{60}},
		// The first run has left the 3 h window when the second ends.
		{"held time expires", []wphase{{40, 40, false}, {200, 5, false}, {40, 40, false}}, nil, nil},
		{"one long run", []wphase{{90, 40, false}}, []int{60}, []int{60}},
		// 20 min between the runs below the threshold but above its clear
		// value: still false for opening.
		{"runs too short", []wphase{{25, 40, false}, {30, 20, false}, {25, 40, false}, {200, 0, false}}, nil, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, _ := runWithin(t, withinEval(t, withinRule), c.phases, 0)
			if !equalInts(got, c.within) {
				t.Errorf("within 3h: opened at %v, want %v", got, c.within)
			}
			got, _ = runWithin(t, withinEval(t, runRule), c.phases, 0)
			if !equalInts(got, c.run) {
				t.Errorf("plain run: opened at %v, want %v", got, c.run)
			}
		})
	}
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestWithinPendingAndIdle checks the tracker stays pending (Pending lists
// it, since the first true record) while the window holds time, goes idle
// once it has emptied, and that the opened fault's since is the first
// true record of the accumulation.
func TestWithinPendingAndIdle(t *testing.T) {
	e := withinEval(t, withinRule)
	_, i := runWithin(t, e, []wphase{{40, 40, false}, {60, 5, false}}, 0)
	if p := e.Pending(); !p["VAV-1-01/hunting"].Equal(minute(0)) {
		t.Fatalf("after 40 min true and 60 false: pending %v, want since %v", p, minute(0))
	}
	if len(e.held) != 1 {
		t.Fatalf("%d held windows, want 1", len(e.held))
	}
	_, _ = runWithin(t, e, []wphase{{i + 200, 5, false}}, i)
	if p := e.Pending(); len(p) != 0 || len(e.held) != 0 {
		t.Fatalf("after the window emptied: pending %v, %d held windows; want none", p, len(e.held))
	}

	e = withinEval(t, withinRule)
	var trs []Transition
	for i := 0; i < 100; i++ {
		ev := quiet(0, minute(i))
		if i < 40 || i >= 60 {
			ev.ReversalsPerHour = 40
		}
		trs = e.Step([]fdd.Evidence{ev}, nil, trs)
	}
	if len(trs) != 1 || trs[0].To != StateOpen || !trs[0].Since.Equal(minute(0)) || !trs[0].At.Equal(minute(81)) {
		t.Fatalf("transitions %+v, want one open at %v since %v", trs, minute(81), minute(0))
	}
}

// TestWithinSnapshotResumes checks the held time survives Export/Import:
// a restart between the runs opens at the same minute as an
// uninterrupted evaluator.
func TestWithinSnapshotResumes(t *testing.T) {
	phases := []wphase{{40, 40, false}, {20, 5, false}, {40, 40, false}}
	want, _ := runWithin(t, withinEval(t, withinRule), phases, 0)

	e := withinEval(t, withinRule)
	_, i := runWithin(t, e, phases[:2], 0)
	snap := e.Export()
	b, err := json.Marshal(snap)
	if err != nil {
		t.Fatal(err)
	}
	var back Snapshot
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	if len(back.Trackers) != 1 || len(back.Trackers[0].Held) == 0 {
		t.Fatalf("snapshot trackers %+v: want one with held time", back.Trackers)
	}
	var sec float64
	for _, h := range back.Trackers[0].Held {
		sec += h.Sec
	}
	if sec != 39*60 {
		t.Fatalf("snapshot holds %g s, want %d", sec, 39*60)
	}
	e2 := withinEval(t, withinRule)
	if _, err := e2.Import(back); err != nil {
		t.Fatal(err)
	}
	got, _ := runWithin(t, e2, phases, i)
	if !equalInts(got, want) || len(want) != 1 {
		t.Fatalf("resumed evaluator opened at %v, uninterrupted at %v", got, want)
	}
}

func TestWithinValidation(t *testing.T) {
	for _, c := range []struct{ within, for_, want string }{
		{"2h", "", "needs a positive 'for'"},
		{"30m", "1h", "shorter than for"},
		{"10m", "5m", "want at least 24m"},
		{"-1h", "1h", `site-rules.yaml: line 9: duration "-1h"`}, // the parser refuses it
	} {
		y := strings.Replace(withinRule, "    within: 3h\n", "    within: "+c.within+"\n", 1)
		if c.for_ == "" {
			y = strings.Replace(y, "    for: 60m\n", "", 1)
		} else {
			y = strings.Replace(y, "    for: 60m\n", "    for: "+c.for_+"\n", 1)
		}
		f, err := Parse([]byte(y), "site-rules.yaml")
		if err == nil {
			_, err = BuildFrom(f)
		}
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), "x-intermittent") && !strings.HasPrefix(c.within, "-") {
			t.Errorf("within %s for %q: error %v, want one naming the rule and %q", c.within, c.for_, err, c.want)
		}
	}
}

// TestWithinOverride checks a site override can set and lift within on a
// built-in rule.
func TestWithinOverride(t *testing.T) {
	rs, err := Build(mustParse(t, "overrides:\n  - id: control-hunting\n    within: 12h\n    for: 3h\n"))
	if err != nil {
		t.Fatal(err)
	}
	r, ok := rs.Rule("control-hunting")
	if !ok || time.Duration(r.Within) != 12*time.Hour || time.Duration(r.For) != 3*time.Hour {
		t.Fatalf("control-hunting after override: within %v for %v", time.Duration(r.Within), time.Duration(r.For))
	}
	def, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	if r, _ := def.Rule("control-hunting"); time.Duration(r.Within) != 24*time.Hour {
		t.Fatalf("built-in control-hunting within %v, want 24h", time.Duration(r.Within))
	}
}
