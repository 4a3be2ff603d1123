package wire

import (
	"bytes"
	"encoding/hex"
	"math"
	"net/netip"
	"strings"
	"testing"
)

func mustHex(t *testing.T, s string) []byte {
	t.Helper()
	b, err := hex.DecodeString(strings.ReplaceAll(s, " ", ""))
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func eqHex(t *testing.T, name string, got []byte, want string) {
	t.Helper()
	w := mustHex(t, want)
	if !bytes.Equal(got, w) {
		t.Errorf("%s:\n got  %x\n want %x", name, got, w)
	}
}

// Request encodings. Hex values are the ASHRAE 135 Annex F example
// encodings (as reproduced in BACnet4J's Annex F encoding test).
func TestAnnexFRequestEncodings(t *testing.T) {
	ai := func(i uint32) ObjectID { return ObjectID{Type: ObjectAnalogInput, Instance: i} }
	pv := PropertyRef{Prop: PropPresentValue, Index: NoIndex}
	// ASHRAE 135 Annex F example F.3.5 (ReadProperty request): max APDU 50, invoke 1, AI 5 present-value.
	eqHex(t, "F.3.5 RP request", AppendReadProperty(nil, RequestHeader{InvokeID: 1, MaxAPDU: 50}, ai(5), pv),
		"0000010C0C000000051955")
	// ASHRAE 135 Annex F example F.3.7 (ReadPropertyMultiple request 1): max 1024, invoke 241, AI 16 PV + reliability.
	eqHex(t, "F.3.7a RPM request", AppendReadPropertyMultiple(nil, RequestHeader{InvokeID: 241, MaxAPDU: 1024},
		[]ReadAccessSpec{{Object: ai(16), Props: []PropertyRef{pv, {Prop: PropReliability, Index: NoIndex}}}}),
		"0004F10E0C000000101E095509671F")
	// ASHRAE 135 Annex F example F.3.7 (ReadPropertyMultiple request 2): AI 33, AI 50, AI 35 present-value.
	eqHex(t, "F.3.7c RPM request", AppendReadPropertyMultiple(nil, RequestHeader{InvokeID: 2, MaxAPDU: 1024},
		[]ReadAccessSpec{{ai(33), []PropertyRef{pv}}, {ai(50), []PropertyRef{pv}}, {ai(35), []PropertyRef{pv}}}),
		"0004020E0C000000211E09551F0C000000321E09551F0C000000231E09551F")
	// ASHRAE 135 Annex F example F.3.8 (ReadRange request by time): SA, max 206, invoke 1,
	// trend-log 1 log-buffer, 1998-03-23 (Monday) 19:52:34.00, count 4.
	eqHex(t, "F.3.8a RR request", AppendReadRange(nil, RequestHeader{InvokeID: 1, MaxAPDU: 206, SegmentedAccepted: true},
		ReadRangeRequest{Object: ObjectID{ObjectTrendLog, 1}, PropertyRef: PropertyRef{PropLogBuffer, NoIndex},
			Kind: RangeByTime, RefDate: Date{98, 3, 23, 1}, RefTime: Time{19, 52, 34, 0}, Count: 4}),
		"0202011a0c0500000119837ea462031701b41334220031047f")
	// ASHRAE 135 Annex F example F.4.9 (Who-Is for device 3 only, and for all devices).
	eqHex(t, "F.4.9a Who-Is 3..3", AppendWhoIs(nil, 3, 3), "100809031903")
	eqHex(t, "F.4.9c Who-Is", AppendWhoIs(nil, -1, -1), "1008")
	// ASHRAE 135 Annex F example F.4.9 I-Am answers.
	for _, c := range []struct {
		name string
		i    IAm
		hex  string
	}{
		{"F.4.9b", IAm{3, 1024, NoSegmentation, 99}, "1000C40200000322040091032163"},
		{"F.4.9d", IAm{1, 480, SegmentedTransmit, 99}, "1000C4020000012201E091012163"},
		{"F.4.9e", IAm{2, 206, SegmentedReceive, 33}, "1000C40200000221CE91022121"},
		{"F.4.9g", IAm{4, 128, SegmentedBoth, 66}, "1000C402000004218091002142"},
	} {
		eqHex(t, c.name+" I-Am", AppendIAm(nil, c.i), c.hex)
		a, err := DecodeAPDU(mustHex(t, c.hex))
		if err != nil {
			t.Fatal(err)
		}
		got, err := DecodeIAm(a.Data)
		if err != nil || got != c.i {
			t.Errorf("%s decode: %+v %v, want %+v", c.name, got, err, c.i)
		}
	}
}

// Answer encodings, decoded and re-encoded (ASHRAE 135 Annex F examples).
func TestAnnexFAnswers(t *testing.T) {
	// ASHRAE 135 Annex F example F.3.5 (ReadProperty ACK): AI 5 present-value = REAL 72.3.
	const rpAck = "30010C0C000000051955 3E444290999A3F"
	a, err := DecodeAPDU(mustHex(t, rpAck))
	if err != nil || a.Type != PDUComplexACK || a.InvokeID != 1 || a.Service != byte(ServiceReadProperty) {
		t.Fatalf("F.3.5 header: %+v %v", a, err)
	}
	pv, err := DecodeReadPropertyACK(a.Data)
	if err != nil || len(pv.Values) != 1 || math.Abs(pv.Values[0].F-72.3) > 1e-5 {
		t.Fatalf("F.3.5 ack: %+v %v", pv, err)
	}
	eqHex(t, "F.3.5 ack re-encode", AppendReadPropertyACK(AppendComplexACKHeader(nil, 1, ServiceReadProperty, nil),
		pv.Object, pv.PropertyRef, pv.Values), rpAck)

	// ASHRAE 135 Annex F example F.3.7 (RPM ACK 1): 72.3, reliability 0 (no-fault-detected).
	const rpmAck1 = "30F10E0C000000101E29554E444290999A4F29674E91004F1F"
	// ASHRAE 135 Annex F example F.3.7 (RPM ACK 2): 42.3; AI 50 error object/unknown-object (1/31); 435.7.
	const rpmAck2 = "30020E0C000000211E29554E44422933334F1F0C000000321E29555E9101911F5F1F0C000000231E29554E4443D9D99A4F1F"
	for _, c := range []struct {
		hex  string
		want []float64 // NaN marks an error result
	}{{rpmAck1, []float64{72.3, 0}}, {rpmAck2, []float64{42.3, math.NaN(), 435.7}}} {
		a, err := DecodeAPDU(mustHex(t, c.hex))
		if err != nil {
			t.Fatal(err)
		}
		res, err := DecodeReadPropertyMultipleACK(a.Data)
		if err != nil || len(res) != len(c.want) {
			t.Fatalf("RPM ack %s: %+v %v", c.hex, res, err)
		}
		for i, w := range c.want {
			if math.IsNaN(w) {
				if res[i].Err == nil || res[i].Err.Class != ErrClassObject || res[i].Err.Code != ErrCodeUnknownObject {
					t.Errorf("result %d: want error 1/31, have %+v", i, res[i])
				}
				continue
			}
			f, _ := res[i].Values[0].Float()
			if math.Abs(f-w) > 1e-4 {
				t.Errorf("result %d = %v, want %v", i, f, w)
			}
		}
		eqHex(t, "RPM ack re-encode", AppendReadPropertyMultipleACK(AppendComplexACKHeader(nil, a.InvokeID, ServiceReadPropertyMultiple, nil), res), c.hex)
	}

	// ASHRAE 135 Annex F example F.3.8 (ReadRange ACK): first+last, 2 records
	// 1998-03-23 19:54:27 18.0 and 19:56:27 18.1, status flags all clear, first sequence 79201.
	const rrAck = "30011a0c0500000119833a05c049025e0ea462031701b413361b000f1e2c419000001f2a04000ea462031701b413381b000f1e2c4190cccd1f2a04005f6b013561"
	a, err = DecodeAPDU(mustHex(t, rrAck))
	if err != nil {
		t.Fatal(err)
	}
	rr, err := DecodeReadRangeACK(a.Data)
	if err != nil {
		t.Fatal(err)
	}
	if !rr.Flags.First || !rr.Flags.Last || rr.Flags.More || rr.ItemCount != 2 || !rr.HasFirstSeq || rr.FirstSeq != 79201 {
		t.Errorf("F.3.8 ack header: %+v", rr)
	}
	wantT := []Time{{19, 54, 27, 0}, {19, 56, 27, 0}}
	wantV := []float64{18.0, 18.1}
	for i, l := range rr.Records {
		if l.Kind != LogReal || math.Abs(l.Value-wantV[i]) > 1e-5 || l.Time != wantT[i] || l.Date != (Date{98, 3, 23, 1}) ||
			!l.HasFlags || l.Flags.N != 4 || l.Flags.Bit(StatusFault) {
			t.Errorf("F.3.8 record %d: %+v", i, l)
		}
	}
	eqHex(t, "F.3.8 ack re-encode", AppendReadRangeACK(AppendComplexACKHeader(nil, 1, ServiceReadRange, nil), rr), rrAck)

	// ASHRAE 135 Annex F example F.3.4 (Error PDU layout): class object (1), code 23.
	a, err = DecodeAPDU(mustHex(t, "50580B91019117"))
	if err != nil || a.Type != PDUError || a.InvokeID != 0x58 {
		t.Fatalf("F.3.4 error: %+v %v", a, err)
	}
	if cl, co, err := DecodeErrorBody(a.Data); err != nil || cl != 1 || co != 23 {
		t.Errorf("F.3.4 error body: %d %d %v", cl, co, err)
	}
	// ASHRAE 135 Annex F example F.1.10 (SimpleACK to SubscribeCOV, invoke 15).
	if a, err := DecodeAPDU(mustHex(t, "200f05")); err != nil || a.Type != PDUSimpleACK || a.InvokeID != 15 || a.Service != 5 {
		t.Errorf("F.1.10 simple-ack: %+v %v", a, err)
	}
}

// Link and network layer frames as decoded by the Wireshark BACnet
// dissectors (tshark 4.0): Forwarded-NPDU, Register-Foreign-Device, routed request.
func TestBVLCAndNPDUFrames(t *testing.T) {
	// Wireshark bvlc dissector: Forwarded-NPDU from 192.168.1.10:47808 carrying Who-Is.
	f, err := DecodeBVLC(mustHex(t, "8104000ec0a8010abac001001008"))
	if err != nil || f.Function != BVLCForwardedNPDU || f.Origin != netip.MustParseAddrPort("192.168.1.10:47808") {
		t.Fatalf("forwarded: %+v %v", f, err)
	}
	n, apdu, err := DecodeNPDU(f.NPDU)
	if err != nil || n.HasDest || !bytes.Equal(apdu, []byte{0x10, 0x08}) {
		t.Errorf("forwarded npdu: %+v %x %v", n, apdu, err)
	}
	fwd := FinishBVLC(append(AppendForwardedHeader(nil, f.Origin), f.NPDU...), 0)
	eqHex(t, "forwarded re-encode", fwd, "8104000ec0a8010abac001001008")
	// Wireshark bvlc dissector: Register-Foreign-Device with TTL 60 s.
	eqHex(t, "register-fd", AppendRegisterForeignDevice(nil, 60), "81050006003c")
	if f, err := DecodeBVLC(mustHex(t, "81050006003c")); err != nil || f.TTL != 60 {
		t.Errorf("register-fd decode: %+v %v", f, err)
	}
	// Wireshark bacnet dissector: RP (max APDU 480) for AI 5 to DNET 5 / MS/TP MAC 3 through a router.
	const routed = "810a0016012400050103ff0003010c0c000000051955"
	f, err = DecodeBVLC(mustHex(t, routed))
	if err != nil {
		t.Fatal(err)
	}
	n, apdu, err = DecodeNPDU(f.NPDU)
	if err != nil || !n.HasDest || n.DNet != 5 || !bytes.Equal(n.DAdr, []byte{3}) || n.HopCount != 255 || !n.ExpectingReply {
		t.Fatalf("routed npdu: %+v %v", n, err)
	}
	b := StartBVLC(nil, BVLCOriginalUnicast)
	b = AppendNPDU(b, NPDU{ExpectingReply: true, HasDest: true, DNet: 5, DAdr: []byte{3}})
	b = AppendReadProperty(b, RequestHeader{InvokeID: 1, MaxAPDU: 480}, ObjectID{ObjectAnalogInput, 5}, PropertyRef{PropPresentValue, NoIndex})
	eqHex(t, "routed re-encode", FinishBVLC(b, 0), routed)
	_ = apdu
	// Wireshark bacnet dissector: reply NPDU from the router, SNET 5 SADR 03.
	n, _, err = DecodeNPDU(mustHex(t, "010800050103"))
	if err != nil || !n.HasSource || n.SNet != 5 || !bytes.Equal(n.SAdr, []byte{3}) || n.HasDest {
		t.Errorf("router reply npdu: %+v %v", n, err)
	}
}
