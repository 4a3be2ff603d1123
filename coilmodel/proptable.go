package coilmodel

import "math"

// Property tables for the rating hot path. The heat-transfer pass needs, at
// one air and one water temperature, the properties and the logarithms and
// powers of them the correlations use (ln μ, Pr^(2/3), ln Re). Evaluating
// them exactly costs several logs and cube roots per pass; instead they are
// tabulated once, at package initialisation, from the exact functions in
// air.go and water.go on a 0.25 K grid and interpolated linearly. Linear
// interpolation on step Δ errs by at most Δ²/8·max|f''|; the tests check the
// bound against the exact functions by dense sampling: relative error below
// 2e−5 for every quantity (the water Prandtl number near 0 °C, where it
// curves most), below 4e−6 above 60 °C; a full rating moves by a few parts
// per million. Outside the grid the exact functions are used.
//
// The tables are written only during package initialisation and are read-only
// afterwards, so they are safe for concurrent use.

const (
	tabStepK   = 0.25
	tabInvStep = 1 / tabStepK
	airTabMinC = -70.0 // the operating point allows −60 °C entering air
	airTabMaxC = 125.0
	watTabMinC = 0.0   // below, the exact functions (a mean water temperature near a cold entering air)
	watTabMaxC = 125.0 // the operating point allows 120 °C entering water
)

// airPrFactor is Pr/(cp·θ) for Sutherland's laws of μ and k (White, Viscous
// Fluid Flow, Tables 1-2 and 1-3), θ = (T + Sk)/(T + Sμ): the T^1.5 factors
// cancel, so Pr = cp·airPrFactor·(T + 194.4)/(T + 110.4).
const airPrFactor = (1.716e-5 / 0.0241) * (273.15 + 110.4) / (273.15 + 194.4)

// airEntry holds, at one grid temperature, ln μ (μ in Pa·s) and
// (2/3)·ln(Pr/cp) of air, each with its increment to the next grid point.
type airEntry struct {
	lnMu, dLnMu float64
	a23, dA23   float64
}

// waterEntry holds, at one grid temperature, the water properties the pass
// needs, each with its increment to the next grid point: cp (J/(kg·K)),
// k (W/(m·K)), ρ/μ (s/m²), Pr, Pr^(2/3), ln(ρ/μ) and ln Pr.
type waterEntry struct {
	cp, dCp           float64
	k, dK             float64
	rhoMu, dRhoMu     float64
	pr, dPr           float64
	pr23, dPr23       float64
	lnRhoMu, dLnRhoMu float64
	lnPr, dLnPr       float64
}

// airPoint and waterPoint are interpolated (or exact) values at one temperature.
type airPoint struct{ lnMu, a23 float64 }

type waterPoint struct{ cp, k, rhoMu, pr, pr23, lnRhoMu, lnPr float64 }

func airExact(tC float64) airPoint {
	t := tC + 273.15
	return airPoint{
		lnMu: math.Log(AirViscosity(tC)),
		a23:  (2.0 / 3.0) * math.Log(airPrFactor*(t+194.4)/(t+110.4)),
	}
}

func waterExact(tC float64) waterPoint {
	rho, cp, mu, k := WaterDensity(tC), WaterCp(tC), WaterViscosity(tC), WaterConductivity(tC)
	pr := mu * cp / k
	return waterPoint{
		cp: cp, k: k, rhoMu: rho / mu, pr: pr, pr23: math.Cbrt(pr * pr),
		lnRhoMu: math.Log(rho / mu), lnPr: math.Log(pr),
	}
}

// propTables are the two grids.
type propTables struct {
	air   []airEntry
	water []waterEntry
}

// tables is built once at package initialisation and never written again.
var tables = buildTables()

func gridLen(lo, hi float64) int { return int(math.Round((hi-lo)*tabInvStep)) + 1 }

func buildTables() propTables {
	na, nw := gridLen(airTabMinC, airTabMaxC), gridLen(watTabMinC, watTabMaxC)
	av := make([]airPoint, na)
	for i := range av {
		av[i] = airExact(airTabMinC + float64(i)*tabStepK)
	}
	wv := make([]waterPoint, nw)
	for i := range wv {
		wv[i] = waterExact(watTabMinC + float64(i)*tabStepK)
	}
	// The last entry has zero increments; lookups never interpolate from it.
	pt := propTables{air: make([]airEntry, na), water: make([]waterEntry, nw)}
	for i := range av {
		a, b := av[i], av[min(i+1, na-1)]
		pt.air[i] = airEntry{lnMu: a.lnMu, dLnMu: b.lnMu - a.lnMu, a23: a.a23, dA23: b.a23 - a.a23}
	}
	for i := range wv {
		a, b := wv[i], wv[min(i+1, nw-1)]
		pt.water[i] = waterEntry{
			cp: a.cp, dCp: b.cp - a.cp, k: a.k, dK: b.k - a.k,
			rhoMu: a.rhoMu, dRhoMu: b.rhoMu - a.rhoMu, pr: a.pr, dPr: b.pr - a.pr,
			pr23: a.pr23, dPr23: b.pr23 - a.pr23,
			lnRhoMu: a.lnRhoMu, dLnRhoMu: b.lnRhoMu - a.lnRhoMu, lnPr: a.lnPr, dLnPr: b.lnPr - a.lnPr,
		}
	}
	return pt
}

// airAt is the air point at tC: interpolated on the grid, exact outside it
// (and for NaN, which then propagates).
func (pt *propTables) airAt(tC float64) airPoint {
	u := (tC - airTabMinC) * tabInvStep
	if !(u >= 0 && u < float64(len(pt.air)-1)) {
		return airExact(tC)
	}
	i := int(u)
	s := u - float64(i)
	e := &pt.air[i]
	return airPoint{lnMu: e.lnMu + s*e.dLnMu, a23: e.a23 + s*e.dA23}
}

// waterAt is the water point at tC: interpolated on the grid, exact
// outside it.
func (pt *propTables) waterAt(tC float64) waterPoint {
	u := (tC - watTabMinC) * tabInvStep
	if !(u >= 0 && u < float64(len(pt.water)-1)) {
		return waterExact(tC)
	}
	i := int(u)
	s := u - float64(i)
	e := &pt.water[i]
	return waterPoint{
		cp: e.cp + s*e.dCp, k: e.k + s*e.dK, rhoMu: e.rhoMu + s*e.dRhoMu,
		pr: e.pr + s*e.dPr, pr23: e.pr23 + s*e.dPr23,
		lnRhoMu: e.lnRhoMu + s*e.dLnRhoMu, lnPr: e.lnPr + s*e.dLnPr,
	}
}
