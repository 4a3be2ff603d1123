package site

// ReleaseAddresses drops the protocol addresses of every point (the BACnet
// object references and InfluxDB series, about 400 octets per terminal) once
// the sources have been built from them: each source keeps its own compact
// copy of what it reads, and nothing else looks at them. Names, kinds,
// sources, units and fixed values stay, so Defined, Points and the
// messages that name points are unchanged. A daemon calls it on a site it
// loaded itself; a reload loads the file again.
func (s *Site) ReleaseAddresses() {
	drop := func(p *PointRef) { p.BACnet, p.Influx = nil, nil }
	drop(&s.OutdoorAir)
	for i := range s.Loops {
		drop(&s.Loops[i].SupplyTemp)
		drop(&s.Loops[i].PlantEnabled)
	}
	for i := range s.AHUs {
		a := &s.AHUs[i]
		drop(&a.SupplyAir)
		drop(&a.FanStatus)
		drop(&a.Occupancy)
	}
	for i := range s.Terminals {
		p := &s.Terminals[i].Points
		for _, r := range []*PointRef{&p.Airflow, &p.AirflowSetpoint, &p.Discharge, &p.Valve, &p.ZoneTemp, &p.ZoneSetpoint} {
			drop(r)
		}
	}
}
