package assess

import (
	"errors"
	"fmt"
	"math"

	"risewatch/coilmodel"
	"risewatch/site"
	"risewatch/units"
)

// Unit is one terminal ready to assess: its calibrated coil, valve, loop
// design data, airflows, design air temperatures and the load it must carry.
// A Unit is immutable after Prepare and safe for concurrent use.
type Unit struct {
	Index    int // index in site.Site.Terminals
	ID       string
	Loop     string
	AHU      string
	Building string
	Zone     string

	Coil              coilmodel.Coil // calibrated to the rated point when one is given
	Valve             coilmodel.Valve
	HeatingAirflowM3s float64
	MaxAirflowM3s     float64 // most the box can deliver for the airflow option
	InletIn           float64
	Oversized         bool

	EnteringAirC  float64 // design air temperature entering the coil
	ZoneC         float64 // zone heating setpoint
	HumidityRatio float64
	BarometricPa  float64

	LoopSupplyC   float64 // loop design supply temperature
	LoopDeltaK    float64
	LoopBranchDPa float64

	DesignLoadW float64 // from the site file, 0 if not given
	History     *LoadEstimate
	LoadW       float64 // the load checked, W (0: unknown)
	LoadUncW    float64 // its 95 % uncertainty, W (0 for a design load)
	LoadBasis   string  // "design", "history", "history (observed peak)", "none"

	// Err is why the terminal cannot be assessed (nil if it can).
	Err error

	k *coilmodel.Calibrated
}

// ErrNoLoad is returned (wrapped) when a terminal has neither a design load
// nor a usable history estimate.
var ErrNoLoad = errors.New("no heating load")

// Prepare builds the units of every terminal of s. est, when not nil, holds
// history estimates indexed like s.Terminals (nil entries allowed). A
// terminal that cannot be assessed gets a Unit with Err set, so nothing
// else is lost.
func Prepare(s *site.Site, est []*LoadEstimate, opt Options) []*Unit {
	opt = opt.withDefaults()
	out := make([]*Unit, len(s.Terminals))
	baro := coilmodel.AtmosphericPressurePa(s.ElevationM)
	for i := range s.Terminals {
		var e *LoadEstimate
		if i < len(est) {
			e = est[i]
		}
		out[i] = prepareUnit(s, i, e, opt, baro)
	}
	return out
}

func prepareUnit(s *site.Site, i int, e *LoadEstimate, opt Options, baro float64) *Unit {
	t := &s.Terminals[i]
	u := &Unit{Index: i, ID: t.ID, Loop: t.Loop, AHU: t.AHU, Building: t.Building, Zone: t.Zone,
		Valve: t.Valve, HeatingAirflowM3s: t.HeatingAirflowM3s, InletIn: t.InletIn, Oversized: t.Oversized,
		HumidityRatio: opt.HumidityRatio, BarometricPa: baro, DesignLoadW: t.DesignLoadW, History: e}
	fail := func(err error) *Unit {
		u.Err = fmt.Errorf("terminal %s: %w", t.ID, err)
		u.LoadBasis = "none"
		return u
	}
	li, ok := s.LoopIndex[t.Loop]
	if !ok {
		return fail(fmt.Errorf("unknown loop %q", t.Loop))
	}
	lp := &s.Loops[li]
	u.LoopSupplyC, u.LoopDeltaK, u.LoopBranchDPa = lp.DesignSupplyC, lp.DesignDeltaK, lp.BranchDPPa
	if u.LoopDeltaK <= 0 {
		u.LoopDeltaK = units.DeltaFToK(20) // the site loader's default (common practice)
	}
	ductGain := 0.0
	if ai, ok := s.AHUIndex[t.AHU]; ok {
		ductGain = s.AHUs[ai].DuctGainK
	}
	switch {
	case e != nil && e.Hours > 0 && !math.IsNaN(e.EnteringAirC):
		u.EnteringAirC = e.EnteringAirC
	case opt.EnteringAirC != nil:
		u.EnteringAirC = *opt.EnteringAirC
	default:
		u.EnteringAirC = units.FToC(defaultSupplyAirF) + ductGain
	}
	switch {
	case e != nil && e.Hours > 0 && !math.IsNaN(e.ZoneSetC):
		u.ZoneC = e.ZoneSetC
	case opt.ZoneC != nil:
		u.ZoneC = *opt.ZoneC
	default:
		u.ZoneC = units.FToC(defaultZoneF)
	}
	u.chooseLoad(opt.Load)
	if u.HeatingAirflowM3s <= 0 {
		return fail(errors.New("no heating airflow (airflow: heating_max)"))
	}
	u.MaxAirflowM3s = max(t.MaxAirflowM3s, u.HeatingAirflowM3s)
	if u.MaxAirflowM3s <= u.HeatingAirflowM3s*1.0001 && t.InletIn > 0 {
		if m, err := coilmodel.PresetMaxAirflowM3s(t.InletIn); err == nil {
			u.MaxAirflowM3s = max(u.MaxAirflowM3s, m)
		}
	}
	c := t.Coil
	if t.Rated != nil && c.UAMultiplier == 0 {
		cal, _, err := coilmodel.Calibrate(c, *t.Rated)
		if err != nil {
			return fail(fmt.Errorf("calibrate to rated point: %w", err))
		}
		c = cal
	}
	k, err := coilmodel.NewCalibrated(c)
	if err != nil {
		return fail(fmt.Errorf("coil: %w", err))
	}
	u.Coil, u.k = c, k
	if err := u.Valve.Validate(); err != nil || u.Valve.Cv <= 0 {
		if err == nil {
			err = errors.New("no valve Cv")
		}
		return fail(fmt.Errorf("valve: %w", err))
	}
	if u.LoadW <= 0 {
		return fail(ErrNoLoad)
	}
	return u
}

// chooseLoad sets LoadW, LoadUncW and LoadBasis from the design load and the
// history estimate.
func (u *Unit) chooseLoad(b LoadBasis) {
	hist, histUnc, histName := 0.0, 0.0, ""
	if e := u.History; e != nil && e.Hours > 0 {
		hist, histUnc, histName = e.DesignW, e.DesignUncW, "history"
		if e.Method == MethodObservedPeak {
			histName = "history (observed peak)"
		}
	}
	design := u.DesignLoadW
	switch {
	case b == LoadDesign || (b == LoadAuto && design > 0):
		u.LoadW, u.LoadBasis = design, "design"
	case b == LoadHistory || b == LoadAuto:
		u.LoadW, u.LoadUncW, u.LoadBasis = hist, histUnc, histName
	case b == LoadLarger:
		if hist+histUnc > design {
			u.LoadW, u.LoadUncW, u.LoadBasis = hist+histUnc, 0, histName+" (upper 95 %)"
		} else {
			u.LoadW, u.LoadBasis = design, "design"
		}
	}
	if u.LoadW <= 0 {
		u.LoadW, u.LoadUncW, u.LoadBasis = 0, 0, "none"
	}
}
