package wire

import (
	"errors"
	"fmt"
)

// RangeKind selects the ReadRange range form (ASHRAE 135 clause 15.8.1.1.4).
type RangeKind uint8

// Range forms. Context tags 4 and 5 are deprecated and not encoded.
const (
	RangeAll        RangeKind = iota // no range: the whole list
	RangeByPosition                  // [3]
	RangeBySequence                  // [6]
	RangeByTime                      // [7]
)

// ReadRangeRequest is a ReadRange request.
type ReadRangeRequest struct {
	Object ObjectID
	PropertyRef
	Kind    RangeKind
	Ref     uint32 // reference index (by position) or sequence number
	RefDate Date   // by time
	RefTime Time   // by time
	Count   int32  // records from Ref forward (>0) or backward (<0); never 0
}

// AppendReadRange appends a ReadRange request APDU.
func AppendReadRange(b []byte, h RequestHeader, q ReadRangeRequest) []byte {
	b = appendConfirmedHeader(b, h, ServiceReadRange)
	b = AppendContextObjectID(b, 0, q.Object)
	b = appendPropRef(b, 1, 2, q.PropertyRef)
	switch q.Kind {
	case RangeByPosition:
		b = AppendOpening(b, 3)
		b = AppendUnsigned(b, uint64(q.Ref))
		b = AppendSigned(b, int64(q.Count))
		b = AppendClosing(b, 3)
	case RangeBySequence:
		b = AppendOpening(b, 6)
		b = AppendUnsigned(b, uint64(q.Ref))
		b = AppendSigned(b, int64(q.Count))
		b = AppendClosing(b, 6)
	case RangeByTime:
		b = AppendOpening(b, 7)
		b = AppendDate(b, q.RefDate)
		b = AppendTime(b, q.RefTime)
		b = AppendSigned(b, int64(q.Count))
		b = AppendClosing(b, 7)
	}
	return b
}

// DecodeReadRange decodes ReadRange request data.
func DecodeReadRange(data []byte) (ReadRangeRequest, error) {
	r := NewReader(data)
	var q ReadRangeRequest
	var err error
	if q.Object, err = r.ContextObjectID(0); err != nil {
		return q, fmt.Errorf("read-range: object: %w", err)
	}
	if q.PropertyRef, err = readPropRef(r, 1, 2); err != nil {
		return q, fmt.Errorf("read-range: %w", err)
	}
	if r.Done() {
		return q, nil
	}
	t, err := r.Peek()
	if err != nil {
		return q, err
	}
	if !t.Opening {
		return q, errors.New("read-range: range is not a constructed choice")
	}
	_ = r.Open(t.Number)
	switch t.Number {
	case 3, 6:
		q.Kind = RangeByPosition
		if t.Number == 6 {
			q.Kind = RangeBySequence
		}
		v, err := r.App()
		if err != nil || v.Tag != TagUnsigned || v.U > 0xFFFFFFFF {
			return q, fmt.Errorf("read-range: reference: %v", orTag(err, v))
		}
		q.Ref = uint32(v.U)
	case 7:
		q.Kind = RangeByTime
		d, err1 := r.App()
		tm, err2 := r.App()
		if err := errors.Join(err1, err2); err != nil || d.Tag != TagDate || tm.Tag != TagTime {
			return q, fmt.Errorf("read-range: reference time: %v", orTag(err, d))
		}
		q.RefDate, q.RefTime = d.Date, tm.Time
	default:
		return q, fmt.Errorf("read-range: range choice [%d] not supported", t.Number)
	}
	c, err := r.App()
	if err != nil || c.Tag != TagSigned || c.I == 0 || c.I < -1<<31 || c.I >= 1<<31 {
		return q, fmt.Errorf("read-range: count: %v", orTag(err, c))
	}
	q.Count = int32(c.I)
	if err := r.Close(t.Number); err != nil {
		return q, fmt.Errorf("read-range: %w", err)
	}
	if !r.Done() {
		return q, errors.New("read-range: trailing data")
	}
	return q, nil
}

// ResultFlags are the ReadRange result flags (BACnetResultFlags).
type ResultFlags struct{ First, Last, More bool }

// ReadRangeACK is a ReadRange answer holding log-buffer records.
type ReadRangeACK struct {
	Object ObjectID
	PropertyRef
	Flags       ResultFlags
	ItemCount   uint32
	Records     []LogRecord
	FirstSeq    uint32
	HasFirstSeq bool
}

// Log datum choices of BACnetLogRecord (ASHRAE 135 clause 12.25.14).
const (
	LogStatus     = 0
	LogBoolean    = 1
	LogReal       = 2
	LogEnumerated = 3
	LogUnsigned   = 4
	LogSigned     = 5
	LogBitString  = 6
	LogNull       = 7
	LogFailure    = 8
	LogTimeChange = 9
	LogAnyValue   = 10
)

// Log-status bits.
const (
	LogStatusDisabled    = 0
	LogStatusPurged      = 1
	LogStatusInterrupted = 2
)

// LogRecord is one BACnetLogRecord.
type LogRecord struct {
	Date  Date
	Time  Time
	Kind  uint8     // LogStatus ... LogAnyValue
	Value float64   // boolean, real, enumerated, unsigned, signed, time-change
	Bits  BitString // log-status or bitstring-value
	Err   PropertyError
	Any   []Value // any-value
	// Status flags are optional in a record.
	HasFlags bool
	Flags    BitString
}

// Numeric reports whether the record carries a number in Value.
func (l LogRecord) Numeric() bool {
	switch l.Kind {
	case LogBoolean, LogReal, LogEnumerated, LogUnsigned, LogSigned:
		return true
	}
	return false
}

// AppendLogRecord appends one BACnetLogRecord.
func AppendLogRecord(b []byte, l LogRecord) []byte {
	b = AppendOpening(b, 0)
	b = AppendDate(b, l.Date)
	b = AppendTime(b, l.Time)
	b = AppendClosing(b, 0)
	b = AppendOpening(b, 1)
	switch l.Kind {
	case LogStatus, LogBitString:
		b = AppendContextBitString(b, l.Kind, l.Bits)
	case LogBoolean:
		b = AppendContextBoolean(b, l.Kind, l.Value != 0)
	case LogReal, LogTimeChange:
		b = AppendContextReal(b, l.Kind, float32(l.Value))
	case LogEnumerated, LogUnsigned:
		b = AppendContextUnsigned(b, l.Kind, uint64(l.Value))
	case LogSigned:
		b = AppendContextSigned(b, l.Kind, int64(l.Value))
	case LogNull:
		b = AppendTag(b, LogNull, true, 0)
	case LogFailure:
		b = AppendOpening(b, LogFailure)
		b = AppendEnumerated(b, uint64(l.Err.Class))
		b = AppendEnumerated(b, uint64(l.Err.Code))
		b = AppendClosing(b, LogFailure)
	case LogAnyValue:
		b = AppendOpening(b, LogAnyValue)
		for _, v := range l.Any {
			b = AppendValue(b, v)
		}
		b = AppendClosing(b, LogAnyValue)
	}
	b = AppendClosing(b, 1)
	if l.HasFlags {
		b = AppendContextBitString(b, 2, l.Flags)
	}
	return b
}

// AppendReadRangeACK appends a ReadRange Complex-ACK body (ASHRAE 135 clause 15.8.1.3).
func AppendReadRangeACK(b []byte, a ReadRangeACK) []byte {
	b = AppendContextObjectID(b, 0, a.Object)
	b = appendPropRef(b, 1, 2, a.PropertyRef)
	b = AppendContextBitString(b, 3, NewBitString(a.Flags.First, a.Flags.Last, a.Flags.More))
	b = AppendContextUnsigned(b, 4, uint64(len(a.Records)))
	b = AppendOpening(b, 5)
	for _, l := range a.Records {
		b = AppendLogRecord(b, l)
	}
	b = AppendClosing(b, 5)
	if a.HasFirstSeq && len(a.Records) > 0 {
		b = AppendContextUnsigned(b, 6, uint64(a.FirstSeq))
	}
	return b
}

// DecodeReadRangeACK decodes a ReadRange Complex-ACK whose items are log records.
func DecodeReadRangeACK(data []byte) (ReadRangeACK, error) {
	r := NewReader(data)
	var a ReadRangeACK
	var err error
	if a.Object, err = r.ContextObjectID(0); err != nil {
		return a, fmt.Errorf("read-range ack: object: %w", err)
	}
	if a.PropertyRef, err = readPropRef(r, 1, 2); err != nil {
		return a, fmt.Errorf("read-range ack: %w", err)
	}
	fl, err := r.ContextBitString(3)
	if err != nil {
		return a, fmt.Errorf("read-range ack: result flags: %w", err)
	}
	a.Flags = ResultFlags{First: fl.Bit(0), Last: fl.Bit(1), More: fl.Bit(2)}
	n, err := r.ContextUnsigned(4)
	if err != nil || n > 0xFFFFFFFF {
		return a, fmt.Errorf("read-range ack: item count: %v", err)
	}
	a.ItemCount = uint32(n)
	if err := r.Open(5); err != nil {
		return a, fmt.Errorf("read-range ack: item data: %w", err)
	}
	for !r.IsClosing(5) {
		if r.Done() {
			return a, fmt.Errorf("read-range ack: item data: %w", ErrShort)
		}
		l, err := decodeLogRecord(r)
		if err != nil {
			return a, fmt.Errorf("read-range ack: record %d: %w", len(a.Records)+1, err)
		}
		a.Records = append(a.Records, l)
	}
	_ = r.Close(5)
	if uint32(len(a.Records)) != a.ItemCount {
		return a, fmt.Errorf("read-range ack: item count %d but %d records", a.ItemCount, len(a.Records))
	}
	if r.IsContext(6) {
		s, err := r.ContextUnsigned(6)
		if err != nil || s > 0xFFFFFFFF {
			return a, fmt.Errorf("read-range ack: first sequence number: %v", err)
		}
		a.FirstSeq, a.HasFirstSeq = uint32(s), true
	}
	if !r.Done() {
		return a, errors.New("read-range ack: trailing data")
	}
	return a, nil
}

func decodeLogRecord(r *Reader) (LogRecord, error) {
	var l LogRecord
	if err := r.Open(0); err != nil {
		return l, fmt.Errorf("timestamp: %w", err)
	}
	d, err1 := r.App()
	t, err2 := r.App()
	if err := errors.Join(err1, err2, r.Close(0)); err != nil {
		return l, fmt.Errorf("timestamp: %w", err)
	}
	if d.Tag != TagDate || t.Tag != TagTime {
		return l, errors.New("timestamp: want date and time")
	}
	l.Date, l.Time = d.Date, t.Time
	if err := r.Open(1); err != nil {
		return l, fmt.Errorf("log datum: %w", err)
	}
	tag, err := r.Peek()
	if err != nil {
		return l, fmt.Errorf("log datum: %w", err)
	}
	if !tag.Context || tag.Number > LogAnyValue {
		return l, fmt.Errorf("log datum: choice [%d] unknown", tag.Number)
	}
	l.Kind = tag.Number
	switch l.Kind {
	case LogStatus, LogBitString:
		l.Bits, err = r.ContextBitString(l.Kind)
	case LogBoolean:
		var v bool
		v, err = r.ContextBoolean(l.Kind)
		if v {
			l.Value = 1
		}
	case LogReal, LogTimeChange:
		l.Value, err = r.ContextReal(l.Kind)
	case LogEnumerated, LogUnsigned:
		var u uint64
		u, err = r.ContextUnsigned(l.Kind)
		l.Value = float64(u)
	case LogSigned:
		var i int64
		i, err = r.ContextSigned(l.Kind)
		l.Value = float64(i)
	case LogNull:
		_, err = r.context(LogNull)
	case LogFailure:
		err = r.Open(LogFailure)
		if err == nil {
			c, e1 := r.AppEnumerated()
			k, e2 := r.AppEnumerated()
			err = errors.Join(e1, e2, r.Close(LogFailure))
			l.Err = PropertyError{Class: uint32(c), Code: uint32(k)}
		}
	case LogAnyValue:
		err = r.Open(LogAnyValue)
		if err == nil {
			l.Any, err = r.ValuesUntil(LogAnyValue)
		}
	}
	if err != nil {
		return l, fmt.Errorf("log datum: %w", err)
	}
	if err := r.Close(1); err != nil {
		return l, fmt.Errorf("log datum: %w", err)
	}
	if r.IsContext(2) {
		if l.Flags, err = r.ContextBitString(2); err != nil {
			return l, fmt.Errorf("status flags: %w", err)
		}
		l.HasFlags = true
	}
	return l, nil
}
