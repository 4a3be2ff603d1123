// Package coilmodel rates finned-tube hot-water heating coils from their
// geometry: properties, air- and water-side heat transfer, effectiveness-NTU
// for the real row/circuit arrangement, hydraulics, calibration to a submittal
// rated point and the inversions the detector needs. It is pure: no I/O, no
// clocks, no logging. All values are SI (m, m³/s, °C, K, W, Pa) unless a name
// says otherwise.
//
// CONTRACT NOTE (lead): the exported names in this file are used by site, sim,
// fdd and the CLI. The coilmodel owner may add fields and functions freely but
// must keep these names and meanings, or update every caller in the same commit.
package coilmodel

import "errors"

// TubeLayout is the tube pattern seen in the airflow direction.
type TubeLayout int

// Tube layouts.
const (
	Staggered TubeLayout = iota
	Inline
)

// Tube describes the (copper) tubes.
type Tube struct {
	OuterDiaM       float64 // tube outside diameter before expansion, m
	WallM           float64 // wall thickness, m
	ConductivityWmK float64 // tube wall conductivity, W/(m·K); copper ≈ 390
}

// Fin describes plain plate fins.
type Fin struct {
	PerM            float64 // fins per metre of tube (10 FPI = 393.7 /m)
	ThicknessM      float64 // fin thickness, m
	ConductivityWmK float64 // fin conductivity, W/(m·K); aluminium ≈ 220
	Material        string  // "aluminum" or "copper" (informational)
}

// Coil is the geometry of one hot-water coil. Face width is the finned tube
// length; face height is tubes-per-row × transverse pitch.
type Coil struct {
	FaceWidthM         float64
	FaceHeightM        float64
	Rows               int
	Circuits           int // parallel water circuits, each serpentine through all rows
	TubesPerRow        int // 0: derived from FaceHeightM / TransversePitchM
	Tube               Tube
	Fin                Fin
	TransversePitchM   float64 // Pt, m
	LongitudinalPitchM float64 // Pl, m
	Layout             TubeLayout
	ReturnBendK        float64 // minor-loss coefficient per return bend; 0 → default
	FoulingAirM2KW     float64 // air-side fouling resistance on A_o, m²·K/W
	FoulingWaterM2KW   float64 // water-side fouling resistance on A_i, m²·K/W
	UAMultiplier       float64 // calibration multiplier on UA; 0 is treated as 1
}

// Operating is one operating point of a coil.
type Operating struct {
	AirflowM3s     float64 // volumetric airflow as the BAS reports it
	AirDensityKgM3 float64 // density AirflowM3s refers to; 0 → standard air 1.204 kg/m³
	EnteringAirC   float64
	WaterFlowM3s   float64
	EnteringWaterC float64
	HumidityRatio  float64 // kg water per kg dry air; 0 → dry air
	BarometricPa   float64 // site barometric pressure for the air pressure drop; 0 → 101 325 Pa
}

// Regime is the water-side flow regime in the tubes.
type Regime int

// Flow regimes.
const (
	Laminar Regime = iota
	Transitional
	Turbulent
)

// Rating is the result of rating a coil at one operating point.
type Rating struct {
	CapacityW     float64
	LeavingAirC   float64
	LeavingWaterC float64
	AirDropPa     float64
	WaterDropPa   float64
	Regime        Regime
	// Diagnostics a caller may show.
	UAWK          float64 // overall UA, W/K
	NTUAir        float64 // UA / C_air
	RAir          float64 // C_air / C_water
	Effectiveness float64 // air-side temperature effectiveness P_a
	ReWater       float64
	ReAirDc       float64
	WaterVelMs    float64
	FaceVelMs     float64 // AirflowM3s / face area (same density basis as the airflow)
	HAirWm2K      float64 // air-side heat-transfer coefficient
	HWaterWm2K    float64 // water-side heat-transfer coefficient
	FinEfficiency float64 // Schmidt fin efficiency η_f
	SurfaceEff    float64 // surface efficiency η_o
	Extrapolated  Extrapolation
}

// RatedPoint is a submittal (schedule) rated point used for calibration.
type RatedPoint struct {
	CapacityW      float64
	AirflowM3s     float64 // standard air
	EnteringAirC   float64
	WaterFlowM3s   float64
	EnteringWaterC float64
}

// ErrNotIdentifiable is returned (wrapped) by the inversions when the
// observation lies outside what the coil can physically do.
var ErrNotIdentifiable = errors.New("not identifiable")

// ErrBadGeometry is returned (wrapped) for impossible coil data.
var ErrBadGeometry = errors.New("bad coil geometry")

// Characteristic is a valve's inherent flow characteristic.
type Characteristic int

// Inherent characteristics (ISA-75.11.01 / IEC 60534-2-4 terms).
const (
	EqualPercentage Characteristic = iota
	Linear
)

// Valve is a two-way control valve.
type Valve struct {
	Cv             float64 // US Cv at full open
	Characteristic Characteristic
	Rangeability   float64 // Cv,max/Cv,min; 0 → 50
	LeakageFrac    float64 // seat leakage as a fraction of full-open Cv
}
