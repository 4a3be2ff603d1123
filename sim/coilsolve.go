package sim

import "math"

// coilFaults are the coil-side fault parameters, set by the fault mechanism.
type coilFaults struct {
	foulAir   float64 // added air-side resistance on A_o, m²·K/W (dust)
	foulWater float64 // added water-side resistance on A_i, m²·K/W (scale)
}

// coilSolver solves the segment heat balance of one coil. It keeps the
// leaving-air temperature field of the last solution as a warm start, and a
// one-entry cache of the air-side effectiveness for repeated inputs.
type coilSolver struct {
	g        *coilGeom
	hFactor  float64   // air-side calibration factor (airSideCalibration)
	ta       []float64 // leaving-air temperature per (row, pos, seg)
	warm     bool
	uaAir    []float64 // per row, this iteration
	faults   coilFaults
	circOutC []float64 // leaving water temperature per circuit (last exact solve)

	// fixed, when set, makes the rate-inputs physics evaluate every
	// property at fixAirC / fixWaterC instead of locally (used to measure
	// what local evaluation changes).
	fixed              bool
	fixAirC, fixWaterC float64

	cache struct {
		valid                 bool
		mAir, mW, taIn, twIn  float64
		effectiveness, rowsIt float64
	}
}

// coilResult is one coil solution.
type coilResult struct {
	HeatW         float64
	LeavingAirC   float64
	LeavingWaterC float64
	Iterations    int
}

func newCoilSolver(g *coilGeom, hFactor float64) *coilSolver {
	return &coilSolver{
		g: g, hFactor: hFactor,
		ta:       make([]float64, g.rows*g.tubes*g.segs),
		uaAir:    make([]float64, g.rows),
		circOutC: make([]float64, g.circuits),
	}
}

func (s *coilSolver) setFaults(f coilFaults) {
	if f != s.faults {
		s.faults = f
		s.cache.valid = false
	}
}

// Cache tolerances: inputs this close to the cached solution reuse its
// effectiveness (the solution is linear in the inlet temperature difference
// for fixed properties, so only flows and property temperatures matter).
const (
	cacheFlowRel = 2e-3
	cacheTempK   = 0.25
)

// solve returns the coil's heat output for air mass flow mAir (kg/s) at
// taIn, and water circuit mass flows circKgS (kg/s) entering at twIn. With
// cached=true a near-identical previous input reuses its effectiveness.
func (s *coilSolver) solve(mAir, taIn float64, circKgS []float64, twIn float64, cached bool) coilResult {
	mW := 0.0
	for _, m := range circKgS {
		mW += m
	}
	if mAir <= 1e-9 || mW <= 1e-12 || twIn <= taIn {
		s.warm = false
		return coilResult{LeavingAirC: taIn, LeavingWaterC: twIn}
	}
	cAir := mAir * airCp
	c := &s.cache
	if cached && c.valid && relClose(mAir, c.mAir) && relClose(mW, c.mW) &&
		math.Abs(taIn-c.taIn) < cacheTempK && math.Abs(twIn-c.twIn) < cacheTempK {
		q := c.effectiveness * cAir * (twIn - taIn)
		return coilResult{HeatW: q, LeavingAirC: taIn + q/cAir, LeavingWaterC: twIn - q/(mW*waterCp(twIn))}
	}
	r := s.solveExact(mAir, taIn, circKgS, twIn)
	c.valid, c.mAir, c.mW, c.taIn, c.twIn = true, mAir, mW, taIn, twIn
	c.effectiveness = r.HeatW / (cAir * (twIn - taIn))
	return r
}

func relClose(a, b float64) bool { return math.Abs(a-b) <= cacheFlowRel*math.Abs(b) }

// solveExact marches every water circuit through its passes, segment by
// segment, and iterates because the water meets the downstream row first
// while the air meets the upstream row first (Gauss–Seidel on the leaving-air
// field). Within a segment the water is one stream along the tube and each
// air streamline crosses it once, so the segment obeys exactly
// P = (1/R)·[1 − exp(−R·(1 − e^(−NTU)))], R = C_air/C_water, NTU = UA/C_air
// (crossflow, air unmixed, tube side mixed: Incropera & DeWitt, Table 11.3,
// "Cmax mixed / Cmin unmixed" with the roles written air-side). Local UA per
// segment is 1/UA = 1/(η_o·h_a·A_o) + R_wall + (R_fw + 1/h_w)/A_i with h_a
// per row (its mean air temperature) and h_w per circuit and row (its entering
// water temperature and the circuit's own flow), water cp per pass, in the
// simulator's own physics; the rate-inputs physics takes every segment's UA
// and cp from its own mean temperatures instead (localPass).
func (s *coilSolver) solveExact(mAir, taIn float64, circKgS []float64, twIn float64) coilResult {
	g := s.g
	nCell := g.tubes * g.segs
	cSeg := mAir * airCp / float64(nCell)
	if !s.warm {
		for i := range s.ta {
			s.ta[i] = taIn
		}
	}
	var q, qPrev float64
	it := 0
	for it = 1; it <= 60; it++ {
		// Air side per row at the row's mean air temperature (refreshed on the
		// first three sweeps; the field changes little after that).
		for r := 0; r < g.rows && it <= 3 && g.physics == physicsOwn; r++ {
			sum := 0.0
			row := s.ta[r*nCell : (r+1)*nCell]
			for _, t := range row {
				sum += t
			}
			in := taIn
			if r > 0 {
				in = meanOf(s.ta[(r-1)*nCell : r*nCell])
			}
			s.uaAir[r], _ = g.airSideConductance(mAir, (in+sum/float64(nCell))/2, s.faults.foulAir, s.hFactor)
		}
		q = 0
		for ci, mc := range circKgS {
			if mc <= 0 {
				continue
			}
			tw := twIn
			if g.physics == physicsRateInputs {
				for _, ps := range g.circuitPasses[ci] {
					var dq float64
					tw, dq = s.localPass(ps, mAir, taIn, mc, tw, cSeg)
					q += dq
				}
				s.circOutC[ci] = tw
				continue
			}
			curRow := -1
			var p, cw, uaW float64
			for _, ps := range g.circuitPasses[ci] {
				if ps.row != curRow {
					curRow = ps.row
					hw := g.waterSideH(mc, tw, g.widthM)
					uaW = 1 / (g.rWallSeg + (s.faults.foulWater+1/hw)/g.aiSeg)
				}
				// cp and the segment effectiveness at this pass's entering water.
				cw = mc * waterCp(tw)
				ua := 1 / (1/s.uaAir[curRow] + 1/uaW)
				rr := cSeg / cw
				p = -math.Expm1(-rr*(-math.Expm1(-ua/cSeg))) / rr
				base := (ps.row*g.tubes + ps.pos) * g.segs
				up := base - nCell // same cell, one row upstream
				for k := 0; k < g.segs; k++ {
					sg := k
					if !ps.forward {
						sg = g.segs - 1 - k
					}
					in := taIn
					if ps.row > 0 {
						in = s.ta[up+sg]
					}
					dq := p * cSeg * (tw - in)
					s.ta[base+sg] = in + dq/cSeg
					tw -= dq / cw
					q += dq
				}
			}
			s.circOutC[ci] = tw
		}
		// One row with per-row properties is exact after the second sweep;
		// local properties need the sweeps to converge like several rows.
		if g.rows == 1 && it >= 2 && g.physics == physicsOwn || math.Abs(q-qPrev) <= 1e-6*math.Abs(q)+1e-4 {
			break
		}
		qPrev = q
	}
	s.warm = true
	// Mixed leaving water from the circuit outlets (energy-weighted).
	var num, den float64
	for ci, mc := range circKgS {
		if mc > 0 {
			num += mc * s.circOutC[ci]
			den += mc
		}
	}
	lwt := twIn
	if den > 0 {
		lwt = num / den
	}
	return coilResult{HeatW: q, LeavingAirC: taIn + q/(mAir*airCp), LeavingWaterC: lwt, Iterations: it}
}

func meanOf(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}

// localPass marches one tube pass of a circuit with water mass flow mc
// entering at tw, in the rate-inputs physics: every segment gets its own UA
// from its own mean air and water temperatures (a predictor at the inlet
// water and the previous sweep's leaving air, then one corrector at the
// segment means), and the segment balance P = (1/R)·[1 − exp(−R·(1 − e^(−NTU)))]
// with the water cp of the same mean. It returns the leaving water
// temperature and the heat of the pass.
func (s *coilSolver) localPass(ps pass, mAir, taIn, mc, tw, cSeg float64) (twOut, q float64) {
	g := s.g
	nCell := g.tubes * g.segs
	base := (ps.row*g.tubes + ps.pos) * g.segs
	up := base - nCell
	for k := 0; k < g.segs; k++ {
		sg := k
		if !ps.forward {
			sg = g.segs - 1 - k
		}
		in := taIn
		if ps.row > 0 {
			in = s.ta[up+sg]
		}
		taM, twM := 0.5*(in+s.ta[base+sg]), tw
		if s.fixed {
			taM, twM = s.fixAirC, s.fixWaterC
		}
		var dq, cw float64
		for pc := 0; pc < 2; pc++ {
			ua := g.localUA(mAir, taM, mc, twM, s.faults)
			cw = mc * waterCp(twM)
			rr := cSeg / cw
			p := -math.Expm1(-rr*(-math.Expm1(-ua/cSeg))) / rr
			dq = p * cSeg * (tw - in)
			if s.fixed {
				break
			}
			taM, twM = in+0.5*dq/cSeg, tw-0.5*dq/cw
		}
		s.ta[base+sg] = in + dq/cSeg
		tw -= dq / cw
		q += dq
	}
	return tw, q
}
