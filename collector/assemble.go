package collector

import (
	"context"
	"fmt"
	"log/slog"
	"math"
	"slices"
	"time"

	"risewatch/site"
)

// DefaultLateness is how far a source may lag the leading source before
// steps are emitted without waiting for it (common practice for BAS trend
// uploads, which arrive in batches of up to an hour).
const DefaultLateness = time.Hour

// AssembleConfig configures the Assembler.
type AssembleConfig struct {
	Resample ResampleConfig
	// Lateness bounds how long a step waits for a lagging source; it also
	// bounds memory (Lateness/Interval steps are buffered).
	Lateness time.Duration
	// Sources names every source that will feed Add; a step is emitted once
	// all of them have passed it (or Lateness). Run fills it in.
	Sources []string
	// Progress, when set, makes the run restartable without losing or
	// repeating steps: steps before its watermark (accepted before the
	// last commit) are rebuilt but not emitted, and the consumer calls
	// Progress.Accept for each step it has handled. See Progress.
	Progress *Progress
	Logger   *slog.Logger
}

// AssembleStats counts what the assembler could not use.
type AssembleStats struct {
	Readings      int64 // readings accepted
	UnknownPoint  int64 // readings for a point name not in the site
	Late          int64 // readings older than a step already emitted, or out of order
	ForcedSteps   int64 // steps emitted before every source had passed them (Lateness)
	EmittedSteps  int64
	EmittedSample int64
	SkippedSteps  int64 // steps before the Progress watermark, already accepted before a restart
}

// field addresses one Sample field's value in four octets: a point index
// (>= 0), nothing (noField), or constant k of the assembler's table
// (fixedBase - k).
type field int32

const (
	noField   field = -1
	fixedBase field = -2
)

func (f field) configured() bool { return f != noField }

// termFields are a terminal's resolved fields.
type termFields struct {
	airflow, airflowSet, discharge, supply, valve, hotWater, plant, fan, occupied, zone, zoneSet field
	outdoor                                                                                      field
}

type sourceMark struct {
	mark int64 // latest reading time seen, ns
	seen bool
	done bool
	hint int32 // predicted index of the next reading's point (sources repeat their order)
}

// Assembler joins resampled points into per-terminal Samples on the
// analysis grid. It is streaming: readings arrive in time order per source
// (several sources may interleave); a step is emitted once every source has
// passed its end, or once the leading source is Lateness past it. Memory is
// bounded by points × Lateness/Interval; a step's values are held only from
// its first reading to its emission (a live site holds a few steps).
type Assembler struct {
	site     *site.Site
	cfg      AssembleConfig
	interval int64
	log      *slog.Logger

	names   []string
	index   nameIndex
	grid    grid       // resampling settings, shared by every point
	res     []resState // per point
	sink    binFunc    // stores a closed step of point cur in its ring slot
	cur     int32
	terms   []termFields
	consts  []float64   // fixed field values (field fixedBase-k is consts[k])
	ring    int64       // ring length in steps
	slots   []*ringSlot // ring entries, step k at k mod ring; nil until a value lands in it
	spare   []*ringSlot // emptied slots kept for reuse (at most keepSlots)
	first   int64       // oldest step not yet emitted (step number = start/interval)
	last    int64       // newest step touched
	started bool
	emitted bool
	skip    int64 // steps starting before this (ns) are not emitted (Progress watermark)

	sources map[string]*sourceMark
	samples []Sample
	stats   AssembleStats
	unknown map[string]struct{} // first few unknown names, for one log line each
}

// Points returns every point reference in the site, one per unique name, in
// a stable order (site outdoor air, loops, AHUs, terminals). Fixed-value references are
// included; binary marks points used as states even when the config did not
// say Binary.
func Points(s *site.Site) []site.PointRef {
	seen := map[string]bool{}
	var out []site.PointRef
	add := func(p site.PointRef, binary bool) {
		if p.Kind == site.PointNone || p.Name == "" || seen[p.Name] {
			return
		}
		seen[p.Name] = true
		p.Binary = p.Binary || binary
		out = append(out, p)
	}
	add(s.OutdoorAir, false)
	for _, l := range s.Loops {
		add(l.SupplyTemp, false)
		add(l.PlantEnabled, true)
	}
	for _, a := range s.AHUs {
		add(a.SupplyAir, false)
		add(a.FanStatus, true)
		add(a.Occupancy, true)
	}
	for _, t := range s.Terminals {
		p := t.Points
		add(p.Airflow, false)
		add(p.AirflowSetpoint, false)
		add(p.Discharge, false)
		add(p.Valve, false)
		add(p.ZoneTemp, false)
		add(p.ZoneSetpoint, false)
	}
	return out
}

// NewAssembler prepares the point table and the step ring for s.
func NewAssembler(s *site.Site, cfg AssembleConfig) (*Assembler, error) {
	cfg.Resample = cfg.Resample.WithDefaults()
	if cfg.Lateness <= 0 {
		cfg.Lateness = DefaultLateness
	}
	if cfg.Logger == nil {
		cfg.Logger = slog.Default()
	}
	a := &Assembler{site: s, cfg: cfg, interval: int64(cfg.Resample.Interval), log: cfg.Logger, grid: newGrid(cfg.Resample),
		sources: map[string]*sourceMark{}, unknown: map[string]struct{}{}, skip: math.MinInt64}
	if cfg.Progress != nil {
		cfg.Progress.setGrid(cfg.Resample)
		a.skip = cfg.Progress.skipBefore()
	}
	pts := Points(s)
	a.res = make([]resState, len(pts))
	a.names = make([]string, len(pts))
	for i, p := range pts {
		a.names[i] = p.Name
		a.res[i].binary = p.Binary
	}
	a.index = newNameIndex(a.names)
	a.sink = a.store
	a.ring = int64(cfg.Lateness/cfg.Resample.Interval) + 2
	a.slots = make([]*ringSlot, a.ring)
	ref := func(p site.PointRef) field {
		if p.Fixed != nil {
			return a.constant(*p.Fixed)
		}
		if i, ok := a.index.lookup(a.names, p.Name); ok && p.Kind != site.PointNone {
			return field(i)
		}
		return noField
	}
	a.terms = make([]termFields, 0, len(s.Terminals))
	for _, t := range s.Terminals {
		var f termFields
		p := t.Points
		f.airflow, f.airflowSet, f.discharge = ref(p.Airflow), ref(p.AirflowSetpoint), ref(p.Discharge)
		f.valve, f.zone, f.zoneSet = ref(p.Valve), ref(p.ZoneTemp), ref(p.ZoneSetpoint)
		f.supply, f.fan, f.occupied = noField, noField, noField
		f.hotWater, f.plant = noField, noField
		f.outdoor = ref(s.OutdoorAir)
		if t.AHU != "" {
			ai, ok := s.AHUIndex[t.AHU]
			if !ok {
				ai, ok = findAHU(s, t.AHU)
			}
			if !ok {
				return nil, fmt.Errorf("terminal %s: unknown AHU %q", t.ID, t.AHU)
			}
			ahu := s.AHUs[ai]
			f.supply, f.fan, f.occupied = ref(ahu.SupplyAir), ref(ahu.FanStatus), ref(ahu.Occupancy)
		}
		if t.Loop != "" {
			li, ok := s.LoopIndex[t.Loop]
			if !ok {
				li, ok = findLoop(s, t.Loop)
			}
			if !ok {
				return nil, fmt.Errorf("terminal %s: unknown loop %q", t.ID, t.Loop)
			}
			loop := s.Loops[li]
			f.hotWater, f.plant = ref(loop.SupplyTemp), ref(loop.PlantEnabled)
			if !f.hotWater.configured() && loop.DesignSupplyC > 0 {
				f.hotWater = a.constant(loop.DesignSupplyC)
			}
		}
		a.terms = append(a.terms, f)
	}
	for _, name := range cfg.Sources {
		a.sources[name] = &sourceMark{}
	}
	return a, nil
}

func findAHU(s *site.Site, id string) (int, bool) {
	for i, x := range s.AHUs {
		if x.ID == id {
			return i, true
		}
	}
	return 0, false
}

func findLoop(s *site.Site, id string) (int, bool) {
	for i, x := range s.Loops {
		if x.ID == id {
			return i, true
		}
	}
	return 0, false
}

// constant returns the field of a fixed value, sharing equal values.
func (a *Assembler) constant(v float64) field {
	k := slices.Index(a.consts, v)
	if k < 0 {
		k = len(a.consts)
		a.consts = append(a.consts, v)
	}
	return fixedBase - field(k)
}

// store puts a closed step of point a.cur into its ring slot (a.sink: one
// function for every point, not a closure per point).
func (a *Assembler) store(s int64, v float64, q Quality, _ float64) {
	step := s / a.interval
	if step < a.first || step >= a.first+a.ring {
		return
	}
	sl := a.slots[step%a.ring]
	if sl == nil {
		sl = a.newSlot()
		a.slots[step%a.ring] = sl
	}
	sl.vals[a.cur], sl.quals[a.cur] = v, q
}

// ringSlot holds one step's resampled value and quality per point.
type ringSlot struct {
	vals  []float64
	quals []Quality
}

// keepSlots is how many emptied ring slots are kept for reuse. A live
// source fills one or two steps ahead of the emitted one, so the ring holds
// a few slots, not Lateness/Interval of them; slots a lagging source or a
// history backfill needed beyond these are returned to the garbage
// collector once their steps are emitted.
const keepSlots = 4

// newSlot returns an empty slot (every quality Missing), reused if possible.
func (a *Assembler) newSlot() *ringSlot {
	if n := len(a.spare); n > 0 {
		sl := a.spare[n-1]
		a.spare[n-1] = nil
		a.spare = a.spare[:n-1]
		return sl
	}
	np := len(a.res)
	sl := &ringSlot{vals: make([]float64, np), quals: make([]Quality, np)}
	for i := range sl.quals {
		sl.quals[i] = Missing
	}
	return sl
}

// freeSlot empties the slot of ring entry r and keeps it for reuse or drops
// it.
func (a *Assembler) freeSlot(r int64) {
	sl := a.slots[r]
	if sl == nil {
		return
	}
	a.slots[r] = nil
	if len(a.spare) >= keepSlots {
		return
	}
	for i := range sl.quals {
		sl.quals[i] = Missing
	}
	a.spare = append(a.spare, sl)
}

// Stats returns the counters so far.
func (a *Assembler) Stats() AssembleStats { return a.stats }

// Configured returns, for terminal ti, the flags of the fields that have a
// point or a constant configured; the engine uses it to tell "not
// configured" from "missing now" (both set the field's flag in a Sample).
func (a *Assembler) Configured(ti int) Flags {
	f := a.terms[ti]
	var fl Flags
	set := func(x field, b Flags) {
		if x.configured() {
			fl |= b
		}
	}
	set(f.airflow, FlagAirflow)
	set(f.airflowSet, FlagAirflowSet)
	set(f.discharge, FlagDischarge)
	set(f.supply, FlagSupply)
	set(f.valve, FlagValve)
	set(f.hotWater, FlagHotWater)
	set(f.plant, FlagPlant)
	set(f.fan, FlagFan)
	set(f.occupied, FlagOccupied)
	set(f.zone, FlagZone)
	set(f.zoneSet, FlagZoneSet)
	set(f.outdoor, FlagOutdoor)
	return fl
}

// Add feeds a batch of readings from one source and calls emit with the
// samples of every step it completes (one call per step, all terminals in
// site order). The slice passed to emit is reused: copy what you keep.
func (a *Assembler) Add(source string, batch []Reading, emit func([]Sample)) {
	sm := a.sources[source]
	if sm == nil {
		sm = &sourceMark{}
		a.sources[source] = sm
	}
	for i := range batch {
		rd := &batch[i]
		p := sm.hint
		if int(p) >= len(a.names) || a.names[p] != rd.Point {
			var ok bool
			if p, ok = a.index.lookup(a.names, rd.Point); !ok {
				a.unknownPoint(source, rd.Point)
				continue
			}
		}
		sm.hint = p + 1
		at := rd.At.UnixNano()
		step := floorStep(at, a.interval) / a.interval
		if !sm.seen || at > sm.mark {
			sm.mark, sm.seen = at, true
		}
		if !a.started {
			a.started, a.first, a.last = true, step, step
		}
		if step < a.first {
			if a.emitted || a.last-step >= a.ring-1 {
				a.stats.Late++
				continue
			}
			a.first = step // nothing emitted yet: widen the window backwards
		}
		if step >= a.first+a.ring-1 {
			// Lateness exceeded: emit old steps so the ring can hold this one.
			a.emitThrough(step-a.ring+1, true, emit)
		}
		a.last = max(a.last, step)
		a.cur = p
		if !a.res[p].add(&a.grid, at, rd.Value, rd.Quality, a.sink) {
			a.stats.Late++
			continue
		}
		a.stats.Readings++
	}
	a.release(emit)
}

// SourceDone tells the assembler a source has ended; it no longer holds
// steps back.
func (a *Assembler) SourceDone(source string, emit func([]Sample)) {
	sm := a.sources[source]
	if sm == nil {
		sm = &sourceMark{}
		a.sources[source] = sm
	}
	sm.done = true
	a.release(emit)
}

// Flush emits every remaining step up to the newest reading's step, as at
// the end of all input.
func (a *Assembler) Flush(emit func([]Sample)) {
	if a.started {
		a.emitThrough(a.last, false, emit)
	}
}

// release emits the steps every source has passed, and the steps the
// leading source is more than Lateness past.
func (a *Assembler) release(emit func([]Sample)) {
	if !a.started {
		return
	}
	bound, lead := int64(math.MaxInt64), int64(math.MinInt64)
	active := false
	for _, sm := range a.sources {
		if sm.seen {
			lead = max(lead, sm.mark)
		}
		if sm.done {
			continue
		}
		active = true
		if !sm.seen {
			bound = math.MinInt64
			continue
		}
		bound = min(bound, sm.mark)
	}
	if !active {
		a.Flush(emit)
		return
	}
	// A step [s, s+I) is complete when the bound is at or past s+I.
	if bound != math.MinInt64 {
		a.emitThrough(floorStep(bound, a.interval)/a.interval-1, false, emit)
	}
	if lead != math.MinInt64 {
		a.emitThrough(floorStep(lead-int64(a.cfg.Lateness), a.interval)/a.interval-1, true, emit)
	}
}

// emitThrough emits steps first..last inclusive.
func (a *Assembler) emitThrough(last int64, forced bool, emit func([]Sample)) {
	for a.first <= last {
		k := a.first
		end := (k + 1) * a.interval
		for p := range a.res {
			a.cur = int32(p)
			a.res[p].advance(&a.grid, end, a.sink)
		}
		r := k % a.ring
		if k*a.interval < a.skip {
			a.stats.SkippedSteps++ // accepted before a restart: rebuilt only for the resamplers' state
		} else {
			var vals []float64
			var quals []Quality
			if sl := a.slots[r]; sl != nil {
				vals, quals = sl.vals, sl.quals
			}
			a.build(k, vals, quals)
			a.stats.EmittedSteps++
			a.stats.EmittedSample += int64(len(a.samples))
			if emit != nil {
				emit(a.samples)
			}
		}
		a.freeSlot(r)
		if forced {
			a.stats.ForcedSteps++
		}
		a.first++
		a.emitted = true
	}
}

// build fills a.samples for step k from one ring slot (nil: every point
// missing).
func (a *Assembler) build(k int64, vals []float64, quals []Quality) {
	at := time.Unix(0, k*a.interval).UTC()
	if cap(a.samples) < len(a.terms) {
		a.samples = make([]Sample, len(a.terms))
	}
	a.samples = a.samples[:len(a.terms)]
	get := func(f field, flag Flags, fl *Flags) float64 {
		switch {
		case f <= fixedBase:
			return a.consts[fixedBase-f]
		case f >= 0 && quals != nil && quals[f] == Good:
			return vals[f]
		}
		*fl |= flag
		return math.NaN()
	}
	for ti := range a.terms {
		f := &a.terms[ti]
		var fl Flags
		s := &a.samples[ti]
		s.Terminal, s.At = ti, at
		s.AirflowM3s = get(f.airflow, FlagAirflow, &fl)
		s.AirflowSetM3s = get(f.airflowSet, FlagAirflowSet, &fl)
		s.DischargeC = get(f.discharge, FlagDischarge, &fl)
		s.SupplyC = get(f.supply, FlagSupply, &fl)
		s.ValveFrac = get(f.valve, FlagValve, &fl)
		s.HotWaterC = get(f.hotWater, FlagHotWater, &fl)
		s.ZoneC = get(f.zone, FlagZone, &fl)
		s.ZoneSetC = get(f.zoneSet, FlagZoneSet, &fl)
		s.OutdoorC = get(f.outdoor, FlagOutdoor, &fl)
		s.PlantOn = get(f.plant, FlagPlant, &fl) >= 0.5
		s.FanOn = get(f.fan, FlagFan, &fl) >= 0.5
		s.Occupied = get(f.occupied, FlagOccupied, &fl) >= 0.5
		s.Flags = fl
	}
}

func (a *Assembler) unknownPoint(source, name string) {
	a.stats.UnknownPoint++
	if _, ok := a.unknown[name]; ok || len(a.unknown) >= 20 {
		return
	}
	a.unknown[name] = struct{}{}
	a.log.Warn("reading for a point not in the site ignored", "source", source, "point", name)
}

// Run runs every source, feeds their readings to the assembler and sends
// each completed step's samples on out (a fresh slice per step). It returns
// when all sources have ended (after the last step is sent) or ctx ends. A
// source's error is returned after the others finish, wrapped with its name.
func (a *Assembler) Run(ctx context.Context, sources []Source, out chan<- []Sample) error {
	type tagged struct {
		src   string
		batch []Reading
		done  bool
		err   error
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	in := make(chan tagged, len(sources)*4)
	recyclers := make(map[string]Recycler)
	for _, s := range sources {
		if _, ok := a.sources[s.Name()]; !ok {
			a.sources[s.Name()] = &sourceMark{}
		}
		if r, ok := s.(Recycler); ok {
			recyclers[s.Name()] = r
		}
	}
	for _, s := range sources {
		go func(s Source) {
			ch := make(chan []Reading, 4)
			errc := make(chan error, 1)
			go func() { errc <- s.Run(ctx, ch); close(ch) }()
			for b := range ch {
				select {
				case in <- tagged{src: s.Name(), batch: b}:
				case <-ctx.Done():
				}
			}
			err := <-errc
			select {
			case in <- tagged{src: s.Name(), done: true, err: err}:
			case <-ctx.Done():
			}
		}(s)
	}
	var firstErr error
	var sendErr error
	emit := func(ss []Sample) {
		if sendErr != nil {
			return
		}
		// Hand the step's slice over instead of copying it: the next step
		// is built into a new one (no second array of every terminal's
		// sample kept between steps).
		a.samples = nil
		select {
		case out <- ss:
		case <-ctx.Done():
			sendErr = ctx.Err()
		}
	}
	for left := len(sources); left > 0; {
		select {
		case <-ctx.Done():
			return ctx.Err()
		case t := <-in:
			if !t.done {
				a.Add(t.src, t.batch, emit) // copies what it keeps
				if r := recyclers[t.src]; r != nil {
					r.Recycle(t.batch)
				}
				continue
			}
			left--
			if t.err != nil && firstErr == nil {
				firstErr = fmt.Errorf("source %s: %w", t.src, t.err)
			}
			a.SourceDone(t.src, emit)
		}
		if sendErr != nil {
			return sendErr
		}
	}
	a.Flush(emit)
	if sendErr != nil {
		return sendErr
	}
	return firstErr
}
