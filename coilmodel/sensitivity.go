package coilmodel

// Local sensitivities of the expected rise for the detector's linearisation
// (its Taylor reuse and residual variance). One full two-pass evaluation
// gives the rise; each sensitivity is then a one-sided finite difference
// whose perturbed point recomputes only what the perturbed input changes,
// with the fluid properties held at the base evaluation's second-pass
// temperatures (frozen properties, common practice for local sensitivities
// of a rating model: over a step of a few per cent the mean air and water
// temperatures move by a fraction of a kelvin, and the properties with them
// by a fraction of a per cent).
//
// What freezing leaves out is the feedback of the perturbed heat flow on the
// property temperatures. On the preset coils it changes a slope by about
// 1 % typically; it is largest where a property drives a coefficient
// steeply: in transitional water flow (Re 2,300-10⁴) h_w follows the
// viscosity, which falls by about 2 %/K, and the ln UA and water-flow slopes
// there differ from the full-model forward differences by up to 5-14 %
// (TestSensitivitiesAgainstForwardDifferences measures it point by point).

// SensitivitySteps are the finite steps of RiseSensitivities: airflow and
// water-flow steps (m³/s, added to the operating point's flows; non-zero)
// and the UA step as a factor on the UA multiplier (positive, ≠ 1).
type SensitivitySteps struct {
	AirflowM3s   float64
	WaterFlowM3s float64
	UAFactor     float64
}

// Sensitivities are the rise at an operating point and its one-sided
// finite-difference partial derivatives.
type Sensitivities struct {
	RiseK      float64 // ExpectedRiseWith(op, uaMult, 1), bit for bit
	DAirflow   float64 // ∂rise/∂airflow, K per m³/s
	DWaterFlow float64 // ∂rise/∂water flow, K per m³/s
	DLnUA      float64 // ∂rise/∂ln UA, K
}

// RiseSensitivities returns the rise at op with UA multiplier uaMult
// (absolute, as in ExpectedRiseWith; ≤ 0 means no heat transfer) and its
// partial derivatives with respect to airflow, water flow and ln UA as the
// forward differences (rise(x + step) − rise(x))/step, the UA one over the
// step ln s.UAFactor. The perturbed rises keep the base evaluation's
// second-pass fluid properties (see the file comment) and recompute only:
//
//   - airflow: the air side (Re_Dc ∝ ṁ_air, the Wang et al. (2000) j factor,
//     h = j·G_c·cp/Pr^(2/3), the Schmidt (1949) fin efficiency and the
//     surface effectiveness η_o = 1 − (A_f/A_o)·(1 − η_f)), UA (Jacobi,
//     Engineering Data Book III, Eq. 6.1.7), C_air = ṁ_air·cp, NTU = UA/C_air,
//     R = C_air/C_water and the effectiveness;
//   - water flow: the water side (Re ∝ V, the Hausen / Gnielinski (1995)
//     blend, h_w = Nu·k/D_i), UA, C_water, NTU, R and the effectiveness;
//   - UA: only the effectiveness at NTU × UAFactor (the multiplier scales UA
//     and nothing else; R is unchanged).
//
// The effectiveness is the serpentine relation of SerpentineEffectiveness
// (Nicole 1972). The derivatives differ from forward differences of
// ExpectedRiseWith at the same steps by the property change over the step
// only. An operating point without heat transfer (a flow not positive)
// falls back to full evaluations of the perturbed points, as does a
// perturbed flow that is not positive. A NaN input gives what the forward
// differences of ExpectedRiseWith give. No allocations.
func (k *Calibrated) RiseSensitivities(op Operating, uaMult float64, s SensitivitySteps) Sensitivities {
	m := &k.m
	ua := uaMult
	if ua <= 0 { // math.Max(uaMult, 0) as ExpectedRiseWith applies it (NaN stays NaN)
		ua = 0
	}
	lnUAStep := log(s.UAFactor)
	f := toFlows(op, 1)
	// The perturbed flows, as toFlows forms them at the perturbed inputs.
	fA, fW := f, f
	fA.mAir = (op.AirflowM3s + s.AirflowM3s) * op.airDensity()
	fW.qWater = op.WaterFlowM3s + s.WaterFlowM3s
	fW.mWater = fW.qWater * WaterDensity(op.EnteringWaterC)

	var st state
	if !(f.mAir > 0) || !(f.qWater > 0) {
		// No heat transfer: UA does not enter the rise (f − f keeps a NaN).
		m.eval(f, ua, &st)
		rise := st.rise
		return Sensitivities{
			RiseK:      rise,
			DAirflow:   (m.riseOf(fA, ua) - rise) / s.AirflowM3s,
			DWaterFlow: (m.riseOf(fW, ua) - rise) / s.WaterFlowM3s,
			DLnUA:      (rise - rise) / lnUAStep,
		}
	}
	var b sensBase
	m.evalBase(f, ua, &st, &b)
	rise := st.rise
	out := Sensitivities{RiseK: rise, DLnUA: (m.uaRise(&b, s.UAFactor) - rise) / lnUAStep}
	if fA.mAir > 0 {
		out.DAirflow = (m.airRise(&b, fA.mAir) - rise) / s.AirflowM3s
	} else {
		out.DAirflow = (m.riseOf(fA, ua) - rise) / s.AirflowM3s
	}
	if fW.qWater > 0 {
		out.DWaterFlow = (m.waterRise(&b, fW.qWater, fW.mWater) - rise) / s.WaterFlowM3s
	} else {
		out.DWaterFlow = (m.riseOf(fW, ua) - rise) / s.WaterFlowM3s
	}
	return out
}

// riseOf is the full two-pass rise at f.
func (m *model) riseOf(f flows, uaMult float64) float64 {
	var st state
	m.eval(f, uaMult, &st)
	return st.rise
}

// sensBase is what the partial re-computations keep of a base evaluation
// with heat transfer: its pass inputs, the second pass's property
// temperatures and properties, and its conductances.
type sensBase struct {
	pre          passInputs
	mAir, cpAir  float64
	taC, twC     float64 // property temperatures of the second pass
	a            airPoint
	w            waterPoint
	uaMult       float64
	hA           float64 // h·A_o, W/K
	hE           float64 // η_o·h·A_o, W/K
	hwA          float64 // h_w·A_i, W/K
	ntu, r       float64
	cWater, rise float64
}

// evalBase is eval at f (both flows positive: its heat-transfer branch,
// the same pass inputs and two passes) keeping in b what the partial
// re-computations need. The conductance products are formed as pass forms
// them, so an unperturbed re-computation gives st.rise bit for bit.
// TestRiseSensitivitiesRiseIsExpectedRise keeps it eval's twin.
func (m *model) evalBase(f flows, uaMult float64, st *state, b *sensBase) {
	*st = state{extrap: m.extrap}
	b.pre = m.passInputs(f)
	m.pass(f, &b.pre, uaMult, f.eat, f.ewt, st)
	b.taC, b.twC = 0.5*(f.eat+st.latC), 0.5*(f.ewt+st.lwtC)
	m.pass(f, &b.pre, uaMult, b.taC, b.twC, st)
	b.mAir, b.cpAir, b.uaMult = f.mAir, f.cpAir, uaMult
	b.a, b.w = tables.airAt(b.taC), tables.waterAt(b.twC)
	b.hA = st.hAir * m.s.OuterAreaM2
	b.hE = b.hA * st.etaO
	b.hwA = st.hWater * m.s.InnerAreaM2
	b.ntu, b.r, b.cWater, b.rise = st.ntu, st.r, st.cWater, st.rise
}

// airFilm is the air side at air properties a and ln(G_c·Dc) = lnGDc,
// lnGCp13 = ln G_c + (1/3)·ln cp: Wang et al. (2000) j at ln Re_Dc =
// ln(G_c·Dc) − ln μ, ln h = ln j + ln G_c + (1/3)·ln cp − (2/3)·ln(Pr/cp)
// (Colburn, h = j·G_c·cp/Pr^(2/3)), Schmidt (1949) η_f = tanh(x)/x at
// ln x = ½·ln h + ln finFactor, η_o = 1 − (A_f/A_o)·(1 − η_f). It returns
// h·A_o and η_o·h·A_o, as pass computes them.
func (m *model) airFilm(a airPoint, lnGDc, lnGCp13 float64) (hA, hE float64) {
	lj, _ := m.w.lnJ(lnGDc - a.lnMu)
	lnH := lj + lnGCp13 - a.a23
	h := exp(lnH)
	etaF := 1.0
	if m.hasFin {
		etaF = finEfficiency(0.5*lnH + m.lnFinFactor)
	}
	etaO := 1 - m.afFrac*(1-etaF)
	hA = h * m.s.OuterAreaM2
	return hA, hA * etaO
}

// waterFilm is h_w·A_i at water properties w and tube velocity × Di velDi:
// Re = (ρ/μ)·V·Di, Nu by the Hausen / Gnielinski (1995) blend
// (model.nusseltTube), h_w = Nu·k/D_i, as pass computes it.
func (m *model) waterFilm(w *waterPoint, velDi float64) float64 {
	reW := w.rhoMu * velDi
	nu, _ := m.nusseltTube(reW, log(velDi)+w.lnRhoMu, w)
	return nu * w.k * m.invDi * m.s.InnerAreaM2
}

// conductance is UA at the film conductances, Jacobi, Engineering Data Book
// III, Eq. 6.1.7: 1/UA = (1/(h·A_o) + R_fa/A_o)/η_o + R_wall + R_fw/A_i +
// 1/(h_w·A_i), over one denominator as in pass.
func (m *model) conductance(uaMult, hA, hE, hwA float64) float64 {
	return uaMult * hE * hwA / ((1+m.rFoulA*hA)*hwA + hE*(m.rSeries*hwA+1))
}

// airRise is the frozen-property rise at air mass flow mAir (> 0): the air
// mass flux moves ln Re_Dc and ln G_c by ln(ṁ'/ṁ); then UA, C_air, NTU, R
// and the effectiveness.
func (m *model) airRise(b *sensBase, mAir float64) float64 {
	dl := log(mAir / b.mAir)
	hA, hE := m.airFilm(b.a, b.pre.lnGDc+dl, b.pre.lnGCp13+dl)
	ua := m.conductance(b.uaMult, hA, hE, b.hwA)
	cAir := mAir * b.cpAir
	ntu := ua * (1 / cAir)
	return serpentine(m.rows, ntu, ntu*m.invRows, cAir/b.cWater) * b.pre.dt
}

// waterRise is the frozen-property rise at water flow q (m³/s, > 0) and
// mass flow mWater: the water side, UA, C_water, NTU, R and the
// effectiveness.
func (m *model) waterRise(b *sensBase, q, mWater float64) float64 {
	hwA := m.waterFilm(&b.w, q*m.velDiPerQ)
	ua := m.conductance(b.uaMult, b.hA, b.hE, hwA)
	ntu := ua * b.pre.invCAir
	return serpentine(m.rows, ntu, ntu*m.invRows, b.pre.cAir/(mWater*b.w.cp)) * b.pre.dt
}

// uaRise is the frozen-property rise at UA × factor: NTU scales, R does not.
func (m *model) uaRise(b *sensBase, factor float64) float64 {
	ntu := b.ntu * factor
	return serpentine(m.rows, ntu, ntu*m.invRows, b.r) * b.pre.dt
}

// passInputs are eval's pass inputs at f (both flows positive), formed as
// eval forms them.
func (m *model) passInputs(f flows) passInputs {
	lnM := log(f.mAir)
	lnCp := lnDryAirCp
	if f.cpAir != DryAirCp {
		lnCp = log(f.cpAir)
	}
	velDi := f.qWater * m.velDiPerQ
	cAir := f.mAir * f.cpAir
	return passInputs{
		lnGDc:   lnM + m.lnDcOverAc,
		lnGCp13: lnM + m.lnInvAc + lnCp/3,
		velDi:   velDi,
		lnVelDi: log(velDi),
		cAir:    cAir,
		invCAir: 1 / cAir,
		dt:      f.ewt - f.eat,
	}
}
