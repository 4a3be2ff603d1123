package rules

import (
	"strings"
	"testing"

	"risewatch/fdd"
)

func TestOverridesAndExceptions(t *testing.T) {
	y := `
overrides:
  - id: g36-valve-leak
    thresholds: {dat_above_sat: "4 K"}
    for: 20m
    severity: 2
    except: ["VAV-1-0[2-3]", "VAV-1-10"]
rules:
  - id: site-big-leak
    kind: leaking-valve
    title: Site rule
    severity: 1
    gates: [fan_on]
    when: {all: [{field: dat_minus_sat_k, op: ">", value: 9 F}]}
    for: 5m
    only: ["VAV-1-05"]
`
	f := mustParse(t, y)
	rs, err := Build(f)
	if err != nil {
		t.Fatal(err)
	}
	r, _ := rs.Rule("g36-valve-leak")
	if r.For.D().Minutes() != 20 || r.Severity != 2 {
		t.Fatalf("override not applied: %+v", r)
	}
	base, _ := Default()
	if br, _ := base.Rule("g36-valve-leak"); br.For.D().Minutes() != 15 {
		t.Fatal("override changed the built-in set")
	}
	e, err := NewEvaluator(testSite(1, 10), rs)
	if err != nil {
		t.Fatal(err)
	}
	var trs []Transition
	for i := 0; i < 40; i++ {
		ev := make([]fdd.Evidence, 10)
		for k := range ev {
			ev[k] = quiet(k, minute(i))
			ev[k].DATMinusSATK = 4.5 // above 4 K, below 9 °F = 5 K
			if k == 4 {
				ev[k].DATMinusSATK = 5.5
			}
		}
		trs = e.Step(ev, nil, trs)
	}
	opened := map[string]Transition{}
	for _, tr := range trs {
		if tr.To == StateOpen {
			opened[tr.Entity] = tr
		}
	}
	for _, id := range []string{"VAV-1-02", "VAV-1-03", "VAV-1-10"} {
		if _, ok := opened[id]; ok {
			t.Errorf("%s is excepted but opened", id)
		}
	}
	if tr := opened["VAV-1-01"]; tr.Rule != "g36-valve-leak" || tr.At != minute(20) || tr.Severity != 2 {
		t.Errorf("VAV-1-01: %+v", tr)
	}
	if tr := opened["VAV-1-05"]; tr.Rule != "site-big-leak" || tr.At != minute(5) || tr.Severity != 1 {
		t.Errorf("VAV-1-05: %+v", tr)
	}
	if len(opened) != 7 {
		t.Errorf("%d terminals opened, want 7", len(opened))
	}
}

func TestLoadErrorsNameTheLine(t *testing.T) {
	cases := []struct{ yaml, want string }{
		{"rules:\n  - id: x\n    kind: leaking-valve\n    severity: 3\n    when: {field: nope, op: '>', value: 1}\n", "line 5: field nope: unknown Evidence field"},
		{"rules:\n  - id: x\n    kind: leaking-valve\n    severity: 3\n    when: {field: leak_rise_k, op: '~', value: 1}\n", `op "~"`},
		{"rules:\n  - id: x\n    kind: leaking-valve\n    severity: 3\n    when: {field: leak_rise_k, op: '>', value: 3 cfm}\n", `"cfm" is a volume flow unit`},
		{"rules:\n  - id: x\n    kind: no-such\n    severity: 3\n    when: {field: leak_rise_k, op: '>', value: 1}\n", `kind "no-such"`},
		{"rules:\n  - id: x\n    kind: hunting\n    severity: 3\n    colour: red\n", `line 5: unknown rule key "colour"`},
		{"rules:\n  - id: x\n    kind: hunting\n    severity: 3\n    for: soon\n    when: {field: valve, op: '>', value: 1}\n", `line 5: duration "soon"`},
		{"overrides:\n  - id: g36-valve-leak\n    thresholds: {nope: 1}\n", `no threshold named "nope"`},
		{"overrides:\n  - id: missing-rule\n", `site-rules.yaml:2: override of unknown rule "missing-rule"`},
		{"rules:\n  - id: x\n    kind: hunting\n    severity: 3\n    gates: [wobbly]\n    when: {field: valve, op: '>', value: 1}\n", `gate "wobbly"`},
		{"rules:\n  - id: x\n    kind: hunting\n    severity: 3\n    when: {field: valve, op: '>', value: 1}\n    message: '{{.Nope'\n", "message"},
		{"rules:\n  - id: x\n    kind: hunting\n    severity: 3\n    when: {all: []}\n", "empty condition group"},
	}
	for _, tc := range cases {
		f, err := Parse([]byte(tc.yaml), "site-rules.yaml")
		if err == nil {
			_, err = Build(f)
		}
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%q: error %v, want it to contain %q", tc.yaml, err, tc.want)
		}
	}
}

func TestBuiltinRulesCoverEveryKind(t *testing.T) {
	rs, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	have := map[fdd.Kind]bool{}
	for _, r := range rs.Rules() {
		k, _ := fdd.ParseKind(r.Kind)
		have[k] = true
		if r.Source == "" || len(r.Causes) == 0 || len(r.Checks) == 0 || r.Message == "" {
			t.Errorf("rule %s lacks source, causes, checks or message", r.ID)
		}
	}
	for _, k := range fdd.AllKinds() {
		if !have[k] {
			t.Errorf("no built-in rule for %s", k)
		}
	}
}
