package wire

import (
	"fmt"
	"strconv"
)

// PDUType is the APDU type in the high nibble of octet 0 (ASHRAE 135 clause 20.1).
type PDUType uint8

// APDU types.
const (
	PDUConfirmedRequest PDUType = 0
	PDUUnconfirmed      PDUType = 1
	PDUSimpleACK        PDUType = 2
	PDUComplexACK       PDUType = 3
	PDUSegmentACK       PDUType = 4
	PDUError            PDUType = 5
	PDUReject           PDUType = 6
	PDUAbort            PDUType = 7
)

func (t PDUType) String() string {
	names := [...]string{"confirmed-request", "unconfirmed-request", "simple-ack", "complex-ack",
		"segment-ack", "error", "reject", "abort"}
	if int(t) < len(names) {
		return names[t]
	}
	return "pdu-type-" + strconv.Itoa(int(t))
}

// maxAPDUSizes maps the 4-bit max-APDU code to octets (ASHRAE 135 clause 20.1.2.5).
var maxAPDUSizes = [...]int{50, 128, 206, 480, 1024, 1476}

// MaxAPDUFromCode decodes the max-APDU-accepted code.
func MaxAPDUFromCode(c uint8) (int, error) {
	if int(c) >= len(maxAPDUSizes) {
		return 0, fmt.Errorf("apdu: reserved max-APDU code %d", c)
	}
	return maxAPDUSizes[c], nil
}

// MaxAPDUCode is the largest code whose size does not exceed n octets.
func MaxAPDUCode(n int) uint8 {
	var c uint8
	for i, s := range maxAPDUSizes {
		if s <= n {
			c = uint8(i)
		}
	}
	return c
}

// MaxSegmentsFromCode decodes the 3-bit max-segments code: 0 unspecified,
// 1..6 = 2..64, 7 = more than 64 (returned as 65).
func MaxSegmentsFromCode(c uint8) int {
	if c == 0 {
		return 0
	}
	if c >= 7 {
		return 65
	}
	return 1 << c
}

// MaxSegmentsCode encodes a segment count (0 unspecified, >64 as 7).
func MaxSegmentsCode(n int) uint8 {
	switch {
	case n <= 0:
		return 0
	case n > 64:
		return 7
	}
	var c uint8
	for 1<<(c+1) <= n && c < 6 {
		c++
	}
	return c
}

// APDU is one decoded application layer header. Data is the service data
// (a slice of the input, not a copy).
type APDU struct {
	Type              PDUType
	Segmented         bool // SEG
	MoreFollows       bool // MOR
	SegmentedAccepted bool // SA (confirmed requests)
	MaxSegments       int  // confirmed requests: segments accepted (0 unspecified)
	MaxAPDU           int  // confirmed requests: octets accepted
	InvokeID          uint8
	Sequence          uint8 // segmented messages and Segment-ACK
	Window            uint8 // proposed (segmented) or actual (Segment-ACK) window size
	Service           uint8
	NAK               bool // Segment-ACK negative
	Server            bool // Segment-ACK/Abort sent by a server
	Reason            uint8
	Data              []byte
}

// DecodeAPDU decodes the APDU header (ASHRAE 135 clause 20.1.2-20.1.9).
func DecodeAPDU(b []byte) (APDU, error) {
	var a APDU
	if len(b) < 1 {
		return a, fmt.Errorf("apdu: empty: %w", ErrShort)
	}
	a.Type = PDUType(b[0] >> 4)
	f := b[0] & 0x0F
	need := func(n int) error {
		if len(b) < n {
			return fmt.Errorf("apdu: %s of %d octets: %w", a.Type, len(b), ErrShort)
		}
		return nil
	}
	switch a.Type {
	case PDUConfirmedRequest:
		a.Segmented, a.MoreFollows, a.SegmentedAccepted = f&0x08 != 0, f&0x04 != 0, f&0x02 != 0
		if err := need(4); err != nil {
			return a, err
		}
		a.MaxSegments = MaxSegmentsFromCode((b[1] >> 4) & 0x07)
		var err error
		if a.MaxAPDU, err = MaxAPDUFromCode(b[1] & 0x0F); err != nil {
			return a, err
		}
		a.InvokeID = b[2]
		p := 3
		if a.Segmented {
			if err := need(6); err != nil {
				return a, err
			}
			a.Sequence, a.Window = b[3], b[4]
			p = 5
		}
		a.Service = b[p]
		a.Data = b[p+1:]
	case PDUUnconfirmed:
		if err := need(2); err != nil {
			return a, err
		}
		a.Service = b[1]
		a.Data = b[2:]
	case PDUSimpleACK:
		if err := need(3); err != nil {
			return a, err
		}
		a.InvokeID, a.Service = b[1], b[2]
	case PDUComplexACK:
		a.Segmented, a.MoreFollows = f&0x08 != 0, f&0x04 != 0
		if err := need(3); err != nil {
			return a, err
		}
		a.InvokeID = b[1]
		p := 2
		if a.Segmented {
			if err := need(5); err != nil {
				return a, err
			}
			a.Sequence, a.Window = b[2], b[3]
			p = 4
		}
		a.Service = b[p]
		a.Data = b[p+1:]
	case PDUSegmentACK:
		if err := need(4); err != nil {
			return a, err
		}
		a.NAK, a.Server = f&0x02 != 0, f&0x01 != 0
		a.InvokeID, a.Sequence, a.Window = b[1], b[2], b[3]
	case PDUError:
		if err := need(3); err != nil {
			return a, err
		}
		a.InvokeID, a.Service = b[1], b[2]
		a.Data = b[3:]
	case PDUReject, PDUAbort:
		if err := need(3); err != nil {
			return a, err
		}
		a.Server = a.Type == PDUAbort && f&0x01 != 0
		a.InvokeID, a.Reason = b[1], b[2]
	default:
		return a, fmt.Errorf("apdu: reserved PDU type %d", a.Type)
	}
	if a.Segmented && a.Window == 0 {
		return a, fmt.Errorf("apdu: segmented %s with window size 0", a.Type)
	}
	return a, nil
}

// RequestHeader carries what a confirmed request states about the requester.
type RequestHeader struct {
	InvokeID          uint8
	MaxAPDU           int  // octets the requester accepts
	MaxSegments       int  // segments the requester accepts (0 unspecified)
	SegmentedAccepted bool // SA: a segmented answer may be sent
}

// appendConfirmedHeader appends a non-segmented confirmed request header. It
// is unexported so that only the read services in services.go can build one.
func appendConfirmedHeader(b []byte, h RequestHeader, svc ConfirmedService) []byte {
	var o byte = byte(PDUConfirmedRequest) << 4
	if h.SegmentedAccepted {
		o |= 0x02
	}
	return append(b, o, MaxSegmentsCode(h.MaxSegments)<<4|MaxAPDUCode(h.MaxAPDU), h.InvokeID, byte(svc))
}

// AppendUnconfirmedHeader appends an unconfirmed request header.
func AppendUnconfirmedHeader(b []byte, svc UnconfirmedService) []byte {
	return append(b, byte(PDUUnconfirmed)<<4, byte(svc))
}

// AppendComplexACKHeader appends a Complex-ACK header; seg describes the
// segment when the answer is segmented (nil otherwise).
func AppendComplexACKHeader(b []byte, invokeID uint8, svc ConfirmedService, seg *Segment) []byte {
	o := byte(PDUComplexACK) << 4
	if seg == nil {
		return append(b, o, invokeID, byte(svc))
	}
	o |= 0x08
	if seg.More {
		o |= 0x04
	}
	return append(b, o, invokeID, seg.Sequence, seg.Window, byte(svc))
}

// Segment describes one segment of a segmented message.
type Segment struct {
	Sequence uint8
	Window   uint8
	More     bool
}

// AppendSimpleACK appends a Simple-ACK.
func AppendSimpleACK(b []byte, invokeID uint8, svc ConfirmedService) []byte {
	return append(b, byte(PDUSimpleACK)<<4, invokeID, byte(svc))
}

// AppendSegmentACK appends a Segment-ACK (clause 20.1.6).
func AppendSegmentACK(b []byte, nak, server bool, invokeID, sequence, window uint8) []byte {
	o := byte(PDUSegmentACK) << 4
	if nak {
		o |= 0x02
	}
	if server {
		o |= 0x01
	}
	return append(b, o, invokeID, sequence, window)
}

// AppendError appends an Error PDU with application-enumerated class and code.
func AppendError(b []byte, invokeID uint8, svc ConfirmedService, class, code uint32) []byte {
	b = append(b, byte(PDUError)<<4, invokeID, byte(svc))
	return AppendEnumerated(AppendEnumerated(b, uint64(class)), uint64(code))
}

// AppendReject appends a Reject PDU.
func AppendReject(b []byte, invokeID, reason uint8) []byte {
	return append(b, byte(PDUReject)<<4, invokeID, reason)
}

// AppendAbort appends an Abort PDU.
func AppendAbort(b []byte, server bool, invokeID, reason uint8) []byte {
	o := byte(PDUAbort) << 4
	if server {
		o |= 0x01
	}
	return append(b, o, invokeID, reason)
}

// DecodeErrorBody reads error-class and error-code from an Error PDU's data.
// Services whose error is wrapped in context tag 0 are unwrapped.
func DecodeErrorBody(data []byte) (class, code uint32, err error) {
	r := NewReader(data)
	wrapped := r.IsOpening(0)
	if wrapped {
		_ = r.Open(0)
	}
	c1, err := r.AppEnumerated()
	if err != nil {
		return 0, 0, fmt.Errorf("error pdu: class: %w", err)
	}
	c2, err := r.AppEnumerated()
	if err != nil {
		return 0, 0, fmt.Errorf("error pdu: code: %w", err)
	}
	if wrapped {
		if err := r.Close(0); err != nil {
			return 0, 0, err
		}
	}
	return uint32(c1), uint32(c2), nil
}
