package site

import "risewatch/units"

// Role is what a point means to its loop, AHU or terminal. Its YAML key is
// String(); its point-name suffix is Suffix().
type Role int

// Point roles. Terminal roles first, then AHU, then loop, then site.
const (
	RoleNone Role = iota
	RoleAirflow
	RoleAirflowSetpoint
	RoleDischarge
	RoleValve
	RoleZoneTemp
	RoleZoneSetpoint
	RoleSupplyAir
	RoleFanStatus
	RoleOccupancy
	RoleSupplyTemp
	RolePlantEnabled
	RoleOutdoorAir
	numRoles
)

type roleInfo struct {
	key, suffix string
	dim         units.Dimension
	doc         string
}

var roleInfos = [numRoles]roleInfo{
	RoleNone:            {"none", "", units.NoDimension, ""},
	RoleAirflow:         {"airflow", "AF", units.VolumeFlow, "measured box airflow"},
	RoleAirflowSetpoint: {"airflow_setpoint", "AFSP", units.VolumeFlow, "active airflow setpoint"},
	RoleDischarge:       {"discharge", "DAT", units.Temperature, "discharge air temperature"},
	RoleValve:           {"valve", "VLV", units.Fraction, "reheat valve command or position"},
	RoleZoneTemp:        {"zone_temp", "ZNT", units.Temperature, "zone temperature"},
	RoleZoneSetpoint:    {"zone_setpoint", "ZNSP", units.Temperature, "active zone heating setpoint"},
	RoleSupplyAir:       {"supply_air", "SAT", units.Temperature, "AHU supply air temperature"},
	RoleFanStatus:       {"fan_status", "FAN", units.Binary, "supply fan status"},
	RoleOccupancy:       {"occupancy", "OCC", units.Binary, "occupied mode"},
	RoleSupplyTemp:      {"supply_temp", "HWST", units.Temperature, "hot-water supply temperature"},
	RolePlantEnabled:    {"plant_enabled", "HWEN", units.Binary, "heating plant enabled"},
	RoleOutdoorAir:      {"outdoor_air", "OAT", units.Temperature, "outdoor-air temperature (site)"},
}

// String returns the role's YAML key ("discharge").
func (r Role) String() string {
	if r < 0 || r >= numRoles {
		return "unknown"
	}
	return roleInfos[r].key
}

// Suffix returns the role's point-name suffix ("DAT"): a point's Name is
// "<loop, AHU or terminal ID>.<suffix>", e.g. "VAV-2-07.DAT", "AHU-1.SAT",
// "HW-1.HWST"; the site's own points use the entity ID SiteEntity
// ("site.OAT").
func (r Role) Suffix() string {
	if r < 0 || r >= numRoles {
		return ""
	}
	return roleInfos[r].suffix
}

// Dimension is the kind of quantity the role carries.
func (r Role) Dimension() units.Dimension {
	if r < 0 || r >= numRoles {
		return units.NoDimension
	}
	return roleInfos[r].dim
}

// Binary reports whether the role is an on/off state.
func (r Role) Binary() bool { return r.Dimension() == units.Binary }

var (
	terminalRoles = []Role{RoleAirflow, RoleAirflowSetpoint, RoleDischarge, RoleValve, RoleZoneTemp, RoleZoneSetpoint}
	ahuRoles      = []Role{RoleSupplyAir, RoleFanStatus, RoleOccupancy}
	loopRoles     = []Role{RoleSupplyTemp, RolePlantEnabled}
	siteRoles     = []Role{RoleOutdoorAir}
	allRoles      = append(append(append(append([]Role(nil), terminalRoles...), ahuRoles...), loopRoles...), siteRoles...)
)

func roleKeys(rs []Role) []string {
	out := make([]string, len(rs))
	for i, r := range rs {
		out[i] = r.String()
	}
	return out
}

func roleByKey(k string) Role {
	for _, r := range allRoles {
		if r.String() == k {
			return r
		}
	}
	return RoleNone
}

// PointName is the site-unique name of an entity's point: "VAV-2-07.DAT".
// Sources key their readings (collector.Reading.Point) by it.
func PointName(entityID string, r Role) string { return entityID + "." + r.Suffix() }

// SiteEntity is the entity ID of the site's own points (outdoor air).
const SiteEntity = "site"

// Ref returns the site point for role r (nil for a non-site role).
func (s *Site) Ref(r Role) *PointRef {
	if r == RoleOutdoorAir {
		return &s.OutdoorAir
	}
	return nil
}

// PointUse is one defined point with what it belongs to.
type PointUse struct {
	Ref      *PointRef
	Role     Role
	Entity   string // loop, AHU or terminal ID
	Terminal int    // index in Site.Terminals, or -1
	AHU      int    // index in Site.AHUs, or -1
	Loop     int    // index in Site.Loops, or -1
}

// Points lists every defined point of the site (fixed values included), in
// file order: the site's outdoor air, loops, AHUs, terminals. A source selects its own by
// Ref.Source; the assembler maps Ref.Name to the entity and role.
func (s *Site) Points() []PointUse {
	var out []PointUse
	add := func(p *PointRef, r Role, id string, t, a, l int) {
		if p.Defined() {
			out = append(out, PointUse{Ref: p, Role: r, Entity: id, Terminal: t, AHU: a, Loop: l})
		}
	}
	add(&s.OutdoorAir, RoleOutdoorAir, SiteEntity, -1, -1, -1)
	for i := range s.Loops {
		lp := &s.Loops[i]
		add(&lp.SupplyTemp, RoleSupplyTemp, lp.ID, -1, -1, i)
		add(&lp.PlantEnabled, RolePlantEnabled, lp.ID, -1, -1, i)
	}
	for i := range s.AHUs {
		a := &s.AHUs[i]
		add(&a.SupplyAir, RoleSupplyAir, a.ID, -1, i, -1)
		add(&a.FanStatus, RoleFanStatus, a.ID, -1, i, -1)
		add(&a.Occupancy, RoleOccupancy, a.ID, -1, i, -1)
	}
	for i := range s.Terminals {
		t := &s.Terminals[i]
		for _, r := range terminalRoles {
			add(t.Points.Ref(r), r, t.ID, i, -1, -1)
		}
	}
	return out
}

// Ref returns the terminal point for role r (nil for a non-terminal role).
func (tp *TerminalPoints) Ref(r Role) *PointRef {
	switch r {
	case RoleAirflow:
		return &tp.Airflow
	case RoleAirflowSetpoint:
		return &tp.AirflowSetpoint
	case RoleDischarge:
		return &tp.Discharge
	case RoleValve:
		return &tp.Valve
	case RoleZoneTemp:
		return &tp.ZoneTemp
	case RoleZoneSetpoint:
		return &tp.ZoneSetpoint
	}
	return nil
}

// Ref returns the AHU point for role r (nil for a non-AHU role).
func (a *AHU) Ref(r Role) *PointRef {
	switch r {
	case RoleSupplyAir:
		return &a.SupplyAir
	case RoleFanStatus:
		return &a.FanStatus
	case RoleOccupancy:
		return &a.Occupancy
	}
	return nil
}

// Ref returns the loop point for role r (nil for a non-loop role).
func (l *Loop) Ref(r Role) *PointRef {
	switch r {
	case RoleSupplyTemp:
		return &l.SupplyTemp
	case RolePlantEnabled:
		return &l.PlantEnabled
	}
	return nil
}
