package reliability

import (
	"errors"
	"fmt"
	"strings"
	"time"

	"risewatch/collector/bacnet"
	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
)

// Objects of every simulated terminal controller: the six terminal roles of
// the site model, each a present-value with status flags.
var (
	ObjAirflow   = wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 1}
	ObjAirflowSP = wire.ObjectID{Type: wire.ObjectAnalogValue, Instance: 1}
	ObjDischarge = wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 2}
	ObjValve     = wire.ObjectID{Type: wire.ObjectAnalogOutput, Instance: 1}
	ObjZone      = wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 3}
	ObjZoneSP    = wire.ObjectID{Type: wire.ObjectAnalogValue, Instance: 2}
	// AHU controller: supply air, fan status, occupancy; loop controller:
	// hot-water supply and plant enable.
	ObjSAT     = wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 1}
	ObjFan     = wire.ObjectID{Type: wire.ObjectBinaryInput, Instance: 1}
	ObjOcc     = wire.ObjectID{Type: wire.ObjectBinaryValue, Instance: 1}
	ObjHWST    = wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 1}
	ObjPlantOn = wire.ObjectID{Type: wire.ObjectBinaryValue, Instance: 1}
)

// TerminalPoints is the number of site points of one simulated terminal.
const TerminalPoints = 6

// CampusConfig sizes a simulated BACnet campus on loopback.
type CampusConfig struct {
	Groups   int // device groups: one UDP port (a B/IP router) each, one AHU each
	PerGroup int // terminal controllers behind each group's router (1..240)
	// PollInterval, Timeout and Retries go into the site's bacnet source.
	PollInterval time.Duration
	Timeout      time.Duration
	Retries      int
	// Tweak, when set, may change each controller's configuration before it
	// is added (maximum APDU, segmentation, misbehaviour).
	Tweak func(id string, c *bacnetdev.DeviceConfig)
}

// Device is one simulated controller of the campus.
type Device struct {
	ID       string // terminal, AHU or loop ID it serves
	Instance uint32
	Group    int
	Addr     bacnet.Address
	Dev      *bacnetdev.Device
}

// Campus is a running simulated campus: Groups device groups, each a
// bacnetdev.Server with one AHU controller and PerGroup terminal
// controllers on a remote network behind the group's router, plus one
// loop controller in group 0.
type Campus struct {
	Cfg       CampusConfig
	Servers   []*bacnetdev.Server
	Terminals []Device
	AHUs      []Device
	Loop      Device
}

// Typical heating-mode values (IP, as a BAS delivers them): the kind a
// controller reports for a box at minimum heating flow with its valve
// partly open. Common practice, not measured data.
const (
	valAirflowCFM  = 300.0
	valDischargeF  = 80.0
	valValvePct    = 40.0
	valZoneF       = 70.0
	valSupplyAirF  = 55.0
	valHotWaterF   = 170.0
	instTerminal0  = 100000
	instAHU0       = 900000
	instLoop       = 999000
	macAHU         = 250
	macLoop        = 251
	networkBase    = 1000
	maxPerGroupMAC = 240
)

// StartCampus binds every group on 127.0.0.1 (free ports) and fills the
// devices. Close stops them.
func StartCampus(cfg CampusConfig) (*Campus, error) {
	if cfg.Groups <= 0 || cfg.PerGroup <= 0 || cfg.PerGroup > maxPerGroupMAC {
		return nil, fmt.Errorf("campus: want groups >= 1 and 1..%d terminals per group, got %d and %d", maxPerGroupMAC, cfg.Groups, cfg.PerGroup)
	}
	c := &Campus{Cfg: cfg}
	for g := 0; g < cfg.Groups; g++ {
		srv, err := bacnetdev.NewServer(bacnetdev.Config{Bind: "127.0.0.1:0"})
		if err != nil {
			c.Close()
			return nil, fmt.Errorf("campus: group %d: %w", g, err)
		}
		c.Servers = append(c.Servers, srv)
		netw := uint16(networkBase + g)
		add := func(id string, inst uint32, mac byte, objs []bacnetdev.Object) (Device, error) {
			dc := bacnetdev.DeviceConfig{Instance: inst, Name: id, Network: netw, MAC: mac, Segmentation: wire.SegmentedBoth}
			if cfg.Tweak != nil {
				cfg.Tweak(id, &dc)
			}
			d, err := srv.AddDevice(dc)
			if err != nil {
				return Device{}, fmt.Errorf("campus: %s: %w", id, err)
			}
			for _, o := range objs {
				d.AddObject(o)
			}
			return Device{ID: id, Instance: inst, Group: g, Dev: d,
				Addr: bacnet.Address{IP: srv.Addr(), Net: netw, MAC: string([]byte{mac})}}, nil
		}
		ahu, err := add(AHUID(g), instAHU0+uint32(g), macAHU, []bacnetdev.Object{
			{ID: ObjSAT, Name: "SAT", Units: uint32(bacnet.UnitDegreesFahrenheit), Value: valSupplyAirF},
			{ID: ObjFan, Name: "FAN", Value: 1},
			{ID: ObjOcc, Name: "OCC", Value: 1},
		})
		if err != nil {
			c.Close()
			return nil, err
		}
		c.AHUs = append(c.AHUs, ahu)
		if g == 0 {
			if c.Loop, err = add("HW-1", instLoop, macLoop, []bacnetdev.Object{
				{ID: ObjHWST, Name: "HWST", Units: uint32(bacnet.UnitDegreesFahrenheit), Value: valHotWaterF},
				{ID: ObjPlantOn, Name: "HWEN", Value: 1},
			}); err != nil {
				c.Close()
				return nil, err
			}
		}
		for k := 0; k < cfg.PerGroup; k++ {
			i := g*cfg.PerGroup + k
			d, err := add(TerminalID(i), instTerminal0+uint32(i), byte(k+1), terminalObjects())
			if err != nil {
				c.Close()
				return nil, err
			}
			c.Terminals = append(c.Terminals, d)
		}
	}
	return c, nil
}

func terminalObjects() []bacnetdev.Object {
	cfm, degF, pct := uint32(bacnet.UnitCubicFeetPerMinute), uint32(bacnet.UnitDegreesFahrenheit), uint32(bacnet.UnitPercent)
	return []bacnetdev.Object{
		{ID: ObjAirflow, Name: "AF", Units: cfm, Value: valAirflowCFM},
		{ID: ObjAirflowSP, Name: "AFSP", Units: cfm, Value: valAirflowCFM},
		{ID: ObjDischarge, Name: "DAT", Units: degF, Value: valDischargeF},
		{ID: ObjValve, Name: "VLV", Units: pct, Value: valValvePct},
		{ID: ObjZone, Name: "ZNT", Units: degF, Value: valZoneF},
		{ID: ObjZoneSP, Name: "ZNSP", Units: degF, Value: valZoneF},
	}
}

// TerminalID is the ID of terminal i (0-based).
func TerminalID(i int) string { return fmt.Sprintf("VAV-%05d", i+1) }

// AHUID is the ID of group g's air handler.
func AHUID(g int) string { return fmt.Sprintf("AHU-%03d", g+1) }

// Close stops every group.
func (c *Campus) Close() error {
	var errs []error
	for _, s := range c.Servers {
		errs = append(errs, s.Close())
	}
	return errors.Join(errs...)
}

// Points is the number of site points the campus serves.
func (c *Campus) Points() int { return len(c.Terminals)*TerminalPoints + 3*len(c.AHUs) + 2 }

// SiteYAML writes a site file for the campus: one bacnet source "bas" with
// every device's address, point patterns for every role, one loop, one AHU
// per group and every terminal. daemon is appended verbatim (a daemon:
// section, or empty).
func (c *Campus) SiteYAML(daemon string) string {
	var b strings.Builder
	poll, timeout, retries := c.Cfg.PollInterval, c.Cfg.Timeout, c.Cfg.Retries
	if poll <= 0 {
		poll = 10 * time.Second
	}
	if timeout <= 0 {
		timeout = time.Second
	}
	fmt.Fprintf(&b, `site:
  name: Reliability campus
  time_zone: UTC
  energy: {currency: USD, heat_per_kwh: 0.05, cooling_per_kwh: 0.12}
sources:
  - name: bas
    kind: bacnet
    bind: 127.0.0.1:0
    poll_interval: %s
    trend_sweep: 24h
    timeout: %s
    retries: %d
    points:
      airflow:          {object: "analog-input:1", unit: cfm}
      airflow_setpoint: {object: "analog-value:1", unit: cfm}
      discharge:        {object: "analog-input:2", unit: degF}
      valve:            {object: "analog-output:1", unit: "%%"}
      zone_temp:        {object: "analog-input:3", unit: degF}
      zone_setpoint:    {object: "analog-value:2", unit: degF}
      supply_air:       {object: "analog-input:1", unit: degF}
      fan_status:       {object: "binary-input:1"}
      occupancy:        {object: "binary-value:1"}
      supply_temp:      {object: "analog-input:1", unit: degF}
      plant_enabled:    {object: "binary-value:1"}
    devices:
`, poll, timeout, retries)
	all := append(append([]Device{c.Loop}, c.AHUs...), c.Terminals...)
	for _, d := range all {
		fmt.Fprintf(&b, "      %d: %q\n", d.Instance, d.Addr.String())
	}
	fmt.Fprintf(&b, `points_from: bas
terminal_defaults:
  coil: {inlet: 8 in, rows: 2}
  valve: {cv: 1.0}
  airflow: {min: 150 cfm, cooling_max: 600 cfm, heating_max: 350 cfm}
loops:
  - {id: HW-1, design_supply: 180 F, branch_dp: 5 psi, device: %d}
ahus:
`, c.Loop.Instance)
	for _, a := range c.AHUs {
		fmt.Fprintf(&b, "  - {id: %s, device: %d}\n", a.ID, a.Instance)
	}
	b.WriteString("terminals:\n")
	for _, t := range c.Terminals {
		fmt.Fprintf(&b, "  - {id: %s, ahu: %s, loop: HW-1, device: %d, building: B%d}\n", t.ID, AHUID(t.Group), t.Instance, t.Group/10+1)
	}
	b.WriteString(daemon)
	return b.String()
}
