package rules

import "math"

// Evidence keys used by EvidenceMap, in display order.
var evidenceKeys = []string{"rise_k", "expected_rise_k", "sigma_k", "valve", "airflow_m3s", "ua_factor", "flow_factor", "leak_rise_k", "leak_flow_frac"}

func (ev *Evidence) ptrs() []*float64 {
	return []*float64{&ev.ObservedRiseK, &ev.ExpectedRiseK, &ev.SigmaK, &ev.ValveFrac, &ev.AirflowM3s, &ev.UAFactor, &ev.FlowFactor, &ev.LeakRiseK, &ev.LeakFlowFrac}
}

// Map flattens the evidence to field name → SI value, leaving out
// values that are not available (NaN), so it encodes as JSON. Names are the
// evidence rule tags (rise_k, valve, ua_factor, ...) plus the Extra keys.
func (ev Evidence) Map() map[string]float64 {
	m := make(map[string]float64, len(evidenceKeys)+len(ev.Extra))
	for i, p := range ev.ptrs() {
		if !math.IsNaN(*p) && !math.IsInf(*p, 0) {
			m[evidenceKeys[i]] = *p
		}
	}
	for k, v := range ev.Extra {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			m[k] = v
		}
	}
	return m
}

// EvidenceFromMap is the inverse of Evidence.Map: missing standard values
// become NaN, other keys go to Extra.
func EvidenceFromMap(m map[string]float64) Evidence {
	var ev Evidence
	std := map[string]bool{}
	for i, p := range ev.ptrs() {
		std[evidenceKeys[i]] = true
		if v, ok := m[evidenceKeys[i]]; ok {
			*p = v
		} else {
			*p = math.NaN()
		}
	}
	for k, v := range m {
		if !std[k] {
			if ev.Extra == nil {
				ev.Extra = map[string]float64{}
			}
			ev.Extra[k] = v
		}
	}
	return ev
}
