package sim

import (
	"math"

	"risewatch/coilmodel"
	"risewatch/units"
)

// valveModel is a two-way control valve: inherent characteristic, full-open
// Cv, rangeability and seat leakage.
type valveModel struct {
	avM2         float64 // flow area Av: q = Av·φ·sqrt(Δp/ρ) (m³/s, Pa, kg/m³)
	char         coilmodel.Characteristic
	rangeability float64
	leakFrac     float64 // healthy seat leakage, fraction of full-open flow coefficient
}

// rhoRef60F is the reference density of the Cv definition, water at 60 °F
// (ANSI/ISA-75.01.01: Cv is US gpm of 60 °F water at 1 psi).
const rhoRef60F = 999.0

// newValveModel converts the US Cv to the SI flow area Av:
// Q[gpm] = Cv·sqrt(Δp[psi]/SG) with SG = ρ/ρ(60 °F) (ANSI/ISA-75.01.01)
// gives q = Av·sqrt(Δp/ρ), Av = Cv·(1 gpm in m³/s)·sqrt(ρ60F/1 psi).
func newValveModel(v coilmodel.Valve) valveModel {
	r := v.Rangeability
	if r <= 1 {
		r = 50 // common assumption (Wade, Basic and Advanced Regulatory Control, App. B)
	}
	return valveModel{
		avM2:         v.Cv * units.GPMToM3s(1) * math.Sqrt(rhoRef60F/units.PascalPerPSI),
		char:         v.Characteristic,
		rangeability: r,
		leakFrac:     v.LeakageFrac,
	}
}

// eqPctLinearBelow is the lift below which the equal-percentage curve is
// closed linearly to zero (real plugs cannot follow R^(y−1) to the seat;
// Modelica Standard Library equalPercentage(delta) does the same).
const eqPctLinearBelow = 0.05

// phi is the relative flow coefficient at lift y (0..1) with seat leakage
// leak: linear φ = y; equal percentage φ = R^(y−1) (ISA-75.11.01), closed
// linearly below eqPctLinearBelow; leakage φ = l + (1 − l)·φ_char.
func (v valveModel) phi(y, leak float64) float64 {
	y = clamp01(y)
	var c float64
	switch v.char {
	case coilmodel.Linear:
		c = y
	default:
		if y >= eqPctLinearBelow {
			c = math.Pow(v.rangeability, y-1)
		} else {
			c = y / eqPctLinearBelow * math.Pow(v.rangeability, eqPctLinearBelow-1)
		}
	}
	return leak + (1-leak)*c
}

// coilHydraulics tabulates the coil's water flow against its pressure drop,
// with every circuit solved on its own at the common header Δp (parallel
// circuits share Δp; their flows follow their own resistance). The table is
// rebuilt when a circuit's resistance multiplier changes or the water
// temperature moves by more than hydTableTempK.
type coilHydraulics struct {
	g     *coilGeom
	mult  []float64 // resistance multiplier per circuit (1 = healthy)
	tempC float64
	valid bool
	lnDP  []float64   // ln Δp grid
	lnQ   []float64   // ln total flow at each Δp
	frac  [][]float64 // per grid point, circuit flow fractions
}

const (
	hydTableTempK = 15.0 // viscosity moves friction only a few % over 15 K
	hydTableN     = 56
	hydMinDP      = 1.0   // Pa
	hydMaxDP      = 4.0e5 // Pa
)

func newCoilHydraulics(g *coilGeom) *coilHydraulics {
	h := &coilHydraulics{g: g, mult: make([]float64, g.circuits)}
	for i := range h.mult {
		h.mult[i] = 1
	}
	h.lnDP = make([]float64, hydTableN)
	h.lnQ = make([]float64, hydTableN)
	h.frac = make([][]float64, hydTableN)
	for i := range h.frac {
		h.frac[i] = make([]float64, g.circuits)
	}
	return h
}

func (h *coilHydraulics) setMultipliers(m []float64) {
	for i := range h.mult {
		if h.mult[i] != m[i] {
			copy(h.mult, m)
			h.valid = false
			return
		}
	}
}

func (h *coilHydraulics) ensure(tC float64) {
	if h.valid && math.Abs(tC-h.tempC) < hydTableTempK {
		return
	}
	h.tempC, h.valid = tC, true
	step := math.Log(hydMaxDP/hydMinDP) / float64(hydTableN-1)
	qc := make([]float64, h.g.circuits)
	for ci := range qc {
		qc[ci] = 1e-6
	}
	for i := 0; i < hydTableN; i++ {
		lp := math.Log(hydMinDP) + float64(i)*step
		dp := math.Exp(lp)
		tot := 0.0
		for ci := range qc {
			// Warm start from the previous grid point (Δp ∝ q^1.75 turbulent).
			guess := qc[ci]
			if i > 0 {
				guess *= math.Exp(step / 1.75)
			}
			qc[ci] = h.circuitFlow(ci, dp, tC, guess)
			tot += qc[ci]
		}
		h.lnDP[i], h.lnQ[i] = lp, math.Log(tot)
		for ci := range qc {
			h.frac[i][ci] = qc[ci] / tot
		}
	}
}

// circuitFlow solves circuitDP(q) = dp for one circuit by secant iteration
// in log–log coordinates (Δp ∝ q^1…2, so the iteration is nearly linear).
func (h *coilHydraulics) circuitFlow(ci int, dp, tC, guess float64) float64 {
	g := h.g
	ln := math.Log(dp)
	q0, q1 := guess, guess*1.05
	f0 := math.Log(g.circuitDP(ci, q0, tC, h.mult[ci])) - ln
	f1 := math.Log(g.circuitDP(ci, q1, tC, h.mult[ci])) - ln
	for k := 0; k < 40 && math.Abs(f1) > 1e-9 && f1 != f0; k++ {
		l0, l1 := math.Log(q0), math.Log(q1)
		l2 := l1 - f1*(l1-l0)/(f1-f0)
		q0, f0 = q1, f1
		q1 = math.Exp(l2)
		f1 = math.Log(g.circuitDP(ci, q1, tC, h.mult[ci])) - ln
	}
	return q1
}

// dpAt is the coil Δp (Pa) at total flow q (m³/s), by log–log interpolation
// in the table, and the index/weight for the circuit split.
func (h *coilHydraulics) dpAt(q float64) (dp float64, i int, w float64) {
	lq := math.Log(q)
	n := hydTableN
	switch {
	case lq <= h.lnQ[0]:
		// Below the table the flow is laminar-dominated: Δp ∝ q.
		return math.Exp(h.lnDP[0] + (lq - h.lnQ[0])), 0, 0
	case lq >= h.lnQ[n-1]:
		return math.Exp(h.lnDP[n-1] + 2*(lq-h.lnQ[n-1])), n - 2, 1
	}
	lo, hi := 0, n-1
	for hi-lo > 1 {
		m := (lo + hi) / 2
		if h.lnQ[m] <= lq {
			lo = m
		} else {
			hi = m
		}
	}
	w = (lq - h.lnQ[lo]) / (h.lnQ[hi] - h.lnQ[lo])
	return math.Exp(h.lnDP[lo] + w*(h.lnDP[hi]-h.lnDP[lo])), lo, w
}

// split writes the circuit flows (m³/s) for total flow q into out.
func (h *coilHydraulics) split(q float64, i int, w float64, out []float64) {
	for ci := range out {
		out[ci] = q * ((1-w)*h.frac[i][ci] + w*h.frac[i+1][ci])
	}
}

// installedFlow is the flow (m³/s) through valve and coil in series across
// the branch differential pressure branchPa: ρ·(q/(Av·φ))² + Δp_coil(q) =
// Δp_branch, solved by secant iteration on ln q. Circuit flows go to circQ.
func (h *coilHydraulics) installedFlow(v valveModel, lift, leak, branchPa, tC float64, circQ []float64) float64 {
	for i := range circQ {
		circQ[i] = 0
	}
	ph := v.phi(lift, leak)
	if branchPa <= 0 || ph <= 0 || v.avM2 <= 0 {
		return 0
	}
	h.ensure(tC)
	rho := waterDensity(tC)
	kv := rho / (v.avM2 * v.avM2 * ph * ph)
	f := func(lq float64) float64 {
		q := math.Exp(lq)
		dpc, _, _ := h.dpAt(q)
		return math.Log(kv*q*q+dpc) - math.Log(branchPa)
	}
	l1 := math.Log(math.Sqrt(branchPa / kv)) // valve alone: an upper bound
	l0 := l1 - 0.3
	f0, f1 := f(l0), f(l1)
	for k := 0; k < 50 && math.Abs(f1) > 1e-9; k++ {
		if f1 == f0 {
			break
		}
		l2 := l1 - f1*(l1-l0)/(f1-f0)
		l0, f0 = l1, f1
		l1, f1 = l2, f(l2)
	}
	q := math.Exp(l1)
	_, i, w := h.dpAt(q)
	h.split(q, i, w, circQ)
	return q
}

func clamp01(x float64) float64 { return math.Max(0, math.Min(1, x)) }
