package rules

import (
	"math/rand/v2"
	"testing"

	"risewatch/fdd"
)

// FuzzParseRules feeds arbitrary bytes to the loader and the compiler: they
// must return an error or a usable rule set, never panic.
func FuzzParseRules(f *testing.F) {
	f.Add(BuiltinYAML())
	f.Add([]byte("overrides:\n  - id: g36-valve-leak\n    thresholds: {dat_above_sat: 5 F}\n    except: [\"VAV-1-*\"]\n"))
	f.Add([]byte("rules:\n  - id: x\n    kind: hunting\n    severity: 3\n    gates: [\"!plant_on\", steady]\n    when: {not: {any: [{field: valve, op: '>', value: 50 %}, {field: fan_on, is: true}]}}\n    for: 3d\n"))
	f.Add([]byte("heating_season: {from: 10-01, to: 04-30}\nmax_gap: 5m\n"))
	f.Add([]byte("rules:\n  - id: l\n    kind: cold-loop\n    scope: loop\n    severity: 2\n    when: {field: hw_c, minus: hw_expected_c, op: '<', value: -15 F, ref: short, times: 0.1}\n"))
	f.Add([]byte("rules: [{id: a, kind: leaking-valve, severity: 9}]"))
	f.Add([]byte("{"))
	f.Add([]byte(extraRules))
	f.Add([]byte("rules:\n  - id: w\n    kind: hunting\n    severity: 3\n    when: {any: [{field: valve, op: '<', value: 0.1}, {field: rise_k, op: '>', value: 2}, {field: sat_c, minus: dat_c, op: '<=', value: -1 K}, {field: hw_c, op: '<', value: 40 C}, {field: z, op: '>=', value: 3}]}\n"))
	f.Add([]byte("rules:\n  - id: h\n    kind: hunting\n    severity: 4\n    when: {field: reversals_per_hour, op: '>=', value: 30}\n    for: 1h\n    within: 6h\n"))
	f.Add([]byte("rules:\n  - id: u\n    kind: fouled-coil\n    severity: 4\n    when: {field: ua_factor, op: '<=', value: 0.75}\n    for: 6h\n    evidence_when: {all: [{field: steady, is: true}, {field: valve, op: '>=', value: 60 %}]}\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		// A rules file is a few kB; far larger inputs only make each
		// iteration slower (YAML decoding is linear, and the built-in set
		// is decoded on every Build), so the fuzz time goes to shapes.
		if len(data) > 64<<10 {
			return
		}
		file, err := Parse(data, "fuzz.yaml")
		if err != nil {
			return
		}
		rs, err := Build(file)
		if err != nil {
			return
		}
		e, err := NewEvaluator(testSite(1, 2), rs)
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; i < 3; i++ {
			e.Step(nil, nil, nil)
			ev := quiet(i%2, minute(i))
			e.Step([]fdd.Evidence{ev}, []fdd.LoopEvidence{{Loop: 0, At: minute(i), PlantOn: true}}, nil)
		}
		// The prefilter never rejects a rule whose condition is true.
		rng := rand.New(rand.NewPCG(uint64(len(data)), 7))
		var ev fdd.Evidence
		for i := 0; i < 50; i++ {
			randEvidence(rng, &ev, 0.1)
			if r, ok := prefilterMiss(e, &ev); !ok {
				t.Fatalf("rule %s: condition true but the prefilter rejects it", r)
			}
		}
	})
}
