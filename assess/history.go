package assess

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"
	"time"

	"risewatch/coilmodel"
	"risewatch/collector"
	"risewatch/site"
)

// Estimation methods.
const (
	MethodRegression   = "regression"    // load against outdoor temperature, at the design temperature
	MethodObservedPeak = "observed-peak" // no outdoor temperature (or too few hours): the largest sustained hour
)

// HistoryOptions tune the load estimate from history. Zero values use the
// defaults noted.
type HistoryOptions struct {
	// MinMinutes is the number of valid one-minute samples an hour needs; 0 → 45.
	MinMinutes int
	// SkipAfterOccupied excludes the first part of each occupied period,
	// when zones recover from night setback (warm-up heat is not the
	// design load); 0 → 60 min.
	SkipAfterOccupied time.Duration
	// MaxDischargeSDK is the largest standard deviation of discharge air
	// temperature within a steady hour; 0 → 2 K (common practice).
	MaxDischargeSDK float64
	// ColdFraction is the share of days, coldest first, the regression
	// uses (load is linear in outdoor temperature only while the zone needs
	// heat); 0 → 0.75. At least MinDays are used.
	ColdFraction float64
	// MinDays is the least number of days with steady hours for a
	// regression; 0 → 5.
	MinDays int
	// DesignOutdoorC overrides the site's heating design temperature.
	DesignOutdoorC *float64
	// HumidityRatio of the supply air; 0 → 0.003.
	HumidityRatio float64
	// AirflowUnc is the 95 % relative uncertainty of a box airflow reading;
	// 0 → 0.05 (a field-calibrated velocity-pressure box; common practice).
	AirflowUnc float64
	// RiseUncK is the 95 % uncertainty of the air temperature rise from the
	// discharge and supply sensors and the duct gain; 0 → 0.6 K (two
	// ±0.4 K sensors in quadrature; common practice).
	RiseUncK float64
}

func (o HistoryOptions) withDefaults() HistoryOptions {
	if o.MinMinutes <= 0 {
		o.MinMinutes = 45
	}
	if o.SkipAfterOccupied <= 0 {
		o.SkipAfterOccupied = time.Hour
	}
	if o.MaxDischargeSDK <= 0 {
		o.MaxDischargeSDK = 2
	}
	if o.ColdFraction <= 0 || o.ColdFraction > 1 {
		o.ColdFraction = 0.75
	}
	if o.MinDays <= 0 {
		o.MinDays = 5
	}
	if o.HumidityRatio == 0 {
		o.HumidityRatio = 0.003
	}
	if o.AirflowUnc <= 0 {
		o.AirflowUnc = 0.05
	}
	if o.RiseUncK <= 0 {
		o.RiseUncK = 0.6
	}
	return o
}

// HourRecord is one steady occupied hour of one terminal.
type HourRecord struct {
	Start      time.Time
	HeatW      float64 // mean heat delivered
	OutdoorC   float64 // NaN without an outdoor point
	EnteringC  float64
	DischargeC float64
	AirflowM3s float64
	ValveFrac  float64
	ZoneC      float64 // NaN if not trended
	ZoneSetC   float64 // NaN if not trended
}

// LoadEstimate is a terminal's heating load estimated from history.
type LoadEstimate struct {
	Terminal string
	Hours    int    // steady occupied hours found
	Days     int    // local days with at least one steady hour
	Method   string // MethodRegression or MethodObservedPeak
	// PeakW is the largest hourly mean heat delivered in a steady occupied
	// hour, with the 95 % uncertainty from the sensors (PeakUncW).
	PeakW, PeakUncW float64
	PeakAt          time.Time
	PeakOutdoorC    float64
	// DesignW is the load at the design outdoor temperature or PeakW
	// (observed peak), with its 95 % uncertainty DesignUncW. The regression
	// is of each day's largest steady hour (the sustained peak, which in a
	// zone with night setback is the first steady hour after the warm-up)
	// against that hour's outdoor temperature, evaluated at the design
	// temperature; DesignUncW combines the 95 % prediction interval with
	// the mean relative sensor uncertainty of the fitted hours.
	DesignW, DesignUncW float64
	DesignOutdoorC      float64 // NaN for the observed peak
	SlopeWPerK          float64 // dQ/dT_outdoor of the regression (negative: more heat when colder)
	FitDays             int     // daily peaks in the regression
	FitOutdoorMinC      float64
	FitOutdoorMaxC      float64
	// ExtrapolationK is how far the design temperature lies below the
	// coldest daily peak used (0 when inside the data).
	ExtrapolationK float64
	// LimitedHours counts steady hours with the valve at least 95 % open
	// and the zone more than 0.5 K below its setpoint: the coil was at its
	// limit, so those hours understate the load.
	LimitedHours int
	EnteringAirC float64 // median entering air over the regression hours
	ZoneSetC     float64 // median zone heating setpoint (NaN if not trended)
	Note         string
}

type hourAcc struct {
	key                              int64 // hour number since the epoch
	n, nOAT, nZone, nZoneSet         int
	q, dat, dat2, oat, eat, air, vlv float64
	zone, zoneSet                    float64
}

type termHist struct {
	duct     float64
	acc      hourAcc
	occ      bool
	occSince time.Time
	hours    []HourRecord
}

// History accumulates steady occupied hours per terminal from assembled
// samples. Feed it every step with Add, then call Estimates.
type History struct {
	site  *site.Site
	opt   HistoryOptions
	terms []termHist
	cp    float64
}

// NewHistory prepares an accumulator for s.
func NewHistory(s *site.Site, opt HistoryOptions) *History {
	opt = opt.withDefaults()
	h := &History{site: s, opt: opt, terms: make([]termHist, len(s.Terminals)), cp: coilmodel.MoistAirCp(opt.HumidityRatio)}
	for i, t := range s.Terminals {
		h.terms[i].acc.key = math.MinInt64
		if ai, ok := s.AHUIndex[t.AHU]; ok {
			h.terms[i].duct = s.AHUs[ai].DuctGainK
		}
	}
	return h
}

const heatFlags = collector.FlagAirflow | collector.FlagDischarge | collector.FlagSupply

// Add takes one step's samples (any subset of terminals, in any order).
func (h *History) Add(batch []collector.Sample) {
	for i := range batch {
		s := &batch[i]
		if s.Terminal < 0 || s.Terminal >= len(h.terms) {
			continue
		}
		h.add(&h.terms[s.Terminal], s)
	}
}

func (h *History) add(th *termHist, s *collector.Sample) {
	// Occupancy: the AHU's occupied point, else the fan status, else always.
	occ := true
	switch {
	case s.Flags&collector.FlagOccupied == 0:
		occ = s.Occupied
	case s.Flags&collector.FlagFan == 0:
		occ = s.FanOn
	}
	if occ && !th.occ {
		th.occSince = s.At
	}
	th.occ = occ
	key := s.At.Unix() / 3600
	if key != th.acc.key {
		h.close(th)
		th.acc = hourAcc{key: key}
	}
	if !occ || s.At.Sub(th.occSince) < h.opt.SkipAfterOccupied || s.Flags&heatFlags != 0 {
		return
	}
	if s.Flags&collector.FlagFan == 0 && !s.FanOn {
		return
	}
	if s.Flags&collector.FlagPlant == 0 && !s.PlantOn {
		return
	}
	if !(s.AirflowM3s > 0) || math.IsNaN(s.DischargeC) || math.IsNaN(s.SupplyC) {
		return
	}
	a := &th.acc
	eat := s.SupplyC + th.duct
	a.n++
	a.q += coilmodel.StandardAirDensity * s.AirflowM3s * h.cp * (s.DischargeC - eat)
	a.dat += s.DischargeC
	a.dat2 += s.DischargeC * s.DischargeC
	a.eat += eat
	a.air += s.AirflowM3s
	if s.Flags&collector.FlagValve == 0 {
		a.vlv += s.ValveFrac
	}
	if s.Flags&collector.FlagOutdoor == 0 && !math.IsNaN(s.OutdoorC) {
		a.oat += s.OutdoorC
		a.nOAT++
	}
	// Out-of-range zone readings (an open room sensor, a setpoint in the
	// wrong unit) are missing, as in the evidence engine.
	if s.ZoneOK() {
		a.zone += s.ZoneC
		a.nZone++
	}
	if s.ZoneSetOK() {
		a.zoneSet += s.ZoneSetC
		a.nZoneSet++
	}
}

// close turns a finished hour into a record if it was steady.
func (h *History) close(th *termHist) {
	a := &th.acc
	if a.n < h.opt.MinMinutes {
		return
	}
	n := float64(a.n)
	mDat := a.dat / n
	if sd := math.Sqrt(math.Max(0, a.dat2/n-mDat*mDat)); sd > h.opt.MaxDischargeSDK {
		return
	}
	r := HourRecord{Start: time.Unix(a.key*3600, 0).UTC(), HeatW: a.q / n, OutdoorC: math.NaN(), EnteringC: a.eat / n,
		DischargeC: mDat, AirflowM3s: a.air / n, ValveFrac: a.vlv / n, ZoneC: math.NaN(), ZoneSetC: math.NaN()}
	if a.nOAT >= a.n/2 {
		r.OutdoorC = a.oat / float64(a.nOAT)
	}
	if a.nZone > 0 {
		r.ZoneC = a.zone / float64(a.nZone)
	}
	if a.nZoneSet > 0 {
		r.ZoneSetC = a.zoneSet / float64(a.nZoneSet)
	}
	th.hours = append(th.hours, r)
}

// Hours returns terminal ti's steady hours so far (the hour in progress is
// not included).
func (h *History) Hours(ti int) []HourRecord { return h.terms[ti].hours }

// Estimates closes the hours in progress and returns one estimate per
// terminal (nil where no steady hour was found), indexed like
// site.Site.Terminals.
func (h *History) Estimates() []*LoadEstimate {
	design := math.NaN()
	switch {
	case h.opt.DesignOutdoorC != nil:
		design = *h.opt.DesignOutdoorC
	case h.site.DesignOutdoorC != nil:
		design = *h.site.DesignOutdoorC
	}
	out := make([]*LoadEstimate, len(h.terms))
	for i := range h.terms {
		th := &h.terms[i]
		h.close(th)
		th.acc = hourAcc{key: math.MinInt64}
		if len(th.hours) == 0 {
			continue
		}
		out[i] = h.estimate(h.site.Terminals[i].ID, th.hours, design)
	}
	return out
}

// sensorUnc is the 95 % sensor uncertainty of an hourly heat q: airflow
// (relative) and rise (absolute) in quadrature.
func (h *History) sensorUnc(r HourRecord) float64 {
	rise := r.DischargeC - r.EnteringC
	q := math.Abs(r.HeatW)
	relRise := 0.0
	if math.Abs(rise) > 1e-6 {
		relRise = h.opt.RiseUncK / math.Abs(rise)
	} else {
		return coilmodel.StandardAirDensity * r.AirflowM3s * h.cp * h.opt.RiseUncK
	}
	return q * math.Hypot(h.opt.AirflowUnc, relRise)
}

func (h *History) estimate(id string, hours []HourRecord, design float64) *LoadEstimate {
	e := &LoadEstimate{Terminal: id, Hours: len(hours), DesignOutdoorC: math.NaN(), FitOutdoorMinC: math.NaN(),
		FitOutdoorMaxC: math.NaN(), ZoneSetC: math.NaN()}
	loc := h.site.Location
	if loc == nil {
		loc = time.UTC
	}
	pk := 0
	var days []HourRecord // each local day's largest steady hour
	lastDay := ""
	for i, r := range hours {
		if r.HeatW > hours[pk].HeatW {
			pk = i
		}
		if r.ValveFrac >= 0.95 && !math.IsNaN(r.ZoneC) && !math.IsNaN(r.ZoneSetC) && r.ZoneC < r.ZoneSetC-0.5 {
			e.LimitedHours++
		}
		day := r.Start.In(loc).Format("2006-01-02")
		switch {
		case day != lastDay:
			days = append(days, r)
			lastDay = day
		case r.HeatW > days[len(days)-1].HeatW:
			days[len(days)-1] = r
		}
	}
	p := hours[pk]
	e.PeakW, e.PeakAt, e.PeakOutdoorC, e.PeakUncW = p.HeatW, p.Start, p.OutdoorC, h.sensorUnc(p)
	e.Days = len(days)
	// Daily peaks with an outdoor temperature, coldest first.
	var withOAT []HourRecord
	for _, r := range days {
		if !math.IsNaN(r.OutdoorC) {
			withOAT = append(withOAT, r)
		}
	}
	sort.SliceStable(withOAT, func(i, j int) bool { return withOAT[i].OutdoorC < withOAT[j].OutdoorC })
	nFit := max(h.opt.MinDays, int(math.Ceil(h.opt.ColdFraction*float64(len(withOAT)))))
	fitRecs := withOAT[:min(nFit, len(withOAT))]
	e.EnteringAirC, e.ZoneSetC = medianOf(fitRecs, hours, func(r HourRecord) float64 { return r.EnteringC }),
		medianOf(fitRecs, hours, func(r HourRecord) float64 { return r.ZoneSetC })
	observed := func(note string) *LoadEstimate {
		e.Method, e.DesignW, e.DesignUncW, e.Note = MethodObservedPeak, e.PeakW, e.PeakUncW, note
		return e
	}
	if math.IsNaN(design) {
		return observed("no heating design outdoor temperature: the largest sustained hour, not extrapolated")
	}
	if len(withOAT) == 0 {
		return observed("no outdoor-air temperature: the largest sustained hour, not extrapolated")
	}
	if len(fitRecs) < h.opt.MinDays {
		return observed(fmt.Sprintf("%d days with steady hours and outdoor temperature (need %d): the largest sustained hour, not extrapolated",
			len(fitRecs), h.opt.MinDays))
	}
	// Fit in time order (for the residual autocorrelation).
	sort.SliceStable(fitRecs, func(i, j int) bool { return fitRecs[i].Start.Before(fitRecs[j].Start) })
	x := make([]float64, len(fitRecs))
	y := make([]float64, len(fitRecs))
	var sens float64
	for i, r := range fitRecs {
		x[i], y[i] = r.OutdoorC, r.HeatW
		sens += h.sensorUnc(r) / math.Max(math.Abs(r.HeatW), 1)
	}
	sens /= float64(len(fitRecs)) // mean relative sensor uncertainty (systematic: it does not average out)
	f, ok := fitLine(x, y)
	if !ok {
		return observed("outdoor temperature did not vary over the steady days: the largest sustained hour, not extrapolated")
	}
	e.Method, e.FitDays, e.DesignOutdoorC = MethodRegression, len(fitRecs), design
	e.FitOutdoorMinC, e.FitOutdoorMaxC = slicesMin(x), slicesMax(x)
	e.ExtrapolationK = math.Max(0, e.FitOutdoorMinC-design)
	if f.b > 0 {
		// No physical rise of load with cold over these days (an interior
		// zone): the mean daily peak, with the spread of the days.
		mean := 0.0
		for _, v := range y {
			mean += v
		}
		mean /= float64(len(y))
		var ss float64
		for _, v := range y {
			ss += (v - mean) * (v - mean)
		}
		f.b, f.a, f.xMean = 0, mean, design
		f.s = math.Sqrt(ss / float64(len(y)-1))
		e.Note = "load did not rise with cold over the steady days: the mean daily peak"
	}
	e.SlopeWPerK = f.b
	e.DesignW = math.Max(0, f.at(design))
	e.DesignUncW = math.Hypot(f.predictionHalfWidth(design), sens*e.DesignW)
	return e
}

func medianOf(primary, fallback []HourRecord, get func(HourRecord) float64) float64 {
	src := primary
	if len(src) == 0 {
		src = fallback
	}
	var v []float64
	for _, r := range src {
		if x := get(r); !math.IsNaN(x) {
			v = append(v, x)
		}
	}
	if len(v) == 0 {
		return math.NaN()
	}
	sort.Float64s(v)
	if len(v)%2 == 1 {
		return v[len(v)/2]
	}
	return 0.5 * (v[len(v)/2-1] + v[len(v)/2])
}

func slicesMin(x []float64) float64 {
	m := math.Inf(1)
	for _, v := range x {
		m = math.Min(m, v)
	}
	return m
}

func slicesMax(x []float64) float64 {
	m := math.Inf(-1)
	for _, v := range x {
		m = math.Max(m, v)
	}
	return m
}

// ReadHistory runs sources through the collector's assembler and returns
// the accumulated history. Steps outside [from, to) are ignored when the
// bounds are set (zero time: unbounded).
func ReadHistory(ctx context.Context, s *site.Site, sources []collector.Source, from, to time.Time, opt HistoryOptions) (*History, error) {
	asm, err := collector.NewAssembler(s, collector.AssembleConfig{})
	if err != nil {
		return nil, fmt.Errorf("history: %w", err)
	}
	h := NewHistory(s, opt)
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	ch := make(chan []collector.Sample, 16)
	errc := make(chan error, 1)
	go func() { errc <- asm.Run(ctx, sources, ch); close(ch) }()
	for batch := range ch {
		if len(batch) == 0 {
			continue
		}
		at := batch[0].At
		if (!from.IsZero() && at.Before(from)) || (!to.IsZero() && !at.Before(to)) {
			continue
		}
		h.Add(batch)
	}
	if err := <-errc; err != nil && !errors.Is(err, context.Canceled) {
		return h, fmt.Errorf("history: %w", err)
	}
	return h, nil
}
