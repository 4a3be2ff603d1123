package bacnet

import (
	"fmt"

	"risewatch/units"
)

// EngineeringUnit is a BACnetEngineeringUnits value of the units property (117).
type EngineeringUnit uint32

// Engineering units the reader converts. Numbers from the @bacnet-js/client
// EngineeringUnits enum (they agree with bacnet-stack bacenum.h).
const (
	UnitWatts                EngineeringUnit = 47
	UnitKilowatts            EngineeringUnit = 48
	UnitBtusPerHour          EngineeringUnit = 50
	UnitPascals              EngineeringUnit = 53
	UnitKilopascals          EngineeringUnit = 54
	UnitBars                 EngineeringUnit = 55
	UnitPSI                  EngineeringUnit = 56
	UnitInchesOfWater        EngineeringUnit = 58
	UnitDegreesCelsius       EngineeringUnit = 62
	UnitKelvin               EngineeringUnit = 63
	UnitDegreesFahrenheit    EngineeringUnit = 64
	UnitCubicFeetPerMinute   EngineeringUnit = 84
	UnitCubicMetersPerSecond EngineeringUnit = 85
	UnitLitersPerSecond      EngineeringUnit = 87
	UnitUSGallonsPerMinute   EngineeringUnit = 89
	UnitNoUnits              EngineeringUnit = 95
	UnitPercent              EngineeringUnit = 98
	UnitDeltaFahrenheit      EngineeringUnit = 120
	UnitDeltaKelvin          EngineeringUnit = 121
	UnitCubicMetersPerHour   EngineeringUnit = 135
	UnitKiloBtusPerHour      EngineeringUnit = 157
)

// unitSpelling maps a BACnet unit to the canonical name and dimension in
// package units, which holds the conversion. ok is false for units without
// an SI conversion here (no-units included).
func unitSpelling(u EngineeringUnit) (name string, dim units.Dimension, ok bool) {
	switch u {
	case UnitWatts:
		return "W", units.Power, true
	case UnitKilowatts:
		return "kW", units.Power, true
	case UnitBtusPerHour:
		return "Btu/h", units.Power, true
	case UnitKiloBtusPerHour:
		return "MBH", units.Power, true
	case UnitPascals:
		return "Pa", units.Pressure, true
	case UnitKilopascals:
		return "kPa", units.Pressure, true
	case UnitBars:
		return "bar", units.Pressure, true
	case UnitPSI:
		return "psi", units.Pressure, true
	case UnitInchesOfWater:
		return "inH2O", units.Pressure, true
	case UnitDegreesCelsius:
		return "degC", units.Temperature, true
	case UnitKelvin:
		return "K", units.Temperature, true
	case UnitDegreesFahrenheit:
		return "degF", units.Temperature, true
	case UnitCubicFeetPerMinute:
		return "cfm", units.VolumeFlow, true
	case UnitCubicMetersPerSecond:
		return "m3/s", units.VolumeFlow, true
	case UnitCubicMetersPerHour:
		return "m3/h", units.VolumeFlow, true
	case UnitLitersPerSecond:
		return "L/s", units.VolumeFlow, true
	case UnitUSGallonsPerMinute:
		return "gpm", units.VolumeFlow, true
	case UnitPercent:
		return "%", units.Fraction, true
	case UnitDeltaFahrenheit:
		return "delta_degF", units.TempDiff, true
	case UnitDeltaKelvin:
		return "K", units.TempDiff, true
	}
	return "", units.NoDimension, false
}

// UnitOf returns the units-package unit for a BACnet engineering unit.
func UnitOf(u EngineeringUnit) (units.Unit, bool) {
	name, dim, ok := unitSpelling(u)
	if !ok {
		return units.Unit{}, false
	}
	return units.LookupUnit(name, dim)
}

// UnitName is the canonical unit name for messages and config skeletons
// ("degF"), or "bacnet-unit-N" when no conversion exists.
func UnitName(u EngineeringUnit) string {
	if un, ok := UnitOf(u); ok {
		return un.Name
	}
	if u == UnitNoUnits {
		return "no-units"
	}
	return fmt.Sprintf("bacnet-unit-%d", u)
}

// UnitCheck compares a point's configured unit with what the device reports.
type UnitCheck struct {
	Point      string
	Configured string          // unit from the site file ("" = none given)
	Device     EngineeringUnit // units property
	Mismatch   bool
	Message    string
}

// checkUnit decides whether the configured unit agrees with the device's.
// A device unit without conversion (no-units, or one not listed) is not a
// mismatch: nothing contradicts the configuration.
func checkUnit(point, configured string, dev EngineeringUnit) UnitCheck {
	c := UnitCheck{Point: point, Configured: configured, Device: dev}
	du, ok := UnitOf(dev)
	if !ok || configured == "" {
		return c
	}
	cu, err := units.LookupUnit(configured, du.Dim)
	if !err {
		if pu, perr := units.ParseUnit(configured); perr == nil {
			cu = pu
		} else {
			c.Mismatch = true
			c.Message = fmt.Sprintf("point %s: configured unit %q is not known; device reports %s", point, configured, du.Name)
			return c
		}
	}
	if cu.Name != du.Name || cu.Dim != du.Dim {
		c.Mismatch = true
		c.Message = fmt.Sprintf("point %s: configured unit %s but the device reports %s (units property %d); values are converted from the device's unit",
			point, cu.Name, du.Name, dev)
	}
	return c
}
