package units

import (
	"math"
	"testing"
)

// TestEnergyUnits: 1 therm = 29.3071 kWh and 1 ton-hour of refrigeration =
// 3.516853 kWh. NIST SP 811 (2008), B.8, lists the therm (EC) as
// 1.055 06 × 10⁸ J — 100,000 Btu_IT, the therm used here — beside the
// therm (U.S.), 1.054 804 × 10⁸ J, and the ton of refrigeration
// (12,000 Btu/h) as 3.516 853 × 10³ W (figures from memory of the table).
func TestEnergyUnits(t *testing.T) {
	if math.Abs(KWhPerTherm-29.3071) > 5e-5 {
		t.Errorf("KWhPerTherm = %v, want 29.3071", KWhPerTherm)
	}
	if math.Abs(KWhPerTonHour-3.516853) > 5e-7 {
		t.Errorf("KWhPerTonHour = %v, want 3.516853", KWhPerTonHour)
	}
}
