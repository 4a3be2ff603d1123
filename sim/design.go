package sim

import (
	"fmt"
	"math"

	"risewatch/coilmodel"
	"risewatch/units"
)

// inletSize is the common-practice coil face and airflow range of a VAV box
// by round inlet diameter (typical single-duct reheat box dimensions; common
// practice, not one maker's catalogue).
type inletSize struct {
	faceWIn, faceHIn float64 // coil face: finned width × height
}

var inletTable = map[float64]inletSize{
	6: {12, 7.5}, 8: {14, 10}, 10: {16, 12.5}, 12: {18, 15}, 14: {22, 17.5}, 16: {26, 18.75},
}

// Solar aperture (glazing area × solar transmittance) per floor area by
// exposure (common practice for an office perimeter zone).
var exposures = map[string]float64{"interior": 0, "north": 0.02, "east": 0.05, "south": 0.08, "west": 0.05}

// Design constants (common practice).
const (
	designInletFPM  = 1800.0 // inlet velocity at cooling maximum
	minFlowFrac     = 0.30   // minimum airflow / cooling maximum
	heatMaxFrac     = 0.50   // heating maximum / cooling maximum
	tubePitchIn     = 1.25
	rowPitchIn      = 1.083
	valveAuthority  = 0.5 // valve Δp share of the branch Δp at design flow
	designRatingEAT = 55.0
)

// standardCv is the Cv series of small characterised valves (an R10-like
// series; common practice).
var standardCv = []float64{0.25, 0.4, 0.63, 1.0, 1.6, 2.5, 4.0, 6.3, 10}

// terminalDesign is everything derived from a TerminalSpec before the run.
type terminalDesign struct {
	coil                        coilmodel.Coil
	valve                       coilmodel.Valve
	minM3s, coolMaxM3s, heatMax float64
	areaM2, uaEnv, solarAper    float64
	designLoadW                 float64 // coil heat at design: zone loss + air from SAT to heating setpoint at heating max
	designWaterM3s              float64
	rated                       coilmodel.RatedPoint
}

// coilFor builds the coil geometry of a box of the given inlet size: 1/2 in
// copper tubes at 1.25 in × 1.083 in staggered pitch, 0.0045 in aluminium
// plate fins; an oversized box takes the face of the next inlet size up.
func coilFor(t *TerminalSpec) coilmodel.Coil {
	sz := inletTable[t.InletIn]
	if t.Oversized {
		sz = inletSize{sz.faceWIn + 4, sz.faceHIn + 2.5}
	}
	tubes := int(math.Floor(sz.faceHIn/tubePitchIn + 1e-9))
	circ := t.Circuits
	if circ == 0 {
		circ = int(math.Ceil(float64(tubes*t.Rows) / 8)) // at most 8 passes per circuit
		circ = min(circ, tubes)
	}
	return coilmodel.Coil{
		FaceWidthM: units.InToM(sz.faceWIn), FaceHeightM: units.InToM(float64(tubes) * tubePitchIn),
		Rows: t.Rows, Circuits: circ, TubesPerRow: tubes,
		Tube:             coilmodel.Tube{OuterDiaM: units.InToM(0.5), WallM: units.InToM(0.016), ConductivityWmK: 390},
		Fin:              coilmodel.Fin{PerM: units.FPIToPerM(t.FPI), ThicknessM: units.InToM(0.0045), ConductivityWmK: 220, Material: "aluminum"},
		TransversePitchM: units.InToM(tubePitchIn), LongitudinalPitchM: units.InToM(rowPitchIn),
		Layout:      coilmodel.Staggered,
		ReturnBendK: defaultBendK,
	}
}

// designTerminal sizes airflows, zone envelope and valve for one terminal.
func designTerminal(t *TerminalSpec, a *AHUSpec, l *LoopSpec, segs int, hFactor float64) (terminalDesign, error) {
	var d terminalDesign
	d.coil = coilFor(t)
	r := t.InletIn / 2 * units.MetrePerInch
	inletArea := math.Pi * r * r
	d.coolMaxM3s = units.CFMToM3s(5 * math.Round(units.M3sToCFM(inletArea*units.FPMToMs(designInletFPM))/5))
	d.minM3s = units.CFMToM3s(5 * math.Round(units.M3sToCFM(minFlowFrac*d.coolMaxM3s)/5))
	d.heatMax = units.CFMToM3s(5 * math.Round(units.M3sToCFM(heatMaxFrac*d.coolMaxM3s)/5))
	d.areaM2 = units.FtToM(1) * units.FtToM(1) * t.AreaFt2
	if t.AreaFt2 == 0 {
		d.areaM2 = units.FtToM(1) * units.FtToM(1) * 0.9 * units.M3sToCFM(d.coolMaxM3s) // ~0.9 ft²/cfm
	}
	mHeat := d.heatMax * stdAirDensity
	zoneLoss := t.LoadFrac * mHeat * airCp * (a.datMaxC - a.heatSetC)
	designOAT := l.designOutdoorC
	if t.Exposure == "interior" {
		d.uaEnv = 0.5 * d.areaM2
	} else {
		d.uaEnv = zoneLoss / (a.heatSetC - designOAT)
	}
	d.solarAper = exposures[t.Exposure] * d.areaM2
	sat := a.satAtLowC + a.ductGainK
	d.designLoadW = d.uaEnv*(a.heatSetC-designOAT) + mHeat*airCp*(a.heatSetC-sat)

	// Design water flow at the loop's design ΔT for the coil heat at heating
	// max and max discharge, and a valve sized for the design authority.
	coilW := mHeat * airCp * (a.datMaxC - sat)
	rho := waterDensity(l.supplyAtDesignC)
	d.designWaterM3s = coilW / (rho * waterCp(l.supplyAtDesignC) * l.designDeltaK)
	cv := t.Cv
	if cv == 0 {
		dpValvePSI := units.PaToPSI(valveAuthority * l.dpSetpointPa)
		want := units.M3sToGPM(d.designWaterM3s) / math.Sqrt(dpValvePSI)
		cv = standardCv[0]
		for _, c := range standardCv {
			if math.Abs(math.Log(c/want)) < math.Abs(math.Log(cv/want)) {
				cv = c
			}
		}
	}
	d.valve = coilmodel.Valve{Cv: cv, Characteristic: coilmodel.EqualPercentage, Rangeability: 50, LeakageFrac: 0.0005}
	if t.Linear {
		d.valve.Characteristic = coilmodel.Linear
	}
	// Submittal rated point: the segment model at heating max airflow,
	// 55 °F entering air, design water flow and design supply temperature.
	g, err := newCoilGeom(d.coil, segs)
	if err != nil {
		return d, fmt.Errorf("terminal %s: %w", t.ID, err)
	}
	s := newCoilSolver(g, hFactor)
	eat := units.FToC(designRatingEAT)
	circ := make([]float64, g.circuits)
	h := newCoilHydraulics(g)
	h.ensure(l.supplyAtDesignC)
	_, i, w := h.dpAt(d.designWaterM3s)
	h.split(d.designWaterM3s, i, w, circ)
	for k := range circ {
		circ[k] *= rho
	}
	res := s.solveExact(mHeat, eat, circ, l.supplyAtDesignC)
	d.rated = coilmodel.RatedPoint{CapacityW: res.HeatW, AirflowM3s: d.heatMax, EnteringAirC: eat,
		WaterFlowM3s: d.designWaterM3s, EnteringWaterC: l.supplyAtDesignC}
	return d, nil
}
