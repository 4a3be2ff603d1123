package wire

import (
	"math"
	"reflect"
	"testing"
	"time"
)

func TestValueRoundTrip(t *testing.T) {
	// Values chosen to hit each length boundary of the clause 20.2 encodings (common practice).
	vals := []Value{
		{Tag: TagNull}, {Tag: TagBoolean, U: 1}, {Tag: TagBoolean},
		Unsigned(0), Unsigned(255), Unsigned(256), Unsigned(1<<32 - 1), Unsigned(1 << 40),
		{Tag: TagSigned, I: -1}, {Tag: TagSigned, I: 127}, {Tag: TagSigned, I: -129}, {Tag: TagSigned, I: -1 << 40},
		Real(-12.5), {Tag: TagDouble, F: math.Pi}, Enum(98), CharString(""), CharString("Zone Temp ÄÖ"),
		CharString(string(make([]byte, 300))), {Tag: TagOctets, S: "\x01\x02"},
		BitsValue(NewBitString(true, false, true, true, false, false, false, false, true)),
		ObjectIDValue(ObjectID{ObjectTrendLog, 4194302}),
		{Tag: TagDate, Date: Date{125, 2, 28, 5}}, {Tag: TagTime, Time: Time{23, 59, 59, 99}},
	}
	var b []byte
	for _, v := range vals {
		b = AppendValue(b, v)
	}
	b = AppendClosing(b, 3)
	got, err := NewReader(b).ValuesUntil(3)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(vals) {
		t.Fatalf("%d values back, want %d", len(got), len(vals))
	}
	for i := range vals {
		if !reflect.DeepEqual(got[i], vals[i]) {
			t.Errorf("value %d: got %+v want %+v", i, got[i], vals[i])
		}
	}
}

func TestRequestRoundTrip(t *testing.T) {
	h := RequestHeader{InvokeID: 9, MaxAPDU: 1476, MaxSegments: 16, SegmentedAccepted: true}
	specs := []ReadAccessSpec{
		{ObjectID{ObjectAnalogValue, 7}, []PropertyRef{{PropPresentValue, NoIndex}, {PropStatusFlags, NoIndex}}},
		{ObjectID{ObjectDevice, 1234}, []PropertyRef{{PropObjectList, 0}, {PropObjectList, 300}}},
	}
	a, err := DecodeAPDU(AppendReadPropertyMultiple(nil, h, specs))
	if err != nil || !a.SegmentedAccepted || a.MaxAPDU != 1476 || a.MaxSegments != 16 || a.InvokeID != 9 {
		t.Fatalf("header: %+v %v", a, err)
	}
	back, err := DecodeReadPropertyMultiple(a.Data)
	if err != nil || !reflect.DeepEqual(back, specs) {
		t.Errorf("rpm: %+v %v", back, err)
	}
	for _, q := range []ReadRangeRequest{
		{Object: ObjectID{ObjectTrendLog, 3}, PropertyRef: PropertyRef{PropLogBuffer, NoIndex}, Kind: RangeBySequence, Ref: 4000000000, Count: -50},
		{Object: ObjectID{ObjectTrendLog, 3}, PropertyRef: PropertyRef{PropLogBuffer, NoIndex}, Kind: RangeByPosition, Ref: 1, Count: 4},
		{Object: ObjectID{ObjectTrendLog, 3}, PropertyRef: PropertyRef{PropLogBuffer, NoIndex}},
	} {
		a, err := DecodeAPDU(AppendReadRange(nil, h, q))
		if err != nil {
			t.Fatal(err)
		}
		back, err := DecodeReadRange(a.Data)
		if err != nil || back != q {
			t.Errorf("read-range: %+v %v want %+v", back, err, q)
		}
	}
}

func TestLogRecordRoundTrip(t *testing.T) {
	d, tm := DateTimeOf(time.Date(2025, 1, 5, 6, 7, 8, 90e6, time.UTC))
	flags := NewBitString(false, true, false, false)
	recs := []LogRecord{
		{Date: d, Time: tm, Kind: LogReal, Value: 21.5, HasFlags: true, Flags: flags},
		{Date: d, Time: tm, Kind: LogBoolean, Value: 1},
		{Date: d, Time: tm, Kind: LogEnumerated, Value: 3},
		{Date: d, Time: tm, Kind: LogUnsigned, Value: 70000},
		{Date: d, Time: tm, Kind: LogSigned, Value: -5},
		{Date: d, Time: tm, Kind: LogStatus, Bits: NewBitString(false, true, false)},
		{Date: d, Time: tm, Kind: LogNull},
		{Date: d, Time: tm, Kind: LogFailure, Err: PropertyError{Class: 7, Code: 76}},
		{Date: d, Time: tm, Kind: LogTimeChange, Value: 3600},
		{Date: d, Time: tm, Kind: LogAnyValue, Any: []Value{Real(1.5)}},
	}
	ack := ReadRangeACK{Object: ObjectID{ObjectTrendLog, 1}, PropertyRef: PropertyRef{PropLogBuffer, NoIndex},
		Flags: ResultFlags{More: true}, ItemCount: uint32(len(recs)), Records: recs, FirstSeq: 17, HasFirstSeq: true}
	back, err := DecodeReadRangeACK(AppendReadRangeACK(nil, ack))
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(back, ack) {
		t.Errorf("got %+v\nwant %+v", back, ack)
	}
	at, err := ToTime(back.Records[0].Date, back.Records[0].Time, time.UTC)
	if err != nil || !at.Equal(time.Date(2025, 1, 5, 6, 7, 8, 90e6, time.UTC)) {
		t.Errorf("time: %v %v", at, err)
	}
}

func TestMalformedRejected(t *testing.T) {
	for _, h := range []string{
		"810a00ff0100",                       // BVLC length disagrees
		"0103",                               // NPDU reserved bits
		"3e",                                 // opening tag without content
		"30010c0c0000000519553e4442",         // truncated REAL
		"30011a0c05000001198349025e5f",       // missing result flags
		"30011a0c0500000119833a05c049035e5f", // item count 3 with 0 records
	} {
		b := mustHex(t, h)
		_, e1 := DecodeBVLC(b)
		_, _, e2 := DecodeNPDU(b)
		a, e3 := DecodeAPDU(b)
		if e3 == nil && a.Type == PDUComplexACK {
			_, e4 := DecodeReadPropertyACK(a.Data)
			_, e5 := DecodeReadRangeACK(a.Data)
			if e4 == nil && e5 == nil {
				t.Errorf("%s: accepted", h)
			}
			continue
		}
		if e1 == nil && e2 == nil && e3 == nil {
			t.Errorf("%s: accepted", h)
		}
	}
}
