package rules

import (
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"
	"time"
	"unsafe"

	"risewatch/fdd"
	"risewatch/units"
)

// refEval is a direct interpretation of a condition tree with three-valued
// logic (the definition the compiled program must agree with).
func refEval(t *testing.T, c *Cond, s *schema, p unsafe.Pointer, useClear bool) tri {
	t.Helper()
	switch {
	case c.All != nil:
		r := triTrue
		for i := range c.All {
			switch refEval(t, &c.All[i], s, p, useClear) {
			case triFalse:
				return triFalse
			case triUnknown:
				r = triUnknown
			}
		}
		return r
	case c.Any != nil:
		r := triFalse
		for i := range c.Any {
			switch refEval(t, &c.Any[i], s, p, useClear) {
			case triTrue:
				return triTrue
			case triUnknown:
				r = triUnknown
			}
		}
		return r
	case c.Not != nil:
		switch refEval(t, c.Not, s, p, useClear) {
		case triTrue:
			return triFalse
		case triFalse:
			return triTrue
		}
		return triUnknown
	}
	a, err := s.lookup(c.Field)
	if err != nil {
		t.Fatal(err)
	}
	x := a.read(p)
	if c.Is != nil {
		if (x == 1) == *c.Is {
			return triTrue
		}
		return triFalse
	}
	dim := a.dim
	if c.Minus != "" {
		b, _ := s.lookup(c.Minus)
		x -= b.read(p)
		dim = subTemp(dim)
	}
	if c.Abs {
		x = math.Abs(x)
	}
	text := c.Value
	if useClear && c.Clear != "" {
		text = c.Clear
	}
	if text == "" {
		text = "0"
	}
	v, err := parseValue(text, dim, c.Field)
	if err != nil {
		t.Fatal(err)
	}
	if c.Ref != "" {
		r, _ := s.lookup(c.Ref)
		v += c.Times * r.read(p)
	}
	if math.IsNaN(x) || math.IsNaN(v) {
		return triUnknown
	}
	var ok bool
	switch op, _ := parseOp(c.Op); op {
	case opGT:
		ok = x > v
	case opGE:
		ok = x >= v
	case opLT:
		ok = x < v
	case opLE:
		ok = x <= v
	case opEQ:
		ok = x == v
	default:
		ok = x != v
	}
	if ok {
		return triTrue
	}
	return triFalse
}

// palette holds values at and around the built-in thresholds, so random
// evidence lands on both sides of every comparison and exactly on some.
var palette = []float64{0, 0.005, 0.01, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.75, 0.85, 0.9, 1, 1.5, 2, 2.75, 3, 3.0000001, 7.75, 8, 15, 16.75, 17, 30, 60, 120,
	-0.2, -0.5, -0.6, -1, -1.5, -2, -3, -8, -17}

// randEvidence fills every float field of an Evidence from the palette,
// NaN or a uniform draw, and every truth field at random.
func randEvidence(rng *rand.Rand, e *fdd.Evidence, pNaN float64) {
	v := reflect.ValueOf(e).Elem()
	for i := 0; i < v.NumField(); i++ {
		f := v.Field(i)
		if !f.CanSet() {
			continue // the padding
		}
		switch f.Kind() {
		case reflect.Float64:
			f.SetFloat(randValue(rng, pNaN))
		case reflect.Bool:
			f.SetBool(rng.Float64() < 0.8)
		case reflect.Array:
			for k := 0; k < f.Len(); k++ {
				f.Index(k).SetFloat(randValue(rng, pNaN))
			}
		}
	}
	e.Gates = fdd.Gate(rng.Uint32() & rng.Uint32() & rng.Uint32())
	e.Best = fdd.Kind(rng.IntN(12))
}

func randValue(rng *rand.Rand, pNaN float64) float64 {
	switch u := rng.Float64(); {
	case u < pNaN:
		return math.NaN()
	case u < 0.7:
		return palette[rng.IntN(len(palette))]
	default:
		return -20 + 160*rng.Float64()
	}
}

// extraRules exercise every node kind: nested groups, not, is, minus, abs,
// ref, == and != (custom rules are compiled like the built-in ones).
const extraRules = `
rules:
  - id: x-nested
    kind: hunting
    severity: 4
    gates: ["!learning"]
    when:
      any:
        - not: {field: valve, op: "<", value: 0.5}
        - all:
            - {field: dat_c, minus: sat_c, abs: true, op: ">", value: 2 K}
            - {field: rise_k, op: "<=", value: 0, ref: expected_rise_k, times: 0.5}
            - {field: fan_on, is: true}
        - {field: closed_min, op: "==", value: 15}
    for: 10m
  - id: x-ne
    kind: dat-failed
    severity: 5
    when:
      all:
        - {field: valve, op: "!=", value: 1}
        - {field: score.hunting, op: ">", value: 0.6}
        - any:
            - {field: dat_set_c, minus: dat_c, op: ">=", value: 8 K}
            - {field: residual_k, op: "<", value: -8 K}
    for: 5m
`

func TestProgramMatchesTree(t *testing.T) {
	rs, err := Build(mustParse(t, extraRules))
	if err != nil {
		t.Fatal(err)
	}
	s := rs.sch.terminal
	rng := rand.New(rand.NewPCG(1, 2))
	var ev fdd.Evidence
	p := unsafe.Pointer(&ev)
	counts := map[tri]int{}
	for i := 0; i < 20000; i++ {
		randEvidence(rng, &ev, 0.15)
		for _, c := range rs.rules {
			if c.loop {
				continue
			}
			want := refEval(t, c.rule.When, s, p, false)
			if got := c.when.eval(p); got != want {
				t.Fatalf("rule %s when: program %d, tree %d at %+v", c.rule.ID, got, want, ev)
			}
			counts[want]++
			var wantClr tri
			if c.rule.ClearWhen != nil {
				wantClr = refEval(t, c.rule.ClearWhen, s, p, false)
			} else {
				switch refEval(t, c.rule.When, s, p, true) {
				case triTrue:
					wantClr = triFalse
				case triFalse:
					wantClr = triTrue
				default:
					wantClr = triUnknown
				}
			}
			if got := c.clear.eval(p); got != wantClr {
				t.Fatalf("rule %s clear: program %d, tree %d", c.rule.ID, got, wantClr)
			}
		}
	}
	for _, v := range []tri{triFalse, triTrue, triUnknown} {
		if counts[v] == 0 {
			t.Errorf("random evidence never gave truth value %d; the test does not cover it", v)
		}
	}
}

// TestPrefilterSound checks the prefilter's one promise: whenever a rule's
// condition is true, its prefilter bit is set.
func TestPrefilterSound(t *testing.T) {
	rs, err := Build(mustParse(t, extraRules))
	if err != nil {
		t.Fatal(err)
	}
	e, err := NewEvaluator(testSite(1, 1), rs)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	var ev fdd.Evidence
	p := unsafe.Pointer(&ev)
	trues, skipped := 0, 0
	for i := 0; i < 50000; i++ {
		randEvidence(rng, &ev, 0.1)
		if r, ok := prefilterMiss(e, &ev); !ok {
			t.Fatalf("rule %s: condition true but prefilter rejects it at %+v", r, ev)
		}
		for r, c := range e.term {
			pass := e.pf.words[r/rulesPerWord].pass(p)&(1<<(2*uint(r%rulesPerWord))) != 0
			switch {
			case c.when.eval(p) == triTrue:
				trues++
			case !pass:
				skipped++
			}
		}
	}
	if trues == 0 || skipped == 0 {
		t.Errorf("test does not exercise the prefilter: %d true conditions, %d rejections", trues, skipped)
	}
}

// prefilterMiss checks every terminal rule of e at ev: ok is false, with
// the rule's ID, when the condition is true and the prefilter rejects it.
func prefilterMiss(e *Evaluator, ev *fdd.Evidence) (string, bool) {
	p := unsafe.Pointer(ev)
	for r, c := range e.term {
		pass := e.pf.words[r/rulesPerWord].pass(p)&(1<<(2*uint(r%rulesPerWord))) != 0
		if !pass && c.when.eval(p) == triTrue {
			return c.rule.ID, false
		}
	}
	return "", true
}

// TestPrefilterSameLifecycle runs the same slowly changing random evidence
// through an evaluator with the prefilter and one that looks at every rule
// at every step: transitions and the exported state must be identical. The
// second rule set has more rules than one prefilter word holds.
func TestPrefilterSameLifecycle(t *testing.T) {
	for _, c := range []struct {
		name, yaml string
		words      int
	}{{"one-word", extraRules, 1}, {"two-words", manyRulesYAML(), 2}} {
		t.Run(c.name, func(t *testing.T) {
			rs, err := Build(mustParse(t, c.yaml))
			if err != nil {
				t.Fatal(err)
			}
			samePrefilterLifecycle(t, rs, c.words)
		})
	}
}

// manyRulesYAML is extraRules and 30 generated rules: more rules than one
// prefilter word holds.
func manyRulesYAML() string {
	var many strings.Builder
	many.WriteString(extraRules)
	kinds := []string{"hunting", "dat-failed", "low-discharge", "leaking-valve", "fouled-coil"}
	for i := 0; i < 30; i++ {
		fmt.Fprintf(&many, `  - id: x-gen-%d
    kind: %s
    severity: %d
    gates: [fan_on]
    when:
      all:
        - {field: score.%s, op: ">=", value: %.2f}
        - any:
            - {field: valve, op: "<", value: %.2f}
            - {field: rise_k, minus: expected_rise_k, op: ">", value: %d K}
    for: %dm
    clear_for: %dm
`, i, kinds[i%len(kinds)], 1+i%5, kinds[(i+1)%len(kinds)], 0.1*float64(i%8), 0.1*float64(i%10), i%4, 5*(i%6), 5*(i%3))
	}
	return many.String()
}

func samePrefilterLifecycle(t *testing.T, rs *Ruleset, words int) {
	s := testSite(2, 6)
	fast, slow := fastAndPlain(t, s, rs)
	if fast.nW < words {
		t.Fatalf("%d prefilter words, want at least %d", fast.nW, words)
	}
	rng := rand.New(rand.NewPCG(5, 6))
	ev := make([]fdd.Evidence, len(s.Terminals))
	for k := range ev {
		randEvidence(rng, &ev[k], 0.05)
	}
	loops := make([]fdd.LoopEvidence, len(s.Loops))
	var a, b []Transition
	opened := 0
	at := t0
	for step := 0; step < 6000; step++ {
		at = at.Add(5 * time.Minute)
		if rng.IntN(200) == 0 {
			at = at.Add(time.Duration(rng.IntN(30)) * time.Minute) // a gap
		}
		for k := range ev {
			// Change a field now and then, so conditions persist.
			if rng.IntN(4) == 0 {
				var fresh fdd.Evidence
				randEvidence(rng, &fresh, 0.05)
				v, f := reflect.ValueOf(&ev[k]).Elem(), reflect.ValueOf(&fresh).Elem()
				j := rng.IntN(v.NumField())
				if sf := v.Type().Field(j); sf.IsExported() && sf.Name != "At" && sf.Name != "Terminal" {
					v.Field(j).Set(f.Field(j))
				}
			}
			ev[k].Terminal, ev[k].At = k, at
		}
		for l := range loops {
			loops[l] = fdd.LoopEvidence{Loop: l, At: at, PlantOn: true, Terminals: 6, Short: rng.IntN(7), ShortFraction: rng.Float64(), Score: rng.Float64()}
		}
		a = fast.Step(ev, loops, a[:0])
		b = slow.Step(ev, loops, b[:0])
		if len(a) != len(b) {
			t.Fatalf("step %d: %d transitions with the prefilter, %d without", step, len(a), len(b))
		}
		for i := range a {
			if a[i].FaultID != b[i].FaultID || a[i].From != b[i].From || a[i].To != b[i].To || a[i].Rule != b[i].Rule ||
				!a[i].Since.Equal(b[i].Since) || a[i].Message != b[i].Message || a[i].Severity != b[i].Severity {
				t.Fatalf("step %d: transition %d differs:\n%+v\n%+v", step, i, a[i], b[i])
			}
			if a[i].To == StateOpen && a[i].From != StateOpen {
				opened++
			}
		}
	}
	if opened < 10 {
		t.Errorf("only %d faults opened; the test does not exercise the lifecycle", opened)
	}
	if ea, eb := fast.Export(), slow.Export(); !reflect.DeepEqual(ea, eb) {
		t.Errorf("exported state differs with the prefilter:\n%+v\n%+v", ea, eb)
	}
}

func subTemp(d units.Dimension) units.Dimension {
	if d == units.Temperature {
		return units.TempDiff
	}
	return d
}
