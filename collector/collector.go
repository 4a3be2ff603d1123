// Package collector holds what every input shares: the Reading a source
// emits, the Source interface, and the per-terminal Sample that the
// assembler builds on the analysis grid. Sources judge nothing; they report
// values with a quality flag and leave judgement to fdd.
package collector

import (
	"context"
	"time"
)

// Quality says whether a reading can be used.
type Quality uint8

// Reading qualities.
const (
	Good    Quality = iota
	Missing         // no value (blank, NaN, gap)
	Bad             // device or file said the value is unreliable (fault/out-of-service flags, error marker)
	Stale           // value did not update when it should have
)

// String returns the quality's name.
func (q Quality) String() string {
	switch q {
	case Good:
		return "good"
	case Missing:
		return "missing"
	case Bad:
		return "bad"
	case Stale:
		return "stale"
	}
	return "unknown"
}

// Reading is one value of one point at one time, in SI units.
type Reading struct {
	Point   string // site point name (PointRef.Name)
	At      time.Time
	Value   float64 // SI; binary points are 0 or 1
	Quality Quality
}

// Source is any input: BACnet/IP, trend files, InfluxDB. Run sends batches of
// readings until ctx is cancelled or the source is exhausted (history sources
// return nil at the end of their range). A source owns its checkpoints.
type Source interface {
	Name() string
	Run(ctx context.Context, out chan<- []Reading) error
}

// Recycler is implemented by a Source that takes back the batches it sent
// once the consumer is done with them, so its next batches reuse their
// arrays instead of allocating (the trend-file reader sends millions of
// readings per file). A consumer calls Recycle only after it has stopped
// using every reading of the batch; a source must accept any batch it sent,
// at most once each.
type Recycler interface {
	Recycle(batch []Reading)
}

// Flags marks which fields of a Sample are missing or unusable.
type Flags uint32

// Sample field flags; a set bit means the field is missing or bad.
const (
	FlagAirflow Flags = 1 << iota
	FlagDischarge
	FlagSupply
	FlagValve
	FlagHotWater
	FlagPlant
	FlagFan
	FlagZone
	FlagZoneSet
	FlagOccupied
	FlagAirflowSet
	FlagOutdoor
)

// Sample is one terminal on the analysis grid (default 1 min): its own points
// joined with its AHU's and loop's. Temperatures °C, flows m³/s, valve 0..1.
type Sample struct {
	Terminal      int // index into site.Site.Terminals
	At            time.Time
	AirflowM3s    float64
	AirflowSetM3s float64
	DischargeC    float64
	SupplyC       float64
	ValveFrac     float64
	HotWaterC     float64
	ZoneC         float64
	ZoneSetC      float64
	OutdoorC      float64 // site outdoor-air temperature (site.Site.OutdoorAir)
	PlantOn       bool
	FanOn         bool
	Occupied      bool
	Flags         Flags // fields that are missing/bad at this step
}
