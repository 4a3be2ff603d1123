package coilmodel

import (
	"fmt"
	"math"
)

// Rate rates coil c at operating point op: capacity, leaving air and water
// temperatures, air and water pressure drops and the water-side flow regime.
//
// Method: UA from Wang, Chi & Chang (2000) j with Schmidt fin efficiency on
// the air side, Hausen / Gnielinski / VDI transition on the water side, tube
// wall and fouling in series (Jacobi, Engineering Data Book III, Eq. 6.1.7);
// the air-side effectiveness of the row arrangement (OneRowEffectiveness,
// SerpentineEffectiveness); properties at the mean stream temperatures (two
// passes), interpolated from tables of the property functions (relative
// error below 2e−5; see proptable.go). The air mass flow is AirflowM3s ×
// AirDensityKgM3; the water mass flow is WaterFlowM3s at the entering-water
// density. Each circuit is a serpentine through all rows, water entering the
// leaving-air row; identical parallel circuits share one effectiveness. The
// laminar (Hausen) entry length is one straight tube: each return bend is
// taken to remix the flow.
//
// Air pressure drop is the Kays & London core friction plus flow
// acceleration, ΔP = G²/2·[f·(A_o/A_c)/ρ_m + 2(1/ρ_out − 1/ρ_in)] (Jacobi, Data
// Book III, Eq. 6.1.13), with f from Wang et al. (2000); entrance and exit
// losses (about 0.02 in. w.g. at 500 fpm) and casing bypass are not included.
// Water pressure drop is Darcy-Weisbach with the Churchill (1977) friction
// factor over the straight tubes of one circuit plus ReturnBendK per return
// bend; headers and connections are not included.
func Rate(c Coil, op Operating) (Rating, error) {
	m, err := newModel(c)
	if err != nil {
		return Rating{}, err
	}
	return m.rate(op)
}

func (m *model) rate(op Operating) (Rating, error) {
	if err := op.Validate(); err != nil {
		return Rating{}, fmt.Errorf("operating point: %w", err)
	}
	f := toFlows(op, 1)
	var st state
	m.eval(f, m.uaMult, &st)
	rt := Rating{
		CapacityW:     st.capW,
		LeavingAirC:   st.latC,
		LeavingWaterC: st.lwtC,
		Regime:        st.regime,
		UAWK:          st.ua,
		NTUAir:        st.ntu,
		RAir:          st.r,
		Effectiveness: st.p,
		ReWater:       st.reWater,
		WaterVelMs:    st.velWater,
		FaceVelMs:     op.AirflowM3s / m.c.FaceAreaM2(),
		HAirWm2K:      st.hAir,
		HWaterWm2K:    st.hWater,
		FinEfficiency: st.etaFin,
		SurfaceEff:    st.etaO,
		Extrapolated:  st.extrap,
	}
	if f.mAir > 0 {
		p := op.BarometricPa
		if p <= 0 {
			p = StandardPressurePa
		}
		rhoIn := MoistAirDensity(op.EnteringAirC, p, op.HumidityRatio)
		rhoOut := MoistAirDensity(st.latC, p, op.HumidityRatio)
		g := f.mAir / m.s.MinFlowAreaM2
		lnRe := st.lnReAir
		if !st.heat {
			lnRe = log(g * m.dc / AirViscosity(op.EnteringAirC))
		}
		rt.ReAirDc = exp(lnRe)
		fan := exp(m.w.lnF(lnRe))
		vm := 0.5 * (1/rhoIn + 1/rhoOut)
		rt.AirDropPa = g * g / 2 * (fan*m.s.OuterAreaM2/m.s.MinFlowAreaM2*vm + 2*(1/rhoOut-1/rhoIn))
		rt.AirDropPa = math.Max(rt.AirDropPa, 0)
	}
	if f.qWater > 0 {
		w := waterAt(0.5 * (op.EnteringWaterC + st.lwtC))
		dp, vel, re := m.c.waterDrop(m.path, f.qWater, w)
		rt.WaterDropPa = dp
		if rt.ReWater == 0 {
			rt.WaterVelMs, rt.ReWater = vel, re
			rt.Regime = regimeOf(re)
		}
	}
	return rt, nil
}

func regimeOf(re float64) Regime {
	switch {
	case re < ReLaminarMax:
		return Laminar
	case re <= ReTurbulentMin:
		return Transitional
	}
	return Turbulent
}
