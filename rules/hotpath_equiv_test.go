package rules

import (
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
	"time"
	"unsafe"

	"risewatch/fdd"
	"risewatch/site"
)

// litRules have literals of every kind in first and second clauses: a ≥ t,
// a ≤ t, a − b ≤ t and a − b < t on one pair of fields, a − b ≥ t on two
// pairs, several thresholds on one field.
const litRules = `
rules:
  - id: x-lits-a
    kind: hunting
    severity: 4
    when:
      all:
        - {field: dat_c, minus: sat_c, op: "<=", value: -2 K}
        - {field: valve, op: "<", value: 0.3}
    for: 10m
  - id: x-lits-b
    kind: dat-failed
    severity: 5
    gates: [fan_on]
    when:
      all:
        - {field: dat_c, minus: sat_c, op: "<", value: -5 K}
        - {field: valve, op: "<=", value: 0.1}
        - {field: closed_min, op: ">", value: 30}
    for: 5m
  - id: x-lits-c
    kind: low-discharge
    severity: 3
    when:
      all:
        - {field: closed_min, op: ">=", value: 15}
        - {field: residual_k, op: "<=", value: -3 K}
        - {field: valve, op: ">=", value: 0.5}
    for: 0m
  - id: x-lits-d
    kind: fouled-coil
    severity: 4
    when:
      all:
        - {field: rise_k, minus: expected_rise_k, op: ">=", value: 1 K}
        - {field: closed_min, op: ">=", value: 5}
    for: 5m
`

// TestPrefilterPassExact: the unrolled evaluation of the prefilter (and
// the loop for literals beyond unrollMax, and the skipped signature
// scores) gives the same bits as evaluating every literal of every clause
// on its own, for values at, one ulp around and far from every threshold,
// NaN and infinities.
func TestPrefilterPassExact(t *testing.T) {
	for _, c := range []struct{ name, yaml string }{
		{"built-in", ""}, {"extra", extraRules}, {"many", manyRulesYAML()}, {"lits", litRules},
	} {
		t.Run(c.name, func(t *testing.T) {
			var files []*File
			if c.yaml != "" {
				files = append(files, mustParse(t, c.yaml))
			}
			e := mustEval(t, testSite(1, 2), files...)
			rng := rand.New(rand.NewPCG(11, uint64(len(c.yaml))))
			long := 0
			for w := range e.pf.words {
				pw := &e.pf.words[w]
				for _, ls := range [][]pfLit{pw.ge, pw.le, pw.geD, pw.leD, pw.scoreGE} {
					if len(ls) > unrollMax {
						long++
					}
				}
			}
			if c.name == "many" && long == 0 {
				t.Error("no word with more literals of one kind than the unrolled switch takes")
			}
			passes := 0
			var ev fdd.Evidence
			for i := 0; i < 40000; i++ {
				w := &e.pf.words[i%len(e.pf.words)]
				randEvidence(rng, &ev, 0.05)
				nearThresholds(rng, &ev, w)
				p := unsafe.Pointer(&ev)
				got, want := w.pass(p), w.plainPass(p)
				if got != want {
					t.Fatalf("evidence %+v: prefilter bits %#x, every literal on its own gives %#x", ev, got, want)
				}
				if got != 0 {
					passes++
				}
			}
			if passes == 0 {
				t.Error("no record passes the prefilter: the test does not exercise it")
			}
		})
	}
}

// nearThresholds puts about half of word w's literal quantities at, one
// ulp around or far from a threshold of theirs, or NaN or infinite.
func nearThresholds(rng *rand.Rand, ev *fdd.Evidence, w *pfWord) {
	p := unsafe.Pointer(ev)
	for _, l := range w.lits {
		if rng.IntN(2) == 0 {
			continue
		}
		v := l.t
		switch rng.IntN(9) {
		case 0:
			v = math.Nextafter(v, math.Inf(1))
		case 1:
			v = math.Nextafter(v, math.Inf(-1))
		case 2:
			v = math.NaN()
		case 3:
			v = math.Inf(1 - 2*rng.IntN(2))
		case 4:
			v += 10 * (rng.Float64() - 0.5)
		case 5:
			v = w.lits[rng.IntN(len(w.lits))].t // another literal's threshold
		}
		a := (*float64)(unsafe.Add(p, l.off))
		if !l.dif {
			*a = v
			continue
		}
		b := (*float64)(unsafe.Add(p, l.offB))
		if math.IsNaN(*b) || math.IsInf(*b, 0) || rng.IntN(4) == 0 {
			*b = palette[rng.IntN(len(palette))]
		}
		*a = *b + v
		if rng.IntN(2) == 0 {
			*a = math.Nextafter(*a, math.Inf(1-2*rng.IntN(2)))
		}
	}
}

// seasonRules set a heating season and add a rule gated on it (no
// built-in rule is), so the season bit matters.
const seasonRules = `
heating_season: {from: 10-01, to: 04-30}
max_gap: 12m
rules:
  - id: x-season
    kind: hunting
    severity: 4
    gates: [heating_season, fan_on]
    when:
      all:
        - {field: valve, op: "<", value: 0.3}
        - {field: closed_min, op: ">=", value: 15}
    for: 3m
`

// TestHotPathSameLifecycle runs one evidence stream through the hot path
// (per-time caching of the Unix time and season bit, the hot-path
// operating-time sum, the prefilter) and through the plain per-record path
// (noPrefilter: every record's time and season computed afresh, every rule
// looked at): every transition, the open faults, the pending timers and
// the exported state must be identical. The stream has steps with one
// stamp, records with stamps of their own, the same instant in another
// location, repeated terminals, terminals outside the site, time going
// back, gaps longer than max_gap and a heating season the days cross in
// and out of.
func TestHotPathSameLifecycle(t *testing.T) {
	for _, c := range []struct{ name, yaml string }{
		{"built-in", seasonRules},
		{"lits", litRules},
	} {
		t.Run(c.name, func(t *testing.T) {
			rs, err := Build(mustParse(t, c.yaml))
			if err != nil {
				t.Fatal(err)
			}
			s := testSite(2, 8)
			fast, slow := fastAndPlain(t, s, rs)
			if fast.nW != 1 {
				t.Fatalf("%d prefilter words, want 1 (the one-word hot path)", fast.nW)
			}
			sameHotPath(t, fast, slow, len(s.Terminals))
		})
	}
}

func sameHotPath(t *testing.T, fast, slow *Evaluator, nT int) {
	t.Helper()
	rng := rand.New(rand.NewPCG(21, 8))
	base := make([]fdd.Evidence, nT)
	for k := range base {
		base[k] = quiet(k, t0)
		base[k].LeakSigmaK, base[k].UAFactor, base[k].FlowFactor = 0.3, 1, 1
	}
	w := &fast.pf.words[0]
	east := time.FixedZone("east", 3*3600)
	var a, b []Transition
	opened, cleared, oddSteps, straddle := 0, 0, 0, 0
	at := t0
	for step := 0; step < 12000; step++ {
		at = at.Add(time.Minute)
		switch u := rng.IntN(400); {
		case u == 0:
			// A gap: exactly max_gap, a nanosecond more, or longer.
			gap := []time.Duration{time.Duration(slow.maxGapNs), time.Duration(slow.maxGapNs + 1), time.Duration(slow.maxGapNs) - time.Second, 30 * time.Minute}[rng.IntN(4)]
			at = at.Add(gap - time.Minute)
		case u == 1:
			at = at.Add(-time.Duration(1+rng.IntN(5)) * time.Minute) // time goes back
		case u == 2:
			// On to just before midnight at an end of the heating season
			// (the season days run 10-01 … 04-30), with the next steps'
			// records stamped on both sides of it.
			y := at.Year() + 1
			at = []time.Time{
				time.Date(y, 5, 1, 0, 0, 0, 0, time.UTC), time.Date(y, 10, 1, 0, 0, 0, 0, time.UTC),
			}[rng.IntN(2)].Add(-2 * time.Minute)
			straddle = 4
		}
		for k := range base {
			x := &base[k]
			switch u := rng.IntN(100); {
			case u < 2:
				*x = quiet(k, at) // healthy again
				x.LeakSigmaK, x.UAFactor, x.FlowFactor = 0.3, 1, 1
			case u < 12:
				nearThresholds(rng, x, w) // drifts towards (or away from) a fault
			case u < 14:
				x.FanOn, x.PlantOn = rng.IntN(4) != 0, rng.IntN(4) != 0
			case u < 15:
				x.Usable = rng.IntN(3) != 0
			}
			x.Terminal, x.At = k, at
		}
		ev := append([]fdd.Evidence(nil), base...)
		if straddle > 0 {
			straddle--
			for k := range ev {
				ev[k].At = at.Add(time.Duration(k%3) * 40 * time.Second)
			}
		}
		if rng.IntN(10) == 0 {
			oddSteps++
			for n := rng.IntN(4); n >= 0; n-- {
				k := rng.IntN(len(ev))
				switch rng.IntN(6) {
				case 0:
					ev[k].At = at.Add(time.Duration(rng.IntN(120)-60) * time.Second) // a stamp of its own
				case 5:
					ev[k].At = at.Add(time.Duration(1+rng.IntN(999)) * time.Nanosecond) // within the same second
				case 1:
					ev[k].At = at.In(east) // the same instant, another location
				case 2:
					ev = append(ev, ev[k]) // a terminal twice
					ev[len(ev)-1].At = at.Add(time.Duration(rng.IntN(3)) * time.Second)
				case 3:
					ev[k].Terminal = []int{-1, nT, nT + 5}[rng.IntN(3)] // outside the site
				default:
					rng.Shuffle(len(ev), func(i, j int) { ev[i], ev[j] = ev[j], ev[i] })
				}
			}
		}
		a = fast.Step(ev, nil, a[:0])
		b = slow.Step(ev, nil, b[:0])
		o, c := compareStep(t, step, step%500 == 0, fast, slow, a, b)
		opened, cleared = opened+o, cleared+c
	}
	if opened < 10 || cleared < 5 || oddSteps == 0 {
		t.Errorf("not exercised: %d faults opened, %d cleared, %d odd steps", opened, cleared, oddSteps)
	}
	if oa, ob := fast.Open(), slow.Open(); !sameTransitions(oa, ob) {
		t.Errorf("open faults differ:\n%+v\n%+v", oa, ob)
	}
	if ea, eb := fast.Export(), slow.Export(); !reflect.DeepEqual(ea, eb) {
		t.Errorf("exported state differs:\n%+v\n%+v", ea, eb)
	}
	for k := range fast.hot {
		if fast.hot[k].op != slow.hot[k].op {
			t.Errorf("terminal %d: operating time %+v on the hot path, %+v on the plain one", k, fast.hot[k].op, slow.hot[k].op)
		}
	}
}

// sameTransitions compares transitions field by field, NaN equal to NaN
// (the evidence of a fault holds NaN for what the engine does not know):
// fmt prints every float in its shortest exact form and maps in key order.
func sameTransitions(a, b []Transition) bool {
	return len(a) == len(b) && fmt.Sprintf("%+v", a) == fmt.Sprintf("%+v", b)
}

// loopRules add a loop rule with literals of several kinds (the built-in
// loop rule has one on short_fraction, short being a count).
const loopRules = `
rules:
  - id: x-loop-low
    kind: cold-loop
    scope: loop
    severity: 3
    gates: [plant_on]
    when:
      any:
        - {field: hw_low_k, op: ">=", value: 5 K}
        - all:
            - {field: mean_perf_index, op: "<", value: 0.5}
            - {field: score, op: ">=", value: 0.7}
    for: 20m
    clear_for: 10m
`

// TestLoopPrefilterSameLifecycle runs slowly changing loop evidence, its
// values now and then at, one ulp around or far from a threshold or NaN,
// through an evaluator whose loop rules skip idle trackers the prefilter
// rejects and through one that looks at every loop rule (noPrefilter):
// transitions, pending timers and the exported state must be identical.
func TestLoopPrefilterSameLifecycle(t *testing.T) {
	rs, err := Build(mustParse(t, loopRules))
	if err != nil {
		t.Fatal(err)
	}
	s := testSite(3, 2)
	fast, slow := fastAndPlain(t, s, rs)
	if len(fast.loop) < 2 || len(fast.lpf.words) != 1 || len(fast.lpf.words[0].lits) < 3 {
		t.Fatalf("%d loop rules, %d prefilter words: want the built-in and the extra loop rule in one word with their literals", len(fast.loop), len(fast.lpf.words))
	}
	rng := rand.New(rand.NewPCG(31, 7))
	near := func(v float64) float64 {
		switch rng.IntN(6) {
		case 0:
			return math.Nextafter(v, math.Inf(1))
		case 1:
			return math.Nextafter(v, math.Inf(-1))
		case 2:
			return math.NaN()
		case 3:
			return v
		}
		return v + 2*(rng.Float64()-0.5)
	}
	loops := make([]fdd.LoopEvidence, len(s.Loops))
	for l := range loops {
		loops[l] = fdd.LoopEvidence{Loop: l, PlantOn: true, Terminals: 6, ShortFraction: 0.1, MeanPerfIndex: 0.9, Score: 0.1}
	}
	var a, b []Transition
	opened, cleared, rejected := 0, 0, 0
	at := t0
	for step := 0; step < 8000; step++ {
		at = at.Add(time.Minute)
		if rng.IntN(300) == 0 {
			at = at.Add(time.Duration(rng.IntN(40)) * time.Minute) // a gap
		}
		for l := range loops {
			x := &loops[l]
			switch u := rng.IntN(60); u {
			case 0:
				x.ShortFraction, x.Short = near(0.6), rng.IntN(9)
			case 1:
				x.LowSupplyK = near(5)
			case 2:
				x.MeanPerfIndex, x.Score = near(0.5), near(0.7)
			case 3:
				x.PlantOn = rng.IntN(5) != 0
			case 4:
				x.ShortFraction, x.LowSupplyK, x.MeanPerfIndex, x.Score = 0.1, 0, 0.9, 0.1 // healthy again
			}
			x.At = at
			if fast.lpf.words[0].pass(unsafe.Pointer(x)) == 0 {
				rejected++
			}
		}
		a = fast.Step(nil, loops, a[:0])
		b = slow.Step(nil, loops, b[:0])
		o, c := compareStep(t, step, step%200 == 0, fast, slow, a, b)
		opened, cleared = opened+o, cleared+c
	}
	if opened < 5 || cleared < 3 || rejected == 0 {
		t.Errorf("not exercised: %d loop faults opened, %d cleared, %d records rejected by the prefilter", opened, cleared, rejected)
	}
	if ea, eb := fast.Export(), slow.Export(); !reflect.DeepEqual(ea, eb) {
		t.Errorf("exported state differs:\n%+v\n%+v", ea, eb)
	}
}

// compareStep fails the test when one step's transitions of the fast and
// the plain evaluator differ (and, with pending, their pending trackers),
// and counts the faults the step opened and cleared.
func compareStep(t *testing.T, step int, pending bool, fast, slow *Evaluator, a, b []Transition) (opened, cleared int) {
	t.Helper()
	if !sameTransitions(a, b) {
		t.Fatalf("step %d: transitions differ:\nfast path:  %+v\nplain path: %+v", step, a, b)
	}
	for _, tr := range a {
		switch {
		case tr.To == StateOpen && tr.From != StateOpen:
			opened++
		case tr.To == StateClear:
			cleared++
		}
	}
	if pending {
		if pa, pb := fast.Pending(), slow.Pending(); !reflect.DeepEqual(pa, pb) {
			t.Fatalf("step %d: pending differs:\n%v\n%v", step, pa, pb)
		}
	}
	return opened, cleared
}

// fastAndPlain builds two evaluators of rs over s: one as the product runs
// it and one that looks at every rule (noPrefilter), the reference the
// equivalence tests compare it with.
func fastAndPlain(t *testing.T, s *site.Site, rs *Ruleset) (fast, slow *Evaluator) {
	t.Helper()
	fast, err := NewEvaluator(s, rs)
	if err != nil {
		t.Fatal(err)
	}
	if slow, err = NewEvaluator(s, rs); err != nil {
		t.Fatal(err)
	}
	slow.noPrefilter = true
	return fast, slow
}
