package sim

import (
	"fmt"
	"math"

	"risewatch/coilmodel"
)

// pass is one straight tube run of a water circuit: the tube at position pos
// (0 = top) in row row (0 = entering-air row), traversed forward (segment 0
// first) or backward.
type pass struct {
	row, pos int
	forward  bool
}

// coilGeom is the fixed geometry of one coil, discretised for the segment
// model: rows × tubes-per-row tube positions, each tube cut into segs
// segments along the finned length, and the water circuits as ordered lists
// of passes.
type coilGeom struct {
	rows, tubes, circuits, segs int

	widthM         float64 // finned tube length
	do, dc, di     float64 // tube OD, fin-collar OD, tube ID
	pt, pl         float64 // transverse and longitudinal pitch
	fp, tf         float64 // fin pitch, fin thickness
	kFin           float64
	minFlowAreaM2  float64 // whole-face minimum free-flow area A_c
	aoSeg, afSeg   float64 // air-side total and fin area of one segment
	aiSeg          float64 // water-side area of one segment
	rWallSeg       float64 // tube wall resistance of one segment, K/W
	finR1, finR2   float64 // equivalent annular fin radii
	bendK          float64
	dh             float64 // air-side hydraulic diameter 4·A_c·depth/A_o
	layout         coilmodel.TubeLayout
	physics        coilPhysics
	check          checkGeom // geometry-only terms of the rate-inputs physics
	circuitPasses  [][]pass
	circuitLengthM []float64
}

// Hydraulic constants for the circuits.
const (
	tubeRoughnessM = 1.5e-6 // drawn copper (Moody chart; common practice)
	defaultBendK   = 0.6    // 180° return bend, r/d ≈ 1.5 (Crane TP-410, K = 2·K90 method; common practice)
	circuitEndK    = 1.5    // header entrance 0.5 + exit 1.0 (Crane TP-410)
)

// newCoilGeom derives the segment geometry from the shared coil description.
// Circuits each take a band of adjacent tube positions and serpentine
// through it row by row, entering in the leaving-air row (overall
// counterflow), alternating direction at every return bend.
func newCoilGeom(c coilmodel.Coil, segs int) (*coilGeom, error) {
	if c.Rows < 1 || c.Rows > 8 {
		return nil, fmt.Errorf("coil rows %d: want 1..8", c.Rows)
	}
	if c.FaceWidthM <= 0 || c.FaceHeightM <= 0 {
		return nil, fmt.Errorf("coil face %.3f × %.3f m: want positive", c.FaceWidthM, c.FaceHeightM)
	}
	if c.TransversePitchM <= 0 || c.LongitudinalPitchM <= 0 || c.Tube.OuterDiaM <= 0 ||
		c.Tube.WallM <= 0 || c.Fin.PerM <= 0 || c.Fin.ThicknessM <= 0 {
		return nil, fmt.Errorf("coil tube/fin/pitch data missing or non-positive")
	}
	tubes := c.TubesPerRow
	if tubes == 0 {
		tubes = int(math.Floor(c.FaceHeightM/c.TransversePitchM + 1e-9))
	}
	if tubes < 1 {
		return nil, fmt.Errorf("coil face height %.3f m holds no tube at pitch %.4f m", c.FaceHeightM, c.TransversePitchM)
	}
	circ := c.Circuits
	if circ < 1 || circ > tubes {
		return nil, fmt.Errorf("coil circuits %d: want 1..%d (tubes per row)", circ, tubes)
	}
	if segs < 1 {
		segs = 1
	}
	g := &coilGeom{
		rows: c.Rows, tubes: tubes, circuits: circ, segs: segs,
		widthM: c.FaceWidthM,
		do:     c.Tube.OuterDiaM, di: c.Tube.OuterDiaM - 2*c.Tube.WallM,
		pt: c.TransversePitchM, pl: c.LongitudinalPitchM,
		fp: 1 / c.Fin.PerM, tf: c.Fin.ThicknessM, kFin: c.Fin.ConductivityWmK,
		bendK: c.ReturnBendK, layout: c.Layout,
	}
	if g.kFin <= 0 {
		g.kFin = 220 // aluminium 1100 (common practice)
	}
	kTube := c.Tube.ConductivityWmK
	if kTube <= 0 {
		kTube = 390 // copper (common practice)
	}
	if g.bendK <= 0 {
		g.bendK = defaultBendK
	}
	g.dc = g.do + 2*g.tf
	if g.di <= 0 || g.dc >= g.pt || g.tf >= g.fp {
		return nil, fmt.Errorf("coil tube/fin dimensions inconsistent (ID %.4f m, collar %.4f m, pitch %.4f m)", g.di, g.dc, g.pt)
	}
	segL := g.widthM / float64(segs)
	finsSeg := segL / g.fp
	g.afSeg = 2 * finsSeg * (g.pt*g.pl - math.Pi*g.dc*g.dc/4)
	g.aoSeg = g.afSeg + math.Pi*g.dc*segL*(1-g.tf/g.fp)
	g.aiSeg = math.Pi * g.di * segL
	g.rWallSeg = math.Log(g.do/g.di) / (2 * math.Pi * kTube * segL)
	// Minimum free-flow area between the fins: the transverse gap Pt − Dc,
	// or for staggered tubes the two diagonal gaps 2·(√((Pt/2)² + Pl²) − Dc)
	// when they are narrower (Kays & London, Compact Heat Exchangers, 3rd ed.,
	// ch. 10, tube-bank free-flow area).
	faceH := float64(tubes) * g.pt
	gap := g.pt - g.dc
	if c.Layout == coilmodel.Staggered {
		gap = math.Min(gap, 2*(math.Hypot(g.pt/2, g.pl)-g.dc))
	}
	if gap <= 0 {
		return nil, fmt.Errorf("coil tubes leave no air passage (collar %.4f m, pitches %.4f × %.4f m)", g.dc, g.pt, g.pl)
	}
	g.minFlowAreaM2 = g.widthM * faceH * gap * (g.fp - g.tf) / (g.pt * g.fp)
	// Equal-area annular fin: the rectangular fin share Pt·Pl of one tube
	// replaced by a circular fin of the same area (ASHRAE Handbook
	// Fundamentals ch. 4, "Fin efficiency", sector/equivalent-area method).
	g.dh = 4 * g.minFlowAreaM2 * float64(c.Rows) * g.pl / (g.aoSeg * float64(segs*tubes*c.Rows))
	g.finR1 = g.dc / 2
	g.finR2 = math.Sqrt(g.pt * g.pl / math.Pi)
	g.check = newCheckGeom(g)

	g.circuitPasses = make([][]pass, circ)
	g.circuitLengthM = make([]float64, circ)
	for ci := 0; ci < circ; ci++ {
		lo, hi := ci*tubes/circ, (ci+1)*tubes/circ
		fwd := true
		for r := c.Rows - 1; r >= 0; r-- {
			// Serpentine down the band in one row, back up in the next.
			if (c.Rows-1-r)%2 == 0 {
				for p := lo; p < hi; p++ {
					g.circuitPasses[ci] = append(g.circuitPasses[ci], pass{r, p, fwd})
					fwd = !fwd
				}
			} else {
				for p := hi - 1; p >= lo; p-- {
					g.circuitPasses[ci] = append(g.circuitPasses[ci], pass{r, p, fwd})
					fwd = !fwd
				}
			}
		}
		g.circuitLengthM[ci] = float64(len(g.circuitPasses[ci])) * g.widthM
	}
	return g, nil
}

// grayWebbJ is the Colburn j factor of plain plate fins on staggered round
// tubes, Gray & Webb (1986), Proc. 8th Int. Heat Transfer Conf. 6:2745, as
// reproduced in Webb & Kim, Principles of Enhanced Heat Transfer, 2nd ed.
// (2005), ch. 5: j4 = 0.14·Re_D^−0.328·(Pt/Pl)^−0.502·(s/Do)^0.0312 for four
// or more rows, and for N < 4 rows
// jN/j4 = 0.991·[2.24·Re_D^−0.092·(N/4)^−0.031]^(0.607·(4−N)).
// Re_D uses the tube outside diameter and the mass flux through A_c.
func (g *coilGeom) grayWebbJ(reD float64) float64 {
	s := g.fp - g.tf
	j4 := 0.14 * math.Pow(reD, -0.328) * math.Pow(g.pt/g.pl, -0.502) * math.Pow(s/g.do, 0.0312)
	n := float64(g.rows)
	if n >= 4 {
		return j4
	}
	return j4 * 0.991 * math.Pow(2.24*math.Pow(reD, -0.092)*math.Pow(n/4, -0.031), 0.607*(4-n))
}

// airSideConductance is η_o·h·A_o of one segment (W/K) in the simulator's
// own physics (Gray & Webb j, annular fin) at air mass flow mAir (kg/s,
// whole coil) and air temperature tC, with an air-side fouling
// resistance rfa (m²·K/W on A_o) in series with convection at every point of
// the fin (so the fin efficiency uses the reduced h), and a calibration
// factor on h.
func (g *coilGeom) airSideConductance(mAir, tC, rfa, hFactor float64) (uaSeg, hAir float64) {
	if mAir <= 0 {
		return 0, 0
	}
	gc := mAir / g.minFlowAreaM2
	j := g.grayWebbJ(gc * g.do / airViscosity(tC))
	hAir = hFactor * j * gc * airCp / math.Pow(airPr, 2.0/3.0)
	hEff := 1 / (1/hAir + rfa)
	eta := annularFinEfficiency(hEff, g.kFin, g.tf, g.finR1, g.finR2)
	etaO := 1 - g.afSeg/g.aoSeg*(1-eta)
	return etaO * hEff * g.aoSeg, hAir
}

// waterSideH is the in-tube heat-transfer coefficient (W/(m²·K)) for water
// mass flow mW (kg/s) in one tube at tC, over a straight pass of length
// passM (the flow is taken as re-developing after each return bend):
//   - turbulent, Re ≥ 10⁴: Gnielinski (1976), Int. Chem. Eng. 16:359, with
//     the Petukhov friction factor and the entrance factor [1 + (Di/L)^(2/3)]
//     (VDI Heat Atlas, 2nd ed. 2010, G1 §2.2);
//   - laminar, Re ≤ 2300: Sieder & Tate (1936), Ind. Eng. Chem. 28:1429,
//     Nu = 1.86·(Re·Pr·Di/L)^(1/3), wall-viscosity ratio taken as 1, not
//     below the fully developed 3.66;
//   - in between: linear in Re from Nu(2300) to Nu(10⁴) (Gnielinski 1995,
//     Forsch. Ingenieurwes. 61:240).
func (g *coilGeom) waterSideH(mW, tC, passM float64) float64 {
	if mW <= 0 {
		return 0
	}
	mu := waterViscosity(tC)
	kw := waterConductivity(tC)
	pr := mu * waterCp(tC) / kw
	re := 4 * mW / (math.Pi * g.di * mu)
	lam := func(re float64) float64 {
		return math.Max(3.66, 1.86*math.Cbrt(re*pr*g.di/passM))
	}
	turb := func(re float64) float64 {
		f := math.Pow(0.790*math.Log(re)-1.64, -2)
		nu := f / 8 * (re - 1000) * pr / (1 + 12.7*math.Sqrt(f/8)*(math.Pow(pr, 2.0/3.0)-1))
		return nu * (1 + math.Pow(g.di/passM, 2.0/3.0))
	}
	var nu float64
	switch {
	case re <= 2300:
		nu = lam(re)
	case re >= 1e4:
		nu = turb(re)
	default:
		w := (re - 2300) / (1e4 - 2300)
		nu = (1-w)*lam(2300) + w*turb(1e4)
	}
	return nu * kw / g.di
}

// churchillFriction is the Darcy friction factor for all flow regimes,
// Churchill (1977), Chem. Eng. 84(24):91.
func churchillFriction(re, relRough float64) float64 {
	if re < 1e-9 {
		re = 1e-9
	}
	a := math.Pow(-2.457*math.Log(math.Pow(7/re, 0.9)+0.27*relRough), 16)
	b := math.Pow(37530/re, 16)
	return 8 * math.Pow(math.Pow(8/re, 12)+math.Pow(a+b, -1.5), 1.0/12)
}

// circuitDP is the water pressure drop (Pa) of circuit ci at volumetric flow
// q (m³/s) and tC: Darcy–Weisbach with the Churchill friction factor over
// the straight length, plus return bends and header entry/exit,
// Δp = [f·L/Di + n_b·K_b + K_ends]·ρV²/2, times the circuit's resistance
// multiplier (a plugged or air-bound circuit).
func (g *coilGeom) circuitDP(ci int, q, tC, mult float64) float64 {
	if q <= 0 {
		return 0
	}
	rho := waterDensity(tC)
	area := math.Pi * g.di * g.di / 4
	v := q / area
	re := rho * v * g.di / waterViscosity(tC)
	nb := float64(len(g.circuitPasses[ci]) - 1)
	k := churchillFriction(re, tubeRoughnessM/g.di)*g.circuitLengthM[ci]/g.di + nb*g.bendK + circuitEndK
	return mult * k * rho * v * v / 2
}
