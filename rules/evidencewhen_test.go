package rules

import (
	"strings"
	"testing"

	"risewatch/fdd"
)

// shownRule is a fouled-coil-like rule on the UA factor (a slow number that
// holds at every command) whose fault shows a record with the valve open.
const shownRule = `
rules:
  - id: x-ua
    kind: fouled-coil
    severity: 4
    gates: [usable, fan_on]
    when: {field: ua_factor, op: "<=", value: 0.75, clear: 0.85}
    for: 30m
    evidence_when: {field: valve, op: ">=", value: 0.6}
    clear_for: 30m
`

// stepUA steps terminal 0 one record a minute from minute from with the
// UA factor at ua and the valve command from valve(minute), the observed
// rise standing for the minute (it names the record shown), returning the
// transitions.
func stepUA(e *Evaluator, from, n int, ua float64, valve func(int) float64) []Transition {
	var all, trs []Transition
	for m := from; m < from+n; m++ {
		ev := quiet(0, minute(m))
		ev.UAFactor, ev.ValveFrac, ev.ObservedRiseK = ua, valve(m), float64(m)
		trs = e.Step([]fdd.Evidence{ev}, nil, trs[:0])
		all = append(all, trs...)
	}
	return all
}

// TestEvidenceWhenPicksTheTellingRecord: a fault of a rule with
// evidence_when opens showing the latest record of its pending run with the
// valve open, though the valve is shut when it opens; while it holds, it
// keeps to records with the valve open; without evidence_when it shows
// whatever record came last.
func TestEvidenceWhenPicksTheTellingRecord(t *testing.T) {
	// The valve is at 80 % in minutes 10-14 of each hour, else shut.
	valve := func(m int) float64 {
		if m%60 >= 10 && m%60 < 15 {
			return 0.8
		}
		return 0
	}
	for _, c := range []struct{ with, within bool }{{true, false}, {false, false}, {true, true}} {
		with, y := c.with, shownRule
		if !with {
			y = strings.Replace(y, "    evidence_when: {field: valve, op: \">=\", value: 0.6}\n", "", 1)
		}
		if c.within { // the held-time path (pendWithin) keeps the record too
			y = strings.Replace(y, "    for: 30m\n", "    for: 30m\n    within: 2h\n", 1)
		}
		e := withinEval(t, y)
		trs := stepUA(e, 0, 40, 0.6, valve) // opens at minute 30, the valve shut
		var open *Transition
		for i := range trs {
			if trs[i].To == StateOpen {
				open = &trs[i]
			}
		}
		if open == nil {
			t.Fatalf("with=%v: no fault opened", with)
		}
		if !c.within && !open.At.Equal(minute(30)) {
			t.Errorf("with=%v: opened at %v, want minute 30", with, open.At)
		}
		want, wantMin := 0.0, 30.0
		if with {
			want, wantMin = 0.8, 14 // minute 14's record
		}
		if open.Evidence.ValveFrac != want || open.Evidence.ObservedRiseK != wantMin {
			t.Errorf("with=%v: opening transition shows valve %v of minute %v; want valve %v of minute %v", with, open.Evidence.ValveFrac, open.Evidence.ObservedRiseK, want, wantMin)
		}
		// Held through minute 75: the last valve-open record is minute 74.
		stepUA(e, 40, 36, 0.6, valve)
		o := e.Open()
		if len(o) != 1 {
			t.Fatalf("with=%v: %d open faults", with, len(o))
		}
		want, wantMin = 0, 75
		if with {
			want, wantMin = 0.8, 74
		}
		if o[0].Evidence.ValveFrac != want || o[0].Evidence.ObservedRiseK != wantMin {
			t.Errorf("with=%v: held fault shows valve %v of minute %v, want %v of minute %v", with, o[0].Evidence.ValveFrac, o[0].Evidence.ObservedRiseK, want, wantMin)
		}
	}
}

// TestEvidenceWhenNeverSeen: with no record meeting evidence_when the fault
// shows its latest condition record, and the first one that meets it
// takes over.
func TestEvidenceWhenNeverSeen(t *testing.T) {
	e := withinEval(t, shownRule)
	shut := func(int) float64 { return 0 }
	stepUA(e, 0, 40, 0.6, shut)
	o := e.Open()
	if len(o) != 1 || o[0].Evidence.ValveFrac != 0 {
		t.Fatalf("open faults %v, want one showing the shut valve", o)
	}
	stepUA(e, 40, 1, 0.6, func(int) float64 { return 0.9 })
	stepUA(e, 41, 10, 0.6, shut)
	if o = e.Open(); len(o) != 1 || o[0].Evidence.ValveFrac != 0.9 || o[0].Evidence.ObservedRiseK != 40 {
		t.Errorf("open faults %v, want one showing minute 40's 90 %% record", o)
	}
}

// TestEvidenceWhenValidation: evidence_when is a condition over the
// terminal evidence, not allowed on loop rules, and a bad field is named.
func TestEvidenceWhenValidation(t *testing.T) {
	bad := strings.Replace(shownRule, "field: valve, op", "field: valve_oops, op", 1)
	if _, err := BuildFrom(mustParse(t, bad)); err == nil || !strings.Contains(err.Error(), "evidence_when") || !strings.Contains(err.Error(), "valve_oops") {
		t.Errorf("unknown field: %v", err)
	}
	loop := `
rules:
  - id: x-loop
    kind: cold-loop
    scope: loop
    severity: 2
    when: {field: short_fraction, op: ">=", value: 0.5}
    for: 30m
    evidence_when: {field: short_fraction, op: ">=", value: 0.6}
`
	if _, err := BuildFrom(mustParse(t, loop)); err == nil || !strings.Contains(err.Error(), "evidence_when: only for terminal rules") {
		t.Errorf("loop rule: %v", err)
	}
}
