package fdd

import (
	"math"
	"testing"
)

// TestRunawayFlowFactorNotPublished: a coil that gives almost no heat lets
// the two-factor fit push UA down and the flow factor off to tens of
// thousands (the demo's stuck valve: 6.3·10⁴, printed as "6332394 %");
// such a flow factor is published as unknown, a plausible one as it is.
func TestRunawayFlowFactorNotPublished(t *testing.T) {
	en := &Engine{}
	for _, c := range []struct {
		fl   float64
		show bool
	}{{0.36, true}, {1.14, true}, {maxShownFlowFactor, true}, {63323.9, false}, {math.Inf(1), false}} {
		st := &termState{}
		st.facOut = factorOut{ua: 0.07, uaSig: 0.01, fl: c.fl, flSig: c.fl * 0.2}
		var e Evidence
		en.publishSlow(&e, st)
		if e.UAFactor != 0.07 {
			t.Errorf("flow %g: UA factor %g, want 0.07 kept", c.fl, e.UAFactor)
		}
		if got := !math.IsNaN(e.FlowFactor); got != c.show || got && e.FlowFactor != c.fl {
			t.Errorf("flow factor %g published as %g (sigma %g)", c.fl, e.FlowFactor, e.FlowFactorSigma)
		}
		if math.IsNaN(e.FlowFactor) != math.IsNaN(e.FlowFactorSigma) {
			t.Errorf("flow factor %g: factor %g but sigma %g", c.fl, e.FlowFactor, e.FlowFactorSigma)
		}
	}
}
