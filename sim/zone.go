package sim

// zoneModel is a two-node thermal network of one zone (ISO 13790:2008
// simple hourly method structure, reduced to air and mass nodes): the air
// node (room air and light furnishings) exchanges heat with the supply air,
// outdoors through the envelope conductance, and the mass node through
// H_ms = h_ms·A_m (h_ms = 9.1 W/(m²·K), A_m = 2.5·A_floor for medium
// construction, ISO 13790 §12.2.2 and Table 12). Stepped by backward Euler,
// which is unconditionally stable at any step.
type zoneModel struct {
	airC, massC float64 // node temperatures
	capAir      float64 // J/K
	capMass     float64 // J/K
	hMass       float64 // W/K air–mass
	uaEnv       float64 // W/K envelope + infiltration
	floorM2     float64
	solarAperM2 float64 // effective solar aperture (glazing area × g-value)
}

// Zone constants (ISO 13790 Table 12, "medium" class, and common practice).
const (
	zoneHeightM       = 3.0
	furnishingFactor  = 5.0       // air-node capacity as a multiple of the room air (common practice)
	massCapPerM2      = 165e3     // J/(m²·K), ISO 13790 Table 12 "medium"
	hMassPerM2        = 9.1 * 2.5 // W/(m²·K) of floor: h_ms · A_m/A_f
	gainsOccWm2       = 22.0      // people + lights + plugs, occupied (common practice, offices)
	gainsUnoccWm2     = 4.0       // standby plugs and lighting
	gainsConvFraction = 0.6       // convective share; the rest goes to the mass node
)

func newZoneModel(floorM2, uaEnv, solarAper, startC float64) zoneModel {
	return zoneModel{
		airC: startC, massC: startC,
		capAir:  floorM2 * zoneHeightM * stdAirDensity * airCp * furnishingFactor,
		capMass: floorM2 * massCapPerM2,
		hMass:   floorM2 * hMassPerM2,
		uaEnv:   uaEnv, floorM2: floorM2, solarAperM2: solarAper,
	}
}

// zoneFlows are the heat flows into the air node over a step (W), kept for
// the energy-balance check and the true-load outputs.
type zoneFlows struct {
	SupplyW, EnvelopeW, MassW, GainsW float64
}

// step advances the zone by dt seconds with supply air mass flow mAir at
// supplyC, outdoor oatC, solar irradiance solar and occupancy occ.
func (z *zoneModel) step(dt, mAir, supplyC, oatC, solar float64, occ bool) zoneFlows {
	g := gainsUnoccWm2 * z.floorM2
	if occ {
		g = gainsOccWm2 * z.floorM2
	}
	gConv := gainsConvFraction * g
	gRad := (1-gainsConvFraction)*g + solar*z.solarAperM2
	cs := mAir * airCp
	// [a11 a12; a21 a22]·[Ta; Tm] = [b1; b2]
	a11 := z.capAir/dt + cs + z.uaEnv + z.hMass
	a12 := -z.hMass
	a21 := -z.hMass
	a22 := z.capMass/dt + z.hMass
	b1 := z.capAir/dt*z.airC + cs*supplyC + z.uaEnv*oatC + gConv
	b2 := z.capMass/dt*z.massC + gRad
	det := a11*a22 - a12*a21
	ta := (b1*a22 - a12*b2) / det
	tm := (a11*b2 - a21*b1) / det
	f := zoneFlows{
		SupplyW:   cs * (supplyC - ta),
		EnvelopeW: z.uaEnv * (oatC - ta),
		MassW:     z.hMass * (tm - ta),
		GainsW:    gConv,
	}
	z.airC, z.massC = ta, tm
	return f
}

// heatingLoadW is the heat the supply air must bring to hold the air node at
// setC right now (positive: heating needed): envelope and mass losses less
// convective gains.
func (z *zoneModel) heatingLoadW(setC, oatC float64, occ bool) float64 {
	g := gainsUnoccWm2 * z.floorM2
	if occ {
		g = gainsOccWm2 * z.floorM2
	}
	return z.uaEnv*(setC-oatC) + z.hMass*(setC-z.massC) - gainsConvFraction*g
}
