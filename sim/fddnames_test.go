package sim_test

import (
	"testing"

	"risewatch/fdd"
	"risewatch/sim"
)

// The ground truth uses the detector's fault identifiers.
func TestFaultKindsAreDetectorKinds(t *testing.T) {
	for _, k := range sim.FaultKinds {
		if _, ok := fdd.ParseKind(k); !ok {
			t.Errorf("fault kind %q is not an fdd.Kind identifier", k)
		}
	}
}
