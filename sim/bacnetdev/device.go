// Package bacnetdev serves simulated BACnet/IP devices on loopback for tests
// and the demo. A Server is one device group on one UDP port: devices sit
// either directly on that port or behind a simulated BACnet/IP router on
// remote networks. Devices hold analog/binary objects and trend logs that
// fill as the caller advances time, and can misbehave on purpose (silence,
// slow replies, Reject of ReadPropertyMultiple, ReadRange by time refused
// or answered without its first sequence number or by a search that takes
// the log's stamps to ascend, a trend-log clock stepped back, ReadRange by
// sequence answers shifted, with a record left out or misnumbered, segmented
// answers, duplicated and malformed packets). It reuses collector/bacnet/wire.
package bacnetdev

import (
	"fmt"
	"sync"
	"time"

	"risewatch/collector/bacnet/wire"
)

// Misbehaviour makes a device answer badly on purpose.
type Misbehaviour struct {
	Silent         bool          // never answers anything (also not Who-Is)
	Delay          time.Duration // every answer is sent this late
	RejectRPM      bool          // ReadPropertyMultiple gets Reject unrecognized-service
	Duplicate      bool          // every answer is sent twice
	MalformedFirst bool          // a malformed frame precedes every answer
	DropFirst      int           // the first N confirmed requests are ignored (forces retries)
	// DropSegmentACKs ignores this many Segment-ACKs (forces window resends).
	DropSegmentACKs int
	// RejectReadRangeByTime answers a ReadRange by time (ASHRAE 135 clause
	// 15.8.1.1.4.3) with Reject invalid-tag, as a device of a revision
	// before that choice ([7]) does; by position and by sequence number
	// are answered.
	RejectReadRangeByTime bool
	// ErrorReadRangeByTime answers a ReadRange by time with Error
	// services/optional-functionality-not-supported.
	ErrorReadRangeByTime bool
	// OmitFirstSeqByTime leaves the first-sequence-number out of answers
	// to ReadRange by time (it is required there when items are returned).
	OmitFirstSeqByTime bool
	// ByTimeBisect finds a ReadRange by time's reference by bisection, as
	// a device that takes its log's stamps to ascend does: on a log whose
	// clock stepped back (ClockOffset lowered) the answer may start after
	// records stamped later than the reference. Without it the buffer is
	// searched from the oldest record (by count > 0) or the newest (< 0).
	ByTimeBisect bool
	// ClockOffset is added to the stamp of every record logged from now on
	// (Advance and Record): lowering it steps the trend logs' clock back,
	// so records later in sequence are stamped earlier.
	ClockOffset time.Duration
	// BySeqShift moves the reference of a ReadRange by sequence number
	// (ASHRAE 135 clause 15.8.1.1.4.2) this many records later (earlier
	// when negative), clipped to the buffer, as a device that counts its
	// records off by some does: a forward read (count > 0) starts, a
	// backward one (count < 0) ends, that far from the record asked for.
	// The first-sequence-number is that of the first record sent.
	BySeqShift int32
	// BySeqSkip leaves the record of this sequence number (0: none) out of
	// answers to ReadRange by sequence number, as a device with a slot it
	// cannot read does: the answer holds one record fewer, without
	// more-items, and the first-sequence-number is that of the first
	// record sent, so it and the record count disagree with the records
	// around the hole.
	BySeqSkip uint32
	// BySeqFirstSeqOffset is added to the first-sequence-number of answers
	// to ReadRange by sequence number (the records are the right ones), as
	// a device that numbers its answers wrongly does. With BySeqShift set
	// to its negation the answer names the record asked for but holds
	// records shifted from it.
	BySeqFirstSeqOffset int32
	// BySeqBackwardOnly confines BySeqShift, BySeqSkip and
	// BySeqFirstSeqOffset to ReadRange by sequence number with a negative
	// count (records before the reference); forward reads are answered
	// rightly.
	BySeqBackwardOnly bool
}

// DeviceConfig describes one simulated device.
type DeviceConfig struct {
	Instance     uint32
	Name         string
	Vendor       uint16 // default 999 (unassigned, common practice for tests)
	MaxAPDU      int    // octets accepted and sent per segment (default 1476; MS/TP-like devices 480)
	Segmentation wire.Segmentation
	// Network and MAC place the device behind the server's router (Network 0: directly on the port).
	Network uint16
	MAC     byte
	// Location is the device clock's time zone for trend-log timestamps (default UTC).
	Location *time.Location
	Misbehaviour
}

// Object is one analog or binary object.
type Object struct {
	ID          wire.ObjectID
	Name        string
	Description string
	Units       uint32 // BACnetEngineeringUnits (ignored for binary objects)
	Value       float64
	Flags       [4]bool // in-alarm, fault, overridden, out-of-service
}

// TrendLogConfig describes a trend log that records one object's present-value.
type TrendLogConfig struct {
	Instance   uint32
	Name       string
	Logged     wire.ObjectID
	Interval   time.Duration // log interval (default 1 min)
	BufferSize int           // records kept; older ones are overwritten (default 1000)
}

type trendLog struct {
	cfg   TrendLogConfig
	ring  []logRec // circular buffer of up to BufferSize records
	head  int      // index in ring of the oldest record once the ring is full
	total uint32   // total-record-count: sequence number of the newest record
	last  time.Time
}

// logRec is one stored record, 16 octets: a log buffer of a week of
// one-minute records is 160 KB. The value is kept as the REAL it is on the
// wire (ASHRAE 135 clause 20.2.6: IEEE 754 single precision).
type logRec struct {
	at    int64 // Unix nanoseconds
	value float32
	flags uint8 // status flags, bit i = flag i
	kind  uint8 // wire.LogReal or wire.LogEnumerated
}

// count is record-count.
func (l *trendLog) count() int { return len(l.ring) }

// rec returns the i-th oldest record.
func (l *trendLog) rec(i int) *logRec {
	j := l.head + i
	if j >= len(l.ring) {
		j -= len(l.ring)
	}
	return &l.ring[j]
}

// record returns the i-th oldest record in wire form, stamped in loc.
func (l *trendLog) record(i int, loc *time.Location) wire.LogRecord {
	r := l.rec(i)
	dt, tm := wire.DateTimeOf(time.Unix(0, r.at).In(loc))
	f := r.flags
	return wire.LogRecord{Date: dt, Time: tm, Kind: r.kind, Value: float64(r.value), HasFlags: true,
		Flags: wire.NewBitString(f&1 != 0, f&2 != 0, f&4 != 0, f&8 != 0)}
}

// Device is one simulated device. Its methods are safe for concurrent use.
type Device struct {
	cfg     DeviceConfig
	mu      sync.Mutex
	objects map[wire.ObjectID]*Object
	logs    map[uint32]*trendLog
	order   []wire.ObjectID
	dropped int
	segDrop int
}

func newDevice(cfg DeviceConfig) *Device {
	if cfg.Vendor == 0 {
		cfg.Vendor = 999
	}
	if cfg.MaxAPDU <= 0 || cfg.MaxAPDU > 1476 {
		cfg.MaxAPDU = 1476
	}
	if cfg.Name == "" {
		cfg.Name = fmt.Sprintf("SIM-%d", cfg.Instance)
	}
	if cfg.Location == nil {
		cfg.Location = time.UTC
	}
	return &Device{cfg: cfg, objects: map[wire.ObjectID]*Object{}, logs: map[uint32]*trendLog{}}
}

// Instance is the device instance number.
func (d *Device) Instance() uint32 { return d.cfg.Instance }

// AddObject adds or replaces an object.
func (d *Device) AddObject(o Object) {
	d.mu.Lock()
	defer d.mu.Unlock()
	if _, ok := d.objects[o.ID]; !ok {
		d.order = append(d.order, o.ID)
	}
	cp := o
	d.objects[o.ID] = &cp
}

// AddTrendLog adds a trend log; its buffer starts empty.
func (d *Device) AddTrendLog(c TrendLogConfig) {
	if c.Interval <= 0 {
		c.Interval = time.Minute
	}
	if c.BufferSize <= 0 {
		c.BufferSize = 1000
	}
	d.mu.Lock()
	defer d.mu.Unlock()
	id := wire.ObjectID{Type: wire.ObjectTrendLog, Instance: c.Instance}
	if _, ok := d.logs[c.Instance]; !ok {
		d.order = append(d.order, id)
	}
	d.logs[c.Instance] = &trendLog{cfg: c}
}

// SetValue sets an object's present-value.
func (d *Device) SetValue(id wire.ObjectID, v float64) error {
	d.mu.Lock()
	defer d.mu.Unlock()
	o, ok := d.objects[id]
	if !ok {
		return fmt.Errorf("bacnetdev: device %d has no object %s", d.cfg.Instance, id)
	}
	o.Value = v
	return nil
}

// SetFlags sets an object's status flags.
func (d *Device) SetFlags(id wire.ObjectID, flags [4]bool) error {
	d.mu.Lock()
	defer d.mu.Unlock()
	o, ok := d.objects[id]
	if !ok {
		return fmt.Errorf("bacnetdev: device %d has no object %s", d.cfg.Instance, id)
	}
	o.Flags = flags
	return nil
}

// SetMisbehaviour changes how the device misbehaves.
func (d *Device) SetMisbehaviour(m Misbehaviour) {
	d.mu.Lock()
	d.cfg.Misbehaviour = m
	d.dropped, d.segDrop = 0, 0
	d.mu.Unlock()
}

func (d *Device) misbehaviour() Misbehaviour {
	d.mu.Lock()
	defer d.mu.Unlock()
	return d.cfg.Misbehaviour
}

// Advance records into every trend log whose interval has passed at now
// (logging the object's present-value as it is now), with timestamps in now's location.
func (d *Device) Advance(now time.Time) {
	d.mu.Lock()
	defer d.mu.Unlock()
	for _, l := range d.logs {
		if !l.last.IsZero() && now.Sub(l.last) < l.cfg.Interval {
			continue
		}
		o := d.objects[l.cfg.Logged]
		if o == nil {
			continue
		}
		l.last = now
		d.appendRecord(l, now.Add(d.cfg.ClockOffset), o.Value, o.Flags)
	}
}

// Record appends one record to a trend log directly, stamped at (plus
// ClockOffset when set).
func (d *Device) Record(trendLog uint32, at time.Time, v float64, flags [4]bool) error {
	d.mu.Lock()
	defer d.mu.Unlock()
	l, ok := d.logs[trendLog]
	if !ok {
		return fmt.Errorf("bacnetdev: device %d has no trend-log %d", d.cfg.Instance, trendLog)
	}
	d.appendRecord(l, at.Add(d.cfg.ClockOffset), v, flags)
	return nil
}

// StoredRecord is one record a trend log holds, as the device stores it.
type StoredRecord struct {
	Seq   uint32
	At    time.Time
	Value float64 // the stored REAL (float32) widened
	Flags [4]bool // in-alarm, fault, overridden, out-of-service
}

// TrendRecords returns the records a trend log holds, oldest first (for
// tests that check what a reader delivered against the device).
func (d *Device) TrendRecords(trendLog uint32) ([]StoredRecord, error) {
	d.mu.Lock()
	defer d.mu.Unlock()
	l, ok := d.logs[trendLog]
	if !ok {
		return nil, fmt.Errorf("bacnetdev: device %d has no trend-log %d", d.cfg.Instance, trendLog)
	}
	n := l.count()
	oldest := l.total - uint32(n) + 1
	out := make([]StoredRecord, n)
	for i := range out {
		r := l.rec(i)
		out[i] = StoredRecord{Seq: oldest + uint32(i), At: time.Unix(0, r.at).In(d.cfg.Location), Value: float64(r.value)}
		for b := range out[i].Flags {
			out[i].Flags[b] = r.flags&(1<<b) != 0
		}
	}
	return out, nil
}

func (d *Device) appendRecord(l *trendLog, at time.Time, v float64, flags [4]bool) {
	r := logRec{at: at.UnixNano(), value: float32(v), kind: wire.LogReal}
	for i, f := range flags {
		if f {
			r.flags |= 1 << i
		}
	}
	if l.cfg.Logged.Type.IsBinary() {
		r.kind = wire.LogEnumerated
	}
	if len(l.ring) < l.cfg.BufferSize {
		l.ring = append(l.ring, r)
	} else {
		l.ring[l.head] = r // overwrite the oldest
		if l.head++; l.head == len(l.ring) {
			l.head = 0
		}
	}
	l.total++ // wraps at 2^32 like the device's Unsigned32
}

func (d *Device) objectList() []wire.ObjectID {
	return append([]wire.ObjectID{{Type: wire.ObjectDevice, Instance: d.cfg.Instance}}, d.order...)
}
