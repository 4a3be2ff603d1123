package fdd

import (
	"context"
	"math"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/sim"
)

// scoreCheck compares, record by record, the scores process wrote (with
// the terminal's score cache) with scoreSignatures computed from scratch
// from the same evidence and state.
type scoreCheck struct {
	t                         *testing.T
	en                        *Engine
	name                      func(i int) string
	keys                      []scoreCache
	active, hits, faulty, bad int
}

func newScoreCheck(t *testing.T, en *Engine, name func(int) string) *scoreCheck {
	return &scoreCheck{t: t, en: en, name: name, keys: make([]scoreCache, len(en.state))}
}

func (c *scoreCheck) check(out []Evidence) {
	for k := range out {
		e := &out[k]
		if !e.Usable || !e.FanOn {
			continue
		}
		st := &c.en.state[e.Terminal]
		c.active++
		if k := &c.keys[e.Terminal]; st.sc.pub == k.pub && st.sc.gen == k.gen && st.sc.flags == k.flags {
			c.hits++
		}
		c.keys[e.Terminal] = st.sc
		if e.Best != KindNone {
			c.faulty++
		}
		ref := *e
		scoreSignatures(&ref, c.en, st)
		for kd := range ref.Scores {
			if math.Float64bits(ref.Scores[kd]) != math.Float64bits(e.Scores[kd]) {
				if c.bad++; c.bad <= 5 {
					c.t.Errorf("%s at %s: %v score %v with the cache, %v computed in full",
						c.name(e.Terminal), e.At.Format("2006-01-02 15:04"), Kind(kd), e.Scores[kd], ref.Scores[kd])
				}
			}
		}
		if ref.Best != e.Best {
			if c.bad++; c.bad <= 5 {
				c.t.Errorf("%s at %s: best %v with the cache, %v computed in full",
					c.name(e.Terminal), e.At.Format("2006-01-02 15:04"), e.Best, ref.Best)
			}
		}
	}
}

// done reports the counts and fails a run that did not exercise the
// cache (hits on most samples, misses on some, faults scored).
func (c *scoreCheck) done(run string) {
	c.t.Logf("%s: %d fan-on samples, cache key unchanged on %d (%.0f %%), %d with a best kind, %d differences",
		run, c.active, c.hits, 100*float64(c.hits)/float64(max(c.active, 1)), c.faulty, c.bad)
	if c.active == 0 || c.hits < c.active/3 || c.hits == c.active || c.faulty == 0 {
		c.t.Errorf("%s does not exercise the cache: %d fan-on samples, %d hits, %d with a best kind", run, c.active, c.hits, c.faulty)
	}
}

// TestScoreCacheSameAsFull: the scores process writes, with the terms that
// move only with pubGen, scoreGen and three truth values taken from the
// terminal's score cache, are bit for bit the scores scoreSignatures
// computes from scratch, on every fan-on sample of
//
//   - three simulated demo-campus days with its injected faults (baseline
//     learning and its end, leak inversions, response cadence, faults
//     opening), and
//   - four days of the synthetic terminals, one per fault kind, whose
//     plant-off evenings with the fan on feed the sensor-offset mean, and
//     mildly fouled coils whose performance stays in the band where the
//     CUSUM decides the capacity-loss score.
func TestScoreCacheSameAsFull(t *testing.T) {
	t.Run("demo campus", func(t *testing.T) {
		days := 3
		if testing.Short() {
			days = 1
		}
		sc, err := sim.DemoScenario()
		if err != nil {
			t.Fatal(err)
		}
		if sc, err = sc.With(days, 1); err != nil {
			t.Fatal(err)
		}
		sm, err := sim.New(sc)
		if err != nil {
			t.Fatal(err)
		}
		s := sm.Site(t.TempDir())
		en, err := NewEngine(s, DefaultConfig())
		if err != nil {
			t.Fatal(err)
		}
		chk := newScoreCheck(t, en, func(i int) string { return s.Terminals[i].ID })
		samples := make([]collector.Sample, len(s.Terminals))
		var out []Evidence
		err = sm.Run(context.Background(), func(step *sim.Step) error {
			simSamples(s, step, samples)
			out = en.StepTerminals(samples, out[:0])
			chk.check(out)
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		chk.done("demo campus")
	})
	t.Run("synthetic faults", func(t *testing.T) {
		faults := []fault{fNone, fLeak, fStuck, fFouled, fStarved, fColdLoop, fOffset, fFailed, fReversed, fHunting,
			fFouled, fFouled, fFouled}
		s := testSite(t, len(faults), true)
		gens := make([]*gen, len(faults))
		for i, f := range faults {
			gens[i] = newGen(t, f, uint64(i+11), t0.Add(30*time.Hour))
		}
		// Performance just below the capacity-loss ramp (1 − p in
		// 0.06..0.12), where only the CUSUM term scores.
		gens[10].foulUA, gens[11].foulUA, gens[12].foulUA = 0.85, 0.88, 0.91
		en, err := NewEngine(s, DefaultConfig())
		if err != nil {
			t.Fatal(err)
		}
		chk := newScoreCheck(t, en, func(i int) string { return s.Terminals[i].ID })
		samples := make([]collector.Sample, len(gens))
		var out []Evidence
		days := 4
		if testing.Short() {
			days = 2
		}
		for k := 0; k < days*24*60; k++ {
			at := t0.Add(time.Duration(k) * time.Minute)
			for i, g := range gens {
				samples[i] = g.sample(i, at, i)
			}
			out = en.StepTerminals(samples, out[:0])
			chk.check(out)
		}
		chk.done("synthetic faults")
	})
}
