package coilmodel

import "math"

// model is a coil with every geometry-only quantity precomputed. Rate builds
// one per call; Calibrated keeps one, so ExpectedRise does only the
// flow- and temperature-dependent work.
type model struct {
	c           Coil
	s           Surfaces
	w           wang
	rows        int
	path        circuitPath
	dOverL      float64 // Di / straight tube length (Hausen entry length)
	finFactor   float64 // √(2/(k_f·δf))·r·φ, so m·r·φ = finFactor·√h
	afFrac      float64 // A_f / A_o
	dc          float64
	rWall       float64 // ln(Do/Di)/(2π·k_t·L_tot), K/W
	rFoulW      float64 // R_fw/A_i, K/W
	rFoulA      float64 // R_fa/A_o (divided by η_o at run time), K/W
	uaMult      float64
	circuits    float64
	invAc       float64       // 1/A_c
	invFlowArea float64       // 1/(circuits·tube flow area)
	extrap      Extrapolation // geometry-only flags
}

func newModel(c Coil) (model, error) {
	if err := c.Validate(); err != nil {
		return model{}, err
	}
	s := SurfacesOf(c)
	if !(s.OuterAreaM2 > 0) || !(s.MinFlowAreaM2 > 0) || !(s.HydDiaM > 0) {
		return model{}, badGeometry("fins and tubes leave no air passage (A_o %g m², A_c %g m²)", s.OuterAreaM2, s.MinFlowAreaM2)
	}
	m := model{
		c: c, s: s, w: newWang(c, s), rows: c.Rows, path: c.path(),
		dc: c.CollarDiaM(), uaMult: c.uaMult(), circuits: float64(c.Circuits),
	}
	m.dOverL = m.path.di / m.path.straightM
	m.invAc = 1 / s.MinFlowAreaM2
	m.invFlowArea = 1 / (m.circuits * m.path.areaM2)
	m.finFactor = math.Sqrt(2/(c.finK()*c.Fin.ThicknessM)) * (m.dc / 2) * SchmidtPhi(c)
	m.afFrac = s.FinAreaM2 / s.OuterAreaM2
	m.rWall = math.Log(c.Tube.OuterDiaM/c.InnerDiaM()) / (2 * math.Pi * c.tubeK() * s.Tubes * c.FaceWidthM)
	m.rFoulW = c.FoulingWaterM2KW / s.InnerAreaM2
	m.rFoulA = c.FoulingAirM2KW / s.OuterAreaM2
	if m.w.geometryOutsideFitted {
		m.extrap |= ExtrapGeometry
	}
	if c.Layout == Inline {
		m.extrap |= ExtrapInline
	}
	return m, nil
}

// state is the result of evaluating the model at one operating point.
type state struct {
	rise, capW, latC, lwtC    float64
	ua, ntu, r, p             float64
	cAir, cWater              float64
	hAir, etaFin, etaO, reAir float64
	hWater, reWater, velWater float64
	regime                    Regime
	extrap                    Extrapolation
}

// flows is the operating point reduced to what the heat transfer needs.
type flows struct {
	mAir   float64 // kg/s of moist air
	cpAir  float64 // J/(kg·K) per kg of moist air
	qWater float64 // m³/s
	mWater float64 // kg/s (density at entering water temperature)
	eat    float64
	ewt    float64
}

func toFlows(op Operating, flowMult float64) flows {
	w := op.HumidityRatio
	q := op.WaterFlowM3s * flowMult
	return flows{
		mAir:   op.AirflowM3s * op.airDensity(),
		cpAir:  MoistAirCp(w) / (1 + w),
		qWater: q,
		mWater: q * WaterDensity(op.EnteringWaterC),
		eat:    op.EnteringAirC,
		ewt:    op.EnteringWaterC,
	}
}

// eval rates the coil with UA multiplier uaMult. Properties are evaluated in
// two passes: first at the inlet temperatures, then at the mean air and mean
// water temperatures the first pass predicts (air at (EAT + LAT)/2, water at
// (EWT + LWT)/2). Energy is conserved exactly within a pass: one cp per stream
// gives both the capacity and the outlet temperature.
func (m *model) eval(f flows, uaMult float64, st *state) {
	*st = state{extrap: m.extrap}
	if !(f.mAir > 0) || !(f.qWater > 0) {
		st.latC, st.lwtC = f.eat, f.ewt
		switch {
		case f.mAir > 0: // no water: the coil settles at the air temperature
			st.lwtC = f.eat
		case f.qWater > 0: // no air: still air reaches the water temperature
			st.latC = f.ewt
		}
		st.rise = st.latC - f.eat
		return
	}
	pre := passInputs{
		g:   f.mAir * m.invAc,
		vel: f.qWater * m.invFlowArea,
	}
	m.pass(f, pre, uaMult, f.eat, f.ewt, st)
	m.pass(f, pre, uaMult, 0.5*(f.eat+st.latC), 0.5*(f.ewt+st.lwtC), st)
}

// passInputs are the flow quantities that do not change between passes.
type passInputs struct {
	g   float64 // air mass flux in the minimum free-flow area, kg/(m²·s)
	vel float64 // water velocity in one tube, m/s
}

// airMuPr is AirViscosity(taC) and μ·cp/k with one square root: both are
// Sutherland laws, so the T^1.5 factors cancel in the Prandtl number.
func airMuPr(taC, cp float64) (mu, pr float64) {
	t := taC + 273.15
	r := t / 273.15
	mu = 1.716e-5 * r * math.Sqrt(r) * (273.15 + 110.4) / (t + 110.4)
	// μ/k = (μ0/k0)·[(T0 + Sμ)/(T + Sμ)]·[(T + Sk)/(T0 + Sk)]
	pr = cp * (1.716e-5 / 0.0241) * (273.15 + 110.4) / (273.15 + 194.4) * (t + 194.4) / (t + 110.4)
	return mu, pr
}

// pass is one evaluation with air properties at taC and water properties at twC.
func (m *model) pass(f flows, pre passInputs, uaMult, taC, twC float64, st *state) {
	// Air side: Wang et al. (2000) j, h = j·G_c·cp/Pr^(2/3); Schmidt fin efficiency.
	mu, pr := airMuPr(taC, f.cpAir)
	g := pre.g
	re := g * m.dc / mu
	j, outside := m.w.colburnJ(re)
	if outside {
		st.extrap |= ExtrapAirRe
	}
	h := j * g * f.cpAir / math.Cbrt(pr*pr)
	x := m.finFactor * math.Sqrt(h)
	etaF := 1.0
	if x > 1e-8 {
		etaF = math.Tanh(x) / x
	}
	etaO := 1 - m.afFrac*(1-etaF)

	// Water side: Hausen / Gnielinski / VDI blend.
	w := waterAt(twC)
	vel := pre.vel
	reW := w.rho * vel * m.path.di / w.mu
	prW := w.mu * w.cp / w.k
	if prW < 0.5 || prW > 2000 {
		st.extrap |= ExtrapWaterPrandtl
	}
	nu, regime := NusseltTube(reW, prW, m.dOverL)
	hw := nu * w.k / m.path.di

	// Overall conductance, Jacobi, Engineering Data Book III, Eq. 6.1.7.
	rTot := (1/(h*m.s.OuterAreaM2)+m.rFoulA)/etaO + m.rWall + m.rFoulW + 1/(hw*m.s.InnerAreaM2)
	ua := uaMult / rTot

	cAir := f.mAir * f.cpAir
	cWater := f.mWater * w.cp
	ntu := ua / cAir
	r := cAir / cWater
	p := SerpentineEffectiveness(m.rows, ntu, r)
	dt := f.ewt - f.eat
	q := p * cAir * dt

	st.rise = p * dt
	st.latC = f.eat + st.rise
	st.capW = q
	st.lwtC = f.ewt - q/cWater
	st.ua, st.ntu, st.r, st.p = ua, ntu, r, p
	st.cAir, st.cWater = cAir, cWater
	st.hAir, st.etaFin, st.etaO, st.reAir = h, etaF, etaO, re
	st.hWater, st.reWater, st.velWater, st.regime = hw, reW, vel, regime
}
