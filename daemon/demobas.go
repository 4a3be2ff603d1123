package daemon

import (
	"errors"
	"fmt"
	"strconv"
	"sync/atomic"
	"time"

	"risewatch/collector/bacnet"
	"risewatch/collector/bacnet/wire"
	"risewatch/sim"
	"risewatch/sim/bacnetdev"
	"risewatch/site"
	"risewatch/units"
)

// DemoSourceName is the demo campus's BACnet/IP source.
const DemoSourceName = "wrenfield-bas"

// Demo device numbering (invented): the plant device, one device per air
// handler on its own UDP port, and each terminal a device behind that air
// handler's simulated router on network demoNetBase+AHU index.
const (
	demoPlantDevice    = 1000
	demoAHUDeviceBase  = 2000
	demoTermDeviceBase = 10000
	demoNetBase        = 100
)

// demoFeed is one BACnet object the simulation writes each step.
type demoFeed struct {
	dev   *bacnetdev.Device
	obj   wire.ObjectID
	value func(*sim.Step) (float64, bool)
	conv  func(float64) float64 // SI to the device's units (nil: binary)
}

// demoBAS is the demo campus served as BACnet/IP devices on loopback:
// analog-input/-value and binary-input/-value objects carrying the trend
// columns' values in IP units, each with a one-minute trend log that fills
// as the simulation runs.
type demoBAS struct {
	servers []*bacnetdev.Server
	feeds   []demoFeed
	now     atomic.Int64 // simulated time of the newest step fed, Unix ns
}

// engUnit is the BACnetEngineeringUnits value for a unit the demo uses.
func engUnit(u string) uint32 {
	switch u {
	case "degF":
		return uint32(bacnet.UnitDegreesFahrenheit)
	case "cfm":
		return uint32(bacnet.UnitCubicFeetPerMinute)
	case "%":
		return uint32(bacnet.UnitPercent)
	}
	return uint32(bacnet.UnitNoUnits)
}

// newDemoBAS starts the device groups for s (a simulator site whose points
// are trend columns), rewrites s's points into BACnet points with trend
// logs holding bufferMin one-minute records, and replaces its sources by
// one BACnet source polling every poll and sweeping trend logs every sweep.
func newDemoBAS(s *site.Site, bufferMin int, poll, sweep time.Duration) (*demoBAS, error) {
	cols, err := demoColumns(s)
	if err != nil {
		return nil, err
	}
	byCol := map[string]demoColumn{}
	for _, c := range cols {
		byCol[c.name] = c
	}
	b := &demoBAS{}
	devices := map[uint32]string{}
	fail := func(err error) (*demoBAS, error) { b.close(); return nil, err }
	newServer := func() (*bacnetdev.Server, error) {
		srv, err := bacnetdev.NewServer(bacnetdev.Config{})
		if err == nil {
			b.servers = append(b.servers, srv)
		}
		return srv, err
	}
	// device returns a fresh device with an object and trend log per point.
	var errs []error
	type pt struct {
		ref *site.PointRef
		typ wire.ObjectType
	}
	addDevice := func(srv *bacnetdev.Server, cfg bacnetdev.DeviceConfig, pts []pt) {
		cfg.Location = s.Location // device clocks keep site time, as the source reads them
		dev, err := srv.AddDevice(cfg)
		if err != nil {
			errs = append(errs, err)
			return
		}
		addr := srv.Addr().String()
		if cfg.Network != 0 {
			addr += "/" + strconv.Itoa(int(cfg.Network)) + ":" + fmt.Sprintf("%02x", cfg.MAC)
		}
		devices[cfg.Instance] = addr
		next := map[wire.ObjectType]uint32{}
		for k, p := range pts {
			if !p.ref.Defined() || p.ref.Column == "" {
				continue
			}
			col, ok := byCol[p.ref.Column]
			if !ok {
				errs = append(errs, fmt.Errorf("demo: point %s has no simulated value", p.ref.Name))
				continue
			}
			next[p.typ]++
			obj := wire.ObjectID{Type: p.typ, Instance: next[p.typ]}
			tl := uint32(k + 1)
			dev.AddObject(bacnetdev.Object{ID: obj, Name: p.ref.Name, Units: engUnit(col.unit)})
			dev.AddTrendLog(bacnetdev.TrendLogConfig{Instance: tl, Name: p.ref.Name + " trend", Logged: obj, Interval: time.Minute, BufferSize: bufferMin})
			f := demoFeed{dev: dev, obj: obj, value: col.value}
			if !col.binary {
				if col.unit == "%" {
					f.conv = func(v float64) float64 { return v * 100 }
				} else {
					u, _ := units.ParseUnit(col.unit)
					f.conv = u.FromSI
				}
			}
			b.feeds = append(b.feeds, f)
			*p.ref = site.PointRef{Name: p.ref.Name, Kind: site.PointBACnet, Source: DemoSourceName, Unit: p.ref.Unit, Binary: p.ref.Binary,
				BACnet: &site.BACnetRef{Device: cfg.Instance, ObjectType: p.typ.String(), Instance: obj.Instance, Property: "present-value", TrendLog: &tl}}
		}
	}
	plant, err := newServer()
	if err != nil {
		return fail(err)
	}
	ppts := []pt{{&s.OutdoorAir, wire.ObjectAnalogInput}}
	for i := range s.Loops {
		ppts = append(ppts, pt{&s.Loops[i].SupplyTemp, wire.ObjectAnalogInput}, pt{&s.Loops[i].PlantEnabled, wire.ObjectBinaryValue})
	}
	addDevice(plant, bacnetdev.DeviceConfig{Instance: demoPlantDevice, Name: "Plant"}, ppts)
	for ai := range s.AHUs {
		a := &s.AHUs[ai]
		srv, err := newServer()
		if err != nil {
			return fail(err)
		}
		addDevice(srv, bacnetdev.DeviceConfig{Instance: uint32(demoAHUDeviceBase + ai), Name: a.ID},
			[]pt{{&a.SupplyAir, wire.ObjectAnalogInput}, {&a.FanStatus, wire.ObjectBinaryInput}, {&a.Occupancy, wire.ObjectBinaryValue}})
		mac := 0
		for ti := range s.Terminals {
			t := &s.Terminals[ti]
			if t.AHU != a.ID {
				continue
			}
			if mac++; mac > 254 {
				errs = append(errs, fmt.Errorf("demo: AHU %s has more than 254 terminals behind one router", a.ID))
				break
			}
			p := &t.Points
			addDevice(srv, bacnetdev.DeviceConfig{Instance: uint32(demoTermDeviceBase + ti), Name: t.ID, Network: uint16(demoNetBase + ai), MAC: byte(mac)},
				[]pt{{&p.Airflow, wire.ObjectAnalogInput}, {&p.AirflowSetpoint, wire.ObjectAnalogValue}, {&p.Discharge, wire.ObjectAnalogInput},
					{&p.Valve, wire.ObjectAnalogValue}, {&p.ZoneTemp, wire.ObjectAnalogInput}, {&p.ZoneSetpoint, wire.ObjectAnalogValue}})
		}
	}
	if err := errors.Join(errs...); err != nil {
		return fail(err)
	}
	s.Sources = []site.SourceConfig{{Name: DemoSourceName, Kind: "bacnet", BACnet: &site.BACnetConfig{
		Bind: "127.0.0.1:0", PollInterval: poll, TrendSweep: sweep, Timeout: 2 * time.Second, Retries: 2, Devices: devices}}}
	s.Index()
	return b, nil
}

// feed writes one simulated step into the devices and lets every trend log record.
func (b *demoBAS) feed(st *sim.Step) {
	for _, f := range b.feeds {
		v, ok := f.value(st)
		if !ok {
			continue
		}
		if f.conv != nil {
			v = f.conv(v)
		}
		_ = f.dev.SetValue(f.obj, v)
	}
	for _, srv := range b.servers {
		srv.Advance(st.At)
	}
	b.now.Store(st.At.UnixNano())
}

// Now is the simulated time of the newest step fed (zero before the first).
func (b *demoBAS) Now() time.Time {
	n := b.now.Load()
	if n == 0 {
		return time.Time{}
	}
	return time.Unix(0, n).UTC()
}

func (b *demoBAS) close() {
	for _, s := range b.servers {
		_ = s.Close()
	}
}
