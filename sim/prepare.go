package sim

import (
	"time"

	"risewatch/units"
)

// def sets *p to v when it is zero.
func def[T comparable](p *T, v T) {
	var zero T
	if *p == zero {
		*p = v
	}
}

// prepare fills defaults, converts to SI and validates references.
func (s *Scenario) prepare() error {
	def(&s.Name, "scenario")
	def(&s.Site, s.Name)
	def(&s.Days, 7)
	def(&s.Step, "1m")
	def(&s.TimeZone, "UTC")
	def(&s.Prices.Currency, "USD")
	def(&s.Prices.HeatPerKWh, 0.05)
	def(&s.Prices.CoolingPerKWh, 0.04)
	w := &s.Weather
	def(&w.AnnualMeanC, 10.0)
	def(&w.AnnualAmpK, 12.0)
	def(&w.ColdestDay, 20)
	def(&w.DailyAmpK, 4.0)
	def(&w.WarmestHour, 15.0)
	def(&w.SynopticSDK, 4.0)
	def(&w.SynopticDays, 2.5)
	def(&w.LatitudeDeg, 42.0)
	def(&w.DesignOutdoor, -18.0)
	if s.Days < 1 || s.Days > 3660 {
		return s.errf(0, "days %d: want 1..3660", s.Days)
	}
	loc, err := time.LoadLocation(s.TimeZone)
	if err != nil {
		return s.errf(0, "time_zone %q: %v", s.TimeZone, err)
	}
	s.loc = loc
	st, err := time.Parse(time.RFC3339, s.Start)
	if err != nil {
		d, err2 := time.ParseInLocation("2006-01-02", s.Start, loc)
		if err2 != nil {
			return s.errf(0, "start %q: want YYYY-MM-DD or RFC 3339", s.Start)
		}
		st = d
	}
	s.start = st.In(loc)
	s.step, err = time.ParseDuration(s.Step)
	if err != nil || s.step < time.Second || s.step > time.Hour || (24*time.Hour)%s.step != 0 {
		return s.errf(0, "step %q: want a duration from 1s to 1h that divides a day", s.Step)
	}
	if len(s.Loops) == 0 || len(s.AHUs) == 0 {
		return s.errf(0, "need at least one loop and one ahu")
	}
	loopIdx := map[string]int{}
	for i := range s.Loops {
		l := &s.Loops[i]
		if l.ID == "" {
			return s.errf(l.Line, "loop without id")
		}
		if _, dup := loopIdx[l.ID]; dup {
			return s.errf(l.Line, "loop %s defined twice", l.ID)
		}
		loopIdx[l.ID] = i
		def(&l.DesignSupplyF, 180.0)
		def(&l.DesignDeltaF, 20.0)
		def(&l.SupplyAtMildF, l.DesignSupplyF-40)
		def(&l.DesignOutdoorF, 0.0)
		def(&l.MildOutdoorF, 60.0)
		def(&l.EnableBelowF, 65.0)
		def(&l.DPSetpointPSI, 4.0)
		if l.DesignSupplyF < 90 || l.DesignSupplyF > 210 || l.SupplyAtMildF > l.DesignSupplyF || l.DPSetpointPSI <= 0 || l.DesignDeltaF <= 0 {
			return s.errf(l.Line, "loop %s: implausible temperatures or dp (design supply 90–210 °F, mild ≤ design, dp > 0)", l.ID)
		}
		l.supplyAtDesignC = units.FToC(l.DesignSupplyF)
		l.supplyAtMildC = units.FToC(l.SupplyAtMildF)
		l.designOutdoorC = units.FToC(l.DesignOutdoorF)
		l.mildOutdoorC = units.FToC(l.MildOutdoorF)
		l.enableBelowC = units.FToC(l.EnableBelowF)
		l.dpSetpointPa = units.PSIToPa(l.DPSetpointPSI)
		l.designDeltaK = units.DeltaFToK(l.DesignDeltaF)
	}
	ids := map[string]bool{}
	for i := range s.AHUs {
		a := &s.AHUs[i]
		if a.ID == "" {
			return s.errf(a.Line, "ahu without id")
		}
		if ids[a.ID] {
			return s.errf(a.Line, "id %s used twice", a.ID)
		}
		ids[a.ID] = true
		li, ok := loopIdx[a.Loop]
		if !ok {
			return s.errf(a.Line, "ahu %s: loop %q is not defined", a.ID, a.Loop)
		}
		a.loop = li
		def(&a.Building, a.ID)
		def(&a.Weekday, "07:00-18:00")
		def(&a.WarmupMin, 90)
		def(&a.SATAtLowF, 60.0)
		def(&a.SATAtHighF, 55.0)
		def(&a.SATLowOATF, 50.0)
		def(&a.SATHighOAT, 70.0)
		def(&a.DuctGainF, 0.8)
		def(&a.HeatSetF, 70.0)
		def(&a.CoolSetF, 75.0)
		def(&a.UnoccHeatF, 60.0)
		def(&a.UnoccCoolF, 85.0)
		def(&a.DATMaxF, 90.0)
		for _, p := range []struct {
			d  DaySchedule
			sp *daySpan
		}{{a.Weekday, &a.weekday}, {a.Saturday, &a.saturday}, {a.Sunday, &a.sunday}} {
			sp, err := parseSpan(p.d)
			if err != nil {
				return s.errf(a.Line, "ahu %s: %v", a.ID, err)
			}
			*p.sp = sp
		}
		if a.HeatSetF >= a.CoolSetF || a.UnoccHeatF >= a.UnoccCoolF || a.DATMaxF <= a.HeatSetF {
			return s.errf(a.Line, "ahu %s: heating setpoint must be below cooling, max discharge above heating", a.ID)
		}
		a.warmupMin = a.WarmupMin
		a.satAtLowC, a.satAtHighC = units.FToC(a.SATAtLowF), units.FToC(a.SATAtHighF)
		a.satOATLowC, a.satOATHighC = units.FToC(a.SATLowOATF), units.FToC(a.SATHighOAT)
		a.ductGainK = units.DeltaFToK(a.DuctGainF)
		a.heatSetC, a.coolSetC = units.FToC(a.HeatSetF), units.FToC(a.CoolSetF)
		a.unoccHeatC, a.unoccCoolC = units.FToC(a.UnoccHeatF), units.FToC(a.UnoccCoolF)
		a.datMaxC = units.FToC(a.DATMaxF)
		if len(a.Terminals) == 0 {
			return s.errf(a.Line, "ahu %s: no terminals", a.ID)
		}
		for j := range a.Terminals {
			t := &a.Terminals[j]
			if t.ID == "" {
				return s.errf(t.Line, "terminal without id")
			}
			if ids[t.ID] {
				return s.errf(t.Line, "id %s used twice", t.ID)
			}
			ids[t.ID] = true
			if _, ok := inletTable[t.InletIn]; !ok {
				return s.errf(t.Line, "terminal %s: inlet_in %g: want one of 6, 8, 10, 12, 14, 16", t.ID, t.InletIn)
			}
			def(&t.Rows, 1)
			def(&t.FPI, 10.0)
			def(&t.Exposure, "south")
			def(&t.LoadFrac, 0.75)
			def(&t.Zone, t.ID)
			if t.Rows < 1 || t.Rows > 4 || t.FPI < 6 || t.FPI > 16 || t.LoadFrac <= 0 || t.LoadFrac > 1.5 {
				return s.errf(t.Line, "terminal %s: rows 1–4, fpi 6–16, design_load 0–1.5", t.ID)
			}
			if _, ok := exposures[t.Exposure]; !ok {
				return s.errf(t.Line, "terminal %s: exposure %q: want interior, north, east, south or west", t.ID, t.Exposure)
			}
		}
	}
	for i := range s.Faults {
		if err := s.prepareFault(&s.Faults[i], loopIdx, ids); err != nil {
			return err
		}
	}
	return nil
}
