package rules

import (
	"testing"

	"risewatch/fdd"
)

// starvedOwnLevel is a coil the model under-rates (healthy at 106 % of the
// model's rise) that has lost capacity: its rise at high command is 87 % of
// the model's, above the 85 % line, but 82 % of its own healthy level. The
// fit puts the loss in UA (flow factor 1.6, as a UA/flow fit does when the
// valve sits at full command), and the engine's signature says starved.
func starvedOwnLevel(i int, rel float64) fdd.Evidence {
	ev := quiet(0, minute(i))
	ev.ValveFrac = 1
	ev.PerfHigh, ev.PerfHighRef, ev.PerfHighRel = 0.87, 1.06, rel
	ev.FlowFactor, ev.FlowFactorSigma = 1.6, 0.1
	ev.Scores[fdd.KindStarvedCoil] = 0.8
	return ev
}

// TestStarvedOpensOnOwnHealthyLevel: the starved-coil rule opens on the
// coil's own healthy level when the model's calibration hides the loss,
// after its 6 h persistence, and not on the same evidence with the coil at
// its own level.
func TestStarvedOpensOnOwnHealthyLevel(t *testing.T) {
	const id = "VAV-1-01/starved-coil"
	for _, c := range []struct {
		rel  float64
		open bool
	}{{0.82, true}, {0.87, false}} {
		e := mustEval(t, testSite(1, 1))
		trs := run(e, 0, 7*60, func(i int) []fdd.Evidence { return []fdd.Evidence{starvedOwnLevel(i, c.rel)} })
		tr, ok := firstOf(trs, id, StateOpen)
		if ok != c.open {
			t.Fatalf("perf_high_rel %.2f: opened %v, want %v", c.rel, ok, c.open)
		}
		if ok && tr.At.Before(minute(6*60)) {
			t.Errorf("opened at %v, before the 6 h persistence", tr.At)
		}
	}
}
