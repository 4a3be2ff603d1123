package bacnet

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"net/netip"
	"slices"
	"sync"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet/wire"
	"risewatch/site"
	"risewatch/units"
)

// point is one configured BACnet point, resolved to wire identifiers: from
// the site's point reference only what reads use, in 48 octets (the whole
// reference is about 100, a unit conversion 72; a campus has 30,000
// points, which share a handful of units through Source.units).
type point struct {
	name     string
	device   uint32
	object   wire.ObjectID
	prop     wire.PropertyID
	trend    uint32 // trend-log instance, when hasTrend
	unit0    uint16 // unit as configured (the units check): index into Source.units
	conv     uint16 // conversion applied to device values: index into Source.units (0 = none)
	binary   bool   // configured as a state
	hasTrend bool
}

// unitEntry is one distinct unit of a source's points; entry 0 is "none".
type unitEntry struct {
	text string // as configured, or the device's unit name
	u    units.Unit
	has  bool // u converts
}

// unitTable interns a source's units.
type unitTable []unitEntry

// intern returns the index of the entry for text (converting with u when
// has), adding it when new.
func (t *unitTable) intern(text string, u units.Unit, has bool) uint16 {
	for i, e := range *t {
		if e.text == text && e.has == has && (!has || e.u.Name == u.Name) {
			return uint16(i)
		}
	}
	*t = append(*t, unitEntry{text: text, u: u, has: has})
	return uint16(len(*t) - 1)
}

// Source polls configured BACnet points and backfills their trend logs. It
// implements collector.Source.
type Source struct {
	name   string
	cfg    site.BACnetConfig
	points []point
	units  unitTable // the points' units, shared (point.unit0, point.conv)
	cp     Checkpoints
	loc    *time.Location
	log    *slog.Logger
	opts   Options

	mu         sync.Mutex
	client     *Client
	devices    map[uint32]*Device
	groups     []deviceGroup // points by device (byDevice)
	unitChecks []unitResult
	fail       failures

	// Trend-log checkpoints tied to a collector.Progress (UseProgress):
	// per log, the records delivered since the last commit.
	tmu    sync.Mutex
	prog   *collector.Progress
	tracks map[string]*trendTrack
	// Workers bounds how many devices are polled at once (default 64).
	Workers int
	// OnReadFailure, when set before Start, is called (from poll workers,
	// possibly concurrently) for each device whose read failed in a poll,
	// after retries, and once when a device falls back to ReadProperty.
	OnReadFailure func(ReadFailure)
	// FailureLogEvery is the least interval between repeated log lines for
	// a device that keeps failing the same way (default 10 min).
	FailureLogEvery time.Duration
}

// NewSource builds a source from its site configuration and the points that
// name it. Bad point references are reported with the point's name and lose
// nothing already accepted: every error is collected and returned together.
func NewSource(name string, cfg site.BACnetConfig, refs []site.PointRef, cp Checkpoints, loc *time.Location, log *slog.Logger) (*Source, error) {
	if log == nil {
		log = slog.Default()
	}
	if cp == nil {
		cp = &MemCheckpoints{}
	}
	if loc == nil {
		loc = time.UTC
	}
	s := &Source{name: name, cfg: cfg, cp: cp, loc: loc, log: log, devices: map[uint32]*Device{}, Workers: 64,
		points: make([]point, 0, len(refs)), units: unitTable{{}}}
	var errs []error
	for _, r := range refs {
		if r.Kind != site.PointBACnet || r.BACnet == nil {
			continue
		}
		p, err := resolvePoint(r, &s.units)
		if err != nil {
			errs = append(errs, fmt.Errorf("source %s: point %s: %w", name, r.Name, err))
			continue
		}
		s.points = append(s.points, p)
	}
	s.opts = Options{Bind: cfg.Bind, Timeout: cfg.Timeout, Retries: cfg.Retries, NoRetries: cfg.Retries == 0 && cfg.Timeout > 0,
		BBMD: cfg.BBMD, TTL: cfg.TTL, Logger: log}
	return s, errors.Join(errs...)
}

func resolvePoint(r site.PointRef, ut *unitTable) (point, error) {
	b := r.BACnet
	typ, err := wire.ParseObjectType(b.ObjectType)
	if err != nil {
		return point{}, err
	}
	prop, err := wire.ParsePropertyID(b.Property)
	if err != nil {
		return point{}, err
	}
	p := point{name: r.Name, binary: r.Binary, device: b.Device, object: wire.ObjectID{Type: typ, Instance: b.Instance}, prop: prop}
	if b.TrendLog != nil {
		p.trend, p.hasTrend = *b.TrendLog, true
	}
	p.unit0 = ut.intern(r.Unit, units.Unit{}, false)
	if r.Unit != "" && !r.Binary && !typ.IsBinary() {
		u, err := units.ParseUnit(r.Unit)
		if err != nil {
			return point{}, err
		}
		p.conv = ut.intern(r.Unit, u, true)
	}
	return p, nil
}

// PointsFor collects the points of every loop, AHU and terminal that read from source.
func PointsFor(s *site.Site, source string) []site.PointRef {
	var out []site.PointRef
	add := func(ps ...site.PointRef) {
		for _, p := range ps {
			if p.Kind == site.PointBACnet && p.Source == source {
				out = append(out, p)
			}
		}
	}
	for _, l := range s.Loops {
		add(l.SupplyTemp, l.PlantEnabled)
	}
	for _, a := range s.AHUs {
		add(a.SupplyAir, a.FanStatus, a.Occupancy)
	}
	for _, t := range s.Terminals {
		p := t.Points
		add(p.Airflow, p.AirflowSetpoint, p.Discharge, p.Valve, p.ZoneTemp, p.ZoneSetpoint)
	}
	return out
}

// SetCheckpoints replaces the trend-log checkpoint store (benchmarks, tools
// that re-read history); not safe during a sweep. With UseProgress the
// logs already read keep their in-process positions.
func (s *Source) SetCheckpoints(cp Checkpoints) {
	s.mu.Lock()
	defer s.mu.Unlock()
	s.cp = cp
}

// Name is the source's configured name.
func (s *Source) Name() string { return s.name }

// UnitChecks returns the result of the start-up units comparison.
func (s *Source) UnitChecks() []UnitCheck {
	s.mu.Lock()
	defer s.mu.Unlock()
	out := make([]UnitCheck, len(s.unitChecks))
	for i, r := range s.unitChecks {
		p := &s.points[r.point]
		out[i] = checkUnit(p.name, s.units[p.unit0].text, r.device)
	}
	return out
}

// unitResult is one point's start-up units reading, kept in 8 octets: the
// UnitCheck (names, message) is rebuilt from it on request.
type unitResult struct {
	point  int32 // index into Source.points
	device EngineeringUnit
}

// Start binds the client, finds every device (configured addresses first,
// then a broadcast Who-Is for the rest) and reads each analog point's units
// property, flagging points whose units disagree with the configuration.
func (s *Source) Start(ctx context.Context) error {
	c, err := Dial(ctx, s.opts)
	if err != nil {
		return fmt.Errorf("source %s: %w", s.name, err)
	}
	s.mu.Lock()
	s.client = c
	s.mu.Unlock()
	need := map[uint32]bool{}
	for _, p := range s.points {
		need[p.device] = true
	}
	var missing, known []uint32
	addrs := map[uint32]Address{}
	for inst := range need {
		addrText, ok := s.cfg.Devices[inst]
		if !ok {
			missing = append(missing, inst)
			continue
		}
		a, err := ParseAddress(addrText)
		if err != nil {
			return fmt.Errorf("source %s: device %d: %w", s.name, inst, err)
		}
		addrs[inst] = a
		known = append(known, inst)
	}
	// Resolve the configured devices in parallel (each may wait for its I-Am).
	var rmu sync.Mutex
	var rerrs []error
	jobs := make(chan uint32)
	var wg sync.WaitGroup
	for w := 0; w < max(1, min(s.Workers, len(known))); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for inst := range jobs {
				d, err := c.Resolve(ctx, inst, addrs[inst])
				rmu.Lock()
				if err != nil {
					rerrs = append(rerrs, fmt.Errorf("source %s: device %d: %w", s.name, inst, err))
				} else {
					s.devices[inst] = d
				}
				rmu.Unlock()
			}
		}()
	}
	for _, inst := range known {
		jobs <- inst
	}
	close(jobs)
	wg.Wait()
	if err := errors.Join(rerrs...); err != nil {
		return err
	}
	if len(missing) > 0 {
		bcast := netip.AddrPortFrom(netip.AddrFrom4([4]byte{255, 255, 255, 255}), DefaultPort)
		if _, err := c.Discover(ctx, []netip.AddrPort{bcast}, -1, -1, c.opts.Timeout); err != nil {
			s.log.Warn("bacnet: who-is broadcast failed", "source", s.name, "err", err)
		}
		for _, inst := range missing {
			if d, ok := c.Device(inst); ok {
				s.devices[inst] = d
			} else {
				s.log.Warn("bacnet: device not found; its points stay missing", "source", s.name, "device", inst)
			}
		}
	}
	s.checkUnits(ctx)
	return nil
}

func (s *Source) checkUnits(ctx context.Context) {
	byDev := map[uint32][]int{}
	for i, p := range s.points {
		if p.prop == wire.PropPresentValue && !p.object.Type.IsBinary() && !p.binary {
			byDev[p.device] = append(byDev[p.device], i)
		}
	}
	var checks []unitResult
	for inst, idx := range byDev {
		d := s.devices[inst]
		if d == nil {
			continue
		}
		reads := make([]Read, len(idx))
		for k, i := range idx {
			reads[k] = Read{s.points[i].object, wire.PropertyRef{Prop: wire.PropUnits, Index: wire.NoIndex}}
		}
		res := s.client.ReadMany(ctx, d, reads)
		s.noteFallback(d)
		for k, r := range res {
			p := &s.points[idx[k]]
			if r.Err != nil || len(r.Values) != 1 || r.Values[0].Tag != wire.TagEnumerated {
				continue
			}
			uc := checkUnit(p.name, s.units[p.unit0].text, EngineeringUnit(r.Values[0].U))
			if du, ok := UnitOf(uc.Device); ok {
				p.conv = s.units.intern(du.Name, du, true) // the device says what its numbers mean
			}
			if uc.Mismatch {
				s.log.Warn("bacnet: units disagree with the configuration", "source", s.name, "point", p.name, "detail", uc.Message)
			}
			checks = append(checks, unitResult{point: int32(idx[k]), device: uc.Device})
		}
	}
	s.mu.Lock()
	s.unitChecks = slices.Clip(checks)
	s.mu.Unlock()
}

// Client is the started client (nil before Start and after Close). Its
// Stats count requests, retries, timeouts and malformed or unmatched answers.
func (s *Source) Client() *Client {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.client
}

// Close releases the client.
func (s *Source) Close() error {
	s.mu.Lock()
	c := s.client
	s.client = nil
	s.mu.Unlock()
	if c == nil {
		return nil
	}
	return c.Close()
}

// convert turns a device value into SI with the point's quality.
func (s *Source) convert(p *point, v float64, flags wire.BitString, hasFlags bool) (float64, collector.Quality) {
	q := collector.Good
	if hasFlags && (flags.Bit(wire.StatusFault) || flags.Bit(wire.StatusOutOfService)) {
		q = collector.Bad
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, collector.Missing
	}
	if p.object.Type.IsBinary() || p.binary {
		if v != 0 {
			return 1, q
		}
		return 0, q
	}
	if e := &s.units[p.conv]; e.has {
		v = e.u.ToSI(v)
	}
	return v, q
}

// PollOnce reads every point once: present value and status flags, packed
// into ReadPropertyMultiple per device. Unreachable points come back Missing.
func (s *Source) PollOnce(ctx context.Context) ([]collector.Reading, error) {
	s.mu.Lock()
	c := s.client
	s.mu.Unlock()
	if c == nil {
		return nil, fmt.Errorf("source %s: not started", s.name)
	}
	now := time.Now()
	groups := s.byDevice()
	out := make([]collector.Reading, len(s.points))
	jobs := make(chan *deviceGroup)
	var wg sync.WaitGroup
	for w := 0; w < max(1, min(s.Workers, len(groups))); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var sc readScratch // this worker's buffers, reused from device to device
			for g := range jobs {
				s.pollDevice(ctx, g.device, g.points, now, out, &sc)
			}
		}()
	}
	for i := range groups {
		jobs <- &groups[i]
	}
	close(jobs)
	wg.Wait()
	return out, ctx.Err()
}

// deviceGroup is one device's points (indexes into Source.points).
type deviceGroup struct {
	device uint32
	points []int32
}

// byDevice returns the points grouped by device, built on the first poll
// and kept (a poll would otherwise rebuild a map of every point).
func (s *Source) byDevice() []deviceGroup {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.groups != nil {
		return s.groups
	}
	at := map[uint32]int{}
	var groups []deviceGroup
	for i, p := range s.points {
		k, ok := at[p.device]
		if !ok {
			k = len(groups)
			at[p.device] = k
			groups = append(groups, deviceGroup{device: p.device})
		}
		groups[k].points = append(groups[k].points, int32(i))
	}
	s.groups = slices.Clip(groups)
	return s.groups
}

func (s *Source) pollDevice(ctx context.Context, inst uint32, idx []int32, now time.Time, out []collector.Reading, sc *readScratch) {
	d := s.devices[inst]
	if d == nil {
		for _, i := range idx {
			out[i] = Reading(s.points[i].name, now)
		}
		s.reportFailure(ReadFailure{Source: s.name, Device: inst, Kind: FailNotFound, Reason: "device not found at start", Points: len(idx)})
		return
	}
	reads := slices.Grow(sc.reads[:0], 2*len(idx))
	for _, i := range idx {
		p := s.points[i]
		reads = append(reads, Read{p.object, wire.PropertyRef{Prop: p.prop, Index: wire.NoIndex}})
		if p.prop == wire.PropPresentValue {
			reads = append(reads, Read{p.object, wire.PropertyRef{Prop: wire.PropStatusFlags, Index: wire.NoIndex}})
		}
	}
	sc.reads = reads
	t0 := time.Now()
	res := s.client.readMany(ctx, d, reads, sc)
	took := time.Since(t0)
	s.noteFallback(d)
	var first error
	var firstKind FailureKind
	var firstReason string
	failed := 0
	fail := func(err error) {
		kind, reason, ok := ClassifyReadError(err)
		if !ok {
			return
		}
		failed++
		if first == nil {
			first, firstKind, firstReason = err, kind, reason
		}
	}
	k := 0
	for _, i := range idx {
		p := &s.points[i]
		r := Reading(p.name, now)
		val := res[k]
		var flags wire.BitString
		hasFlags := false
		if p.prop == wire.PropPresentValue {
			k++
			if f := res[k]; f.Err == nil && len(f.Values) == 1 && f.Values[0].Tag == wire.TagBitString {
				flags, hasFlags = f.Values[0].Bits, true
			}
		}
		switch {
		case val.Err != nil:
			fail(val.Err)
		case len(val.Values) != 1:
			fail(fmt.Errorf("%s %s: %d values, want 1", p.object, p.prop, len(val.Values)))
		default:
			if f, ok := val.Values[0].Float(); ok {
				r.Value, r.Quality = s.convert(p, f, flags, hasFlags)
			} else {
				fail(fmt.Errorf("%s %s: value of application tag %d is not a number", p.object, p.prop, val.Values[0].Tag))
			}
		}
		k++
		out[i] = r
	}
	if failed == 0 {
		if ctx.Err() == nil {
			s.deviceOK(d)
		}
		return
	}
	s.reportFailure(ReadFailure{Source: s.name, Device: inst, Address: d.Addr.String(), Kind: firstKind, Reason: firstReason,
		Points: failed, Took: took, Err: first})
}

// Reading makes a Missing reading for point at t.
func Reading(point string, t time.Time) collector.Reading {
	return collector.Reading{Point: point, At: t, Quality: collector.Missing}
}

// Run starts the source, backfills trend logs, then polls every
// PollInterval and sweeps trend logs every TrendSweep until ctx ends.
func (s *Source) Run(ctx context.Context, out chan<- []collector.Reading) error {
	if err := s.Start(ctx); err != nil {
		return err
	}
	defer s.Close()
	emit := func(rs []collector.Reading) error {
		if len(rs) == 0 {
			return nil
		}
		select {
		case out <- rs:
			return nil
		case <-ctx.Done():
			return ctx.Err()
		}
	}
	poll := s.cfg.PollInterval
	if poll <= 0 {
		poll = time.Minute
	}
	sweep := s.cfg.TrendSweep
	if sweep <= 0 {
		sweep = 15 * time.Minute
	}
	if _, err := s.SweepTrends(ctx, emit); err != nil {
		s.log.Warn("bacnet: trend sweep incomplete", "source", s.name, "err", err)
	}
	pt, st := time.NewTicker(poll), time.NewTicker(sweep)
	defer pt.Stop()
	defer st.Stop()
	for {
		rs, err := s.PollOnce(ctx)
		if ctx.Err() != nil {
			return nil
		}
		if err != nil {
			s.log.Warn("bacnet: poll incomplete", "source", s.name, "err", err)
		}
		if err := emit(rs); err != nil {
			return nil
		}
		select {
		case <-ctx.Done():
			return nil
		case <-pt.C:
		case <-st.C:
			if _, err := s.SweepTrends(ctx, emit); err != nil && ctx.Err() == nil {
				s.log.Warn("bacnet: trend sweep incomplete", "source", s.name, "err", err)
			}
		}
	}
}

var _ collector.Source = (*Source)(nil)
