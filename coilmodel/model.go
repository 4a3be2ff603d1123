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

	// Logarithms and products the pass would otherwise recompute.
	lnInvAc     float64 // −ln A_c
	lnDcOverAc  float64 // ln(Dc/A_c): ln Re_Dc = ln ṁ_air + this − ln μ
	lnFinFactor float64 // ln finFactor (finite only when hasFin)
	invFF2      float64 // 1/finFactor²
	hasFin      bool    // finFactor > 0 (a fin parameter φ of zero means η_f = 1)
	rSeries     float64 // rWall + rFoulW
	velDiPerQ   float64 // V·Di per m³/s of total water flow
	invDi       float64
	lnDOverL    float64
	hausen23    float64 // (2300·Di/L)^(2/3), Hausen at the laminar limit
	invRows     float64
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
	m.rWall = log(c.Tube.OuterDiaM/c.InnerDiaM()) / (2 * math.Pi * c.tubeK() * s.Tubes * c.FaceWidthM)
	m.rFoulW = c.FoulingWaterM2KW / s.InnerAreaM2
	m.rFoulA = c.FoulingAirM2KW / s.OuterAreaM2
	m.lnInvAc = -log(s.MinFlowAreaM2)
	m.lnDcOverAc = log(m.dc) + m.lnInvAc
	if m.finFactor > 0 && !math.IsInf(m.finFactor, 0) {
		m.hasFin = true
		m.lnFinFactor = log(m.finFactor)
		m.invFF2 = 1 / (m.finFactor * m.finFactor)
	}
	m.rSeries = m.rWall + m.rFoulW
	m.invRows = 1 / float64(c.Rows)
	m.invDi = 1 / m.path.di
	m.velDiPerQ = m.invFlowArea * m.path.di
	m.lnDOverL = log(m.dOverL)
	g := m.dOverL * ReLaminarMax
	m.hausen23 = math.Cbrt(g * g)
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
	hAir, etaFin, etaO        float64
	lnReAir                   float64 // ln Re_Dc (valid when heat)
	heat                      bool    // a heat-transfer pass ran (both flows positive)
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
// gives both the capacity and the outlet temperature. Properties come from
// the interpolation tables (proptable.go).
func (m *model) eval(f flows, uaMult float64, st *state) {
	*st = state{extrap: m.extrap}
	if !(f.mAir > 0) || !(f.qWater > 0) {
		st.latC, st.lwtC = f.eat, f.ewt
		switch {
		case f.mAir != f.mAir || f.qWater != f.qWater: // a NaN flow: no rating
			st.latC, st.lwtC = math.NaN(), math.NaN()
		case f.mAir > 0: // no water: the coil settles at the air temperature
			st.lwtC = f.eat
		case f.qWater > 0: // no air: still air reaches the water temperature
			st.latC = f.ewt
		}
		st.rise = st.latC - f.eat
		return
	}
	lnM := log(f.mAir)
	lnCp := lnDryAirCp
	if f.cpAir != DryAirCp {
		lnCp = log(f.cpAir)
	}
	velDi := f.qWater * m.velDiPerQ
	cAir := f.mAir * f.cpAir
	pre := passInputs{
		lnGDc:   lnM + m.lnDcOverAc,
		lnGCp13: lnM + m.lnInvAc + lnCp/3,
		velDi:   velDi,
		lnVelDi: log(velDi),
		cAir:    cAir,
		invCAir: 1 / cAir,
		dt:      f.ewt - f.eat,
	}
	m.pass(f, &pre, uaMult, f.eat, f.ewt, st)
	m.pass(f, &pre, uaMult, 0.5*(f.eat+st.latC), 0.5*(f.ewt+st.lwtC), st)
}

// lnDryAirCp is ln DryAirCp.
var lnDryAirCp = math.Log(DryAirCp)

// passInputs are the flow quantities that do not change between passes.
type passInputs struct {
	lnGDc   float64 // ln(G_c·Dc), G_c the air mass flux in A_c
	lnGCp13 float64 // ln G_c + (1/3)·ln cp
	velDi   float64 // water velocity in one tube × Di, m²/s
	lnVelDi float64
	cAir    float64 // ṁ_air·cp, W/K
	invCAir float64
	dt      float64 // EWT − EAT
}

// pass is one evaluation with air properties at taC and water properties at twC.
func (m *model) pass(f flows, pre *passInputs, uaMult, taC, twC float64, st *state) {
	// Air side: Wang et al. (2000) j, h = j·G_c·cp/Pr^(2/3); Schmidt fin
	// efficiency η_f = tanh(x)/x, x = m·r·φ = finFactor·√h. With Pr/cp a
	// function of temperature only (airPrFactor), ln h = ln j + ln G_c +
	// (1/3)·ln cp − (2/3)·ln(Pr/cp).
	a := tables.airAt(taC)
	lnRe := pre.lnGDc - a.lnMu
	lj, outside := m.w.lnJ(lnRe)
	if outside {
		st.extrap |= ExtrapAirRe
	}
	lnH := lj + pre.lnGCp13 - a.a23
	h := exp(lnH)
	etaF := 1.0
	if m.hasFin {
		etaF = finEfficiency(0.5*lnH + m.lnFinFactor)
	}
	etaO := 1 - m.afFrac*(1-etaF)

	// Water side: Hausen / Gnielinski / VDI blend.
	w := tables.waterAt(twC)
	reW := w.rhoMu * pre.velDi
	if w.pr < 0.5 || w.pr > 2000 {
		st.extrap |= ExtrapWaterPrandtl
	}
	nu, regime := m.nusseltTube(reW, pre.lnVelDi+w.lnRhoMu, &w)
	hw := nu * w.k * m.invDi

	// Overall conductance, Jacobi, Engineering Data Book III, Eq. 6.1.7:
	// 1/UA = (1/(h·A_o) + R_fa/A_o)/η_o + R_wall + R_fw/A_i + 1/(h_w·A_i),
	// brought over one denominator.
	hA := h * m.s.OuterAreaM2
	hE := hA * etaO
	hwA := hw * m.s.InnerAreaM2
	ua := uaMult * hE * hwA / ((1+m.rFoulA*hA)*hwA + hE*(m.rSeries*hwA+1))

	cAir := pre.cAir
	cWater := f.mWater * w.cp
	ntu := ua * pre.invCAir
	r := cAir / cWater
	p := serpentine(m.rows, ntu, ntu*m.invRows, r)

	st.rise = p * pre.dt
	st.latC = f.eat + st.rise
	st.capW = st.rise * cAir
	st.lwtC = f.ewt - st.rise*r
	st.ua, st.ntu, st.r, st.p = ua, ntu, r, p
	st.cAir, st.cWater = cAir, cWater
	st.hAir, st.etaFin, st.etaO, st.lnReAir = h, etaF, etaO, lnRe
	st.hWater, st.reWater, st.velWater, st.regime = hw, reW, pre.velDi*m.invDi, regime
	st.heat = true
}
