package sim

import (
	"risewatch/site"
)

// TrendSourceName is the name of the trend-file source in the site file.
const TrendSourceName = "sim-trends"

// Point column names (the trend-file header), per entity.
func colOAT() string                 { return "Site.OAT" }
func colLoopSupply(id string) string { return id + ".SupplyTemp" }
func colLoopEnable(id string) string { return id + ".PlantEnable" }
func colAHUSupply(id string) string  { return id + ".SAT" }
func colAHUFan(id string) string     { return id + ".FanStatus" }
func colAHUOcc(id string) string     { return id + ".Occupied" }
func colAirflow(id string) string    { return id + ".Airflow" }
func colAirflowSet(id string) string { return id + ".AirflowSP" }
func colDAT(id string) string        { return id + ".DAT" }
func colValve(id string) string      { return id + ".HWValve" }
func colZoneTemp(id string) string   { return id + ".ZoneTemp" }
func colZoneHeatSP(id string) string { return id + ".ZoneHeatSP" }

func trendPoint(col, unit string, binary bool) site.PointRef {
	return site.PointRef{Name: col, Kind: site.PointTrendColumn, Source: TrendSourceName, Column: col, Unit: unit, Binary: binary}
}

// Site is the campus as a site configuration whose points are the trend
// export's columns, read from trendDir (wide layout, RFC 3339 timestamps).
func (s *Simulator) Site(trendDir string) *site.Site {
	sc := s.sc
	st := &site.Site{
		Name:       sc.Site,
		Location:   sc.loc,
		ElevationM: sc.ElevationM,
		Energy: site.EnergyPrices{HeatPerKWh: sc.Prices.HeatPerKWh, CoolingPerKWh: sc.Prices.CoolingPerKWh,
			Currency: sc.Prices.Currency, HeatingPlantEff: 1, CoolingPlantCOP: 3},
		Sources: []site.SourceConfig{{Name: TrendSourceName, Kind: "trendfile", Trendfile: &site.TrendfileConfig{
			Path: trendDir, Layout: "wide", Delimiter: ',', TimeColumn: "timestamp", TimeFormat: "rfc3339",
			TimeZone: sc.loc, Watch: true,
		}}},
	}
	st.OutdoorAir = trendPoint(colOAT(), "degF", false)
	st.OutdoorAir.Name = site.PointName(site.SiteEntity, site.RoleOutdoorAir)
	designOAT := sc.Weather.DesignOutdoor
	st.DesignOutdoorC = &designOAT
	for i := range sc.Loops {
		l := &sc.Loops[i]
		st.Loops = append(st.Loops, site.Loop{ID: l.ID, DesignSupplyC: l.supplyAtDesignC, DesignDeltaK: l.designDeltaK,
			BranchDPPa:   l.dpSetpointPa,
			SupplyTemp:   trendPoint(colLoopSupply(l.ID), "degF", false),
			PlantEnabled: trendPoint(colLoopEnable(l.ID), "on/off", true)})
	}
	for i := range sc.AHUs {
		a := &sc.AHUs[i]
		st.AHUs = append(st.AHUs, site.AHU{ID: a.ID, DuctGainK: a.ductGainK,
			SupplyAir: trendPoint(colAHUSupply(a.ID), "degF", false),
			FanStatus: trendPoint(colAHUFan(a.ID), "on/off", true),
			Occupancy: trendPoint(colAHUOcc(a.ID), "on/off", true)})
	}
	for i := range s.terms {
		t := &s.terms[i]
		a := &sc.AHUs[t.ahu]
		d := t.design
		rated := d.rated
		id := t.spec.ID
		st.Terminals = append(st.Terminals, site.Terminal{
			ID: id, AHU: a.ID, Loop: sc.Loops[t.loop].ID, Zone: t.spec.Zone, Building: a.Building,
			Location: "room " + t.spec.Room, InletIn: t.spec.InletIn, Oversized: t.spec.Oversized,
			Coil: d.coil, Rated: &rated, Valve: d.valve,
			MinAirflowM3s: d.minM3s, MaxAirflowM3s: d.coolMaxM3s, HeatingAirflowM3s: d.heatMax,
			DesignLoadW: d.designLoadW,
			Points: site.TerminalPoints{
				Airflow:         trendPoint(colAirflow(id), "cfm", false),
				AirflowSetpoint: trendPoint(colAirflowSet(id), "cfm", false),
				Discharge:       trendPoint(colDAT(id), "degF", false),
				Valve:           trendPoint(colValve(id), "%", false),
				ZoneTemp:        trendPoint(colZoneTemp(id), "degF", false),
				ZoneSetpoint:    trendPoint(colZoneHeatSP(id), "degF", false),
			},
		})
	}
	st.Index()
	return st
}
