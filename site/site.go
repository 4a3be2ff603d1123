// Package site is the building model loaded from YAML: hot-water loops, air
// handlers, terminals with their coils and valves, and where each point's
// value comes from. Validation lives beside the structs and reports
// file:line:column.
//
// CONTRACT NOTE (lead): the exported types in this file are used by
// collector, sim, fdd, rules and the outputs. The site owner may add fields
// but must keep these names and meanings (or update every caller).
package site

import (
	"time"

	"gopkg.in/yaml.v3"

	"risewatch/coilmodel"
)

// Site is one building or campus.
type Site struct {
	Name       string
	File       string         // path it was loaded from (for messages)
	Location   *time.Location // site time zone (reports, schedules, trend files without offsets)
	ElevationM float64
	Energy     EnergyPrices
	Loops      []Loop
	AHUs       []AHU
	Terminals  []Terminal
	Sources    []SourceConfig
	// Daemon is the top-level daemon: section kept as raw YAML (nil when
	// absent); package daemon decodes and validates it with positions.
	Daemon *yaml.Node
	// OutdoorAir is the site's outdoor-air temperature point (optional).
	// The low-temperature readiness assessment regresses zone heating loads
	// on it to extrapolate them to DesignOutdoorC.
	OutdoorAir PointRef
	// DesignOutdoorC is the heating design outdoor dry bulb, °C (for
	// example the ASHRAE Handbook—Fundamentals 99.6 % value); nil if not given.
	DesignOutdoorC *float64
	// Index maps, filled by Load.
	LoopIndex     map[string]int
	AHUIndex      map[string]int
	TerminalIndex map[string]int
}

// EnergyPrices are used for the cost of faults.
type EnergyPrices struct {
	HeatPerKWh      float64 // currency per kWh of delivered heat (after plant efficiency)
	CoolingPerKWh   float64 // currency per kWh of delivered cooling
	Currency        string  // e.g. "USD"
	HeatingPlantEff float64 // boiler/heat pump efficiency or COP applied to heat (informational if price already delivered)
	CoolingPlantCOP float64
}

// PointKind is the kind of source a point is read from.
type PointKind int

// Point kinds.
const (
	PointNone PointKind = iota
	PointBACnet
	PointTrendColumn
	PointInflux
)

// BACnetRef addresses one property of one BACnet object.
type BACnetRef struct {
	Device     uint32 // device instance
	ObjectType string // "analog-input", "analog-value", "binary-input", ... (ASHRAE 135 names)
	Instance   uint32
	Property   string  // default "present-value"
	TrendLog   *uint32 // optional trend-log instance that logs this point
}

// InfluxRef addresses one series in InfluxDB.
type InfluxRef struct {
	Measurement string
	Field       string
	Tags        map[string]string
}

// PointRef says where a point's value comes from and in which unit.
type PointRef struct {
	Name   string // unique point name in the site (e.g. "VAV-2-07.DAT")
	Kind   PointKind
	Source string // name of a SourceConfig
	BACnet *BACnetRef
	Column string // trend-file column or long-layout point name
	Influx *InfluxRef
	Unit   string // unit the source delivers ("degF", "cfm", "%", "on/off"); converted to SI on read
	Binary bool
	// Fixed, when set, is a constant value (SI) used instead of a source.
	Fixed *float64
}

// Defined reports whether the reference points anywhere.
func (p PointRef) Defined() bool { return p.Kind != PointNone || p.Fixed != nil }

// Loop is a hot-water loop.
type Loop struct {
	ID            string
	DesignSupplyC float64
	DesignDeltaK  float64
	BranchDPPa    float64  // design branch differential pressure available to a terminal
	SupplyTemp    PointRef // optional; DesignSupplyC used when undefined
	PlantEnabled  PointRef // optional
	Device        *uint32  // BACnet device instance for point patterns (optional)
	Line          int      // YAML line of the loop's definition
}

// AHU is an air handler.
type AHU struct {
	ID        string
	SupplyAir PointRef
	FanStatus PointRef // optional
	DuctGainK float64  // SAT-to-box duct/fan heat gain, K
	Occupancy PointRef // optional occupied status
	Device    *uint32  // BACnet device instance for point patterns (optional)
	Line      int      // YAML line of the AHU's definition
}

// Terminal is one VAV box with a hot-water reheat coil.
type Terminal struct {
	ID        string
	AHU       string
	Loop      string
	Zone      string
	Building  string
	Location  string // room/ceiling location text for technicians
	InletIn   float64
	Oversized bool

	Coil  coilmodel.Coil
	Rated *coilmodel.RatedPoint // submittal rated point, when given
	Valve coilmodel.Valve

	MinAirflowM3s     float64
	MaxAirflowM3s     float64 // cooling maximum
	HeatingAirflowM3s float64 // heating maximum
	DesignLoadW       float64 // design heating load, 0 if unknown

	Points TerminalPoints

	// CoilPreset, when set, is the preset Coil was built from (before
	// calibration); Marshal writes the short preset form for it.
	CoilPreset *CoilPreset
	// Device is the BACnet device instance used by point patterns (optional).
	Device *uint32

	// Line is the YAML line of the terminal's definition (for messages).
	Line int
}

// TerminalPoints are a terminal's own points.
type TerminalPoints struct {
	Airflow         PointRef
	AirflowSetpoint PointRef
	Discharge       PointRef
	Valve           PointRef // valve command (or position), %
	ZoneTemp        PointRef
	ZoneSetpoint    PointRef
}

// SourceConfig configures one input.
type SourceConfig struct {
	Name      string
	Kind      string // "trendfile", "bacnet", "influx"
	Trendfile *TrendfileConfig
	BACnet    *BACnetConfig
	Influx    *InfluxConfig
	// Points are point-naming patterns by role: how this source names the
	// points of any loop, AHU or terminal that lists it in points_from.
	Points map[Role]PointPattern
	Line   int // YAML line of the source's definition
}

// TrendfileConfig configures exported CSV trend files.
type TrendfileConfig struct {
	Path         string // file or directory (drop folder)
	Layout       string // "wide" or "long"
	Delimiter    rune
	DecimalComma bool
	SkipRows     int
	TimeColumn   string
	PointColumn  string // long layout
	ValueColumn  string // long layout
	TimeFormat   string // Go layout, or "rfc3339", "unix"
	TimeZone     *time.Location
	Watch        bool
	Glob         string // drop-folder file pattern, default "*.csv"
	ProcessedDir string
}

// BACnetConfig configures the BACnet/IP client.
type BACnetConfig struct {
	Bind         string // local address:port
	BBMD         string // optional BBMD address:port for foreign-device registration
	TTL          time.Duration
	PollInterval time.Duration
	TrendSweep   time.Duration
	Timeout      time.Duration
	Retries      int
	// Devices maps device instance to its address, for devices not found by Who-Is.
	Devices map[uint32]string
}

// InfluxConfig configures the InfluxDB source.
type InfluxConfig struct {
	URL    string
	Org    string
	Bucket string
	// Token is read from the environment variable named here, never stored in YAML.
	TokenEnv string
	Page     time.Duration
}
