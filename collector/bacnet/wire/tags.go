// Package wire encodes and decodes the BACnet/IP subset risewatch reads with:
// BVLC (ASHRAE 135 Annex J), NPDU (clause 6), APDU headers (clause 20.1) and
// the tagged primitive data of clause 20.2. It is pure (no I/O, no clock) and
// shared by the client in collector/bacnet and the simulated devices in
// sim/bacnetdev, so both directions are here; the client only ever sends the
// read services listed in ConfirmedServices.
//
// Decoders never panic on malformed input and never allocate more than the
// input length: every length is checked against the remaining bytes first.
package wire

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
)

// ErrShort is returned when a frame ends inside a field.
var ErrShort = errors.New("bacnet: truncated data")

// Application tag numbers (ASHRAE 135 clause 20.2.1.4).
const (
	TagNull       = 0
	TagBoolean    = 1
	TagUnsigned   = 2
	TagSigned     = 3
	TagReal       = 4
	TagDouble     = 5
	TagOctets     = 6
	TagCharString = 7
	TagBitString  = 8
	TagEnumerated = 9
	TagDate       = 10
	TagTime       = 11
	TagObjectID   = 12
)

// Tag is one decoded tag header.
type Tag struct {
	Number  uint8
	Context bool   // context-specific class
	Opening bool   // opening tag (context only)
	Closing bool   // closing tag (context only)
	Len     uint32 // content length; for an application Boolean, the value
}

// DecodeTag reads a tag header (ASHRAE 135 clause 20.2.1) and returns it with
// the number of header octets used.
func DecodeTag(b []byte) (Tag, int, error) {
	if len(b) < 1 {
		return Tag{}, 0, ErrShort
	}
	var t Tag
	o := b[0]
	n := 1
	t.Number = o >> 4
	t.Context = o&0x08 != 0
	if t.Number == 15 {
		if len(b) < 2 {
			return Tag{}, 0, ErrShort
		}
		t.Number = b[1]
		n = 2
	}
	lvt := o & 0x07
	switch {
	case lvt == 6 && t.Context:
		t.Opening = true
		return t, n, nil
	case lvt == 7 && t.Context:
		t.Closing = true
		return t, n, nil
	case lvt == 5:
		if len(b) < n+1 {
			return Tag{}, 0, ErrShort
		}
		l := b[n]
		n++
		switch l {
		case 254:
			if len(b) < n+2 {
				return Tag{}, 0, ErrShort
			}
			t.Len = uint32(binary.BigEndian.Uint16(b[n:]))
			n += 2
		case 255:
			if len(b) < n+4 {
				return Tag{}, 0, ErrShort
			}
			t.Len = binary.BigEndian.Uint32(b[n:])
			n += 4
		default:
			t.Len = uint32(l)
		}
	default:
		t.Len = uint32(lvt)
	}
	// An application boolean carries its value in LVT and has no content.
	if !t.Context && t.Number == TagBoolean {
		return t, n, nil
	}
	if uint64(t.Len) > uint64(len(b)-n) {
		return Tag{}, 0, fmt.Errorf("bacnet: tag %d length %d exceeds %d remaining octets: %w", t.Number, t.Len, len(b)-n, ErrShort)
	}
	return t, n, nil
}

// contentLen is the number of content octets that follow a tag header.
func (t Tag) contentLen() int {
	if t.Opening || t.Closing || (!t.Context && t.Number == TagBoolean) {
		return 0
	}
	return int(t.Len)
}

// AppendTag appends a tag header with the given number, class and length.
func AppendTag(b []byte, number uint8, context bool, length int) []byte {
	var o byte
	if context {
		o = 0x08
	}
	ext := number >= 15
	if ext {
		o |= 0xF0
	} else {
		o |= number << 4
	}
	switch {
	case length <= 4:
		o |= byte(length)
		b = append(b, o)
		if ext {
			b = append(b, number)
		}
	default:
		o |= 5
		b = append(b, o)
		if ext {
			b = append(b, number)
		}
		switch {
		case length < 254:
			b = append(b, byte(length))
		case length <= 0xFFFF:
			b = append(b, 254, byte(length>>8), byte(length))
		default:
			b = append(b, 255, byte(length>>24), byte(length>>16), byte(length>>8), byte(length))
		}
	}
	return b
}

// AppendOpening appends a context opening tag.
func AppendOpening(b []byte, number uint8) []byte {
	if number >= 15 {
		return append(b, 0xFE, number)
	}
	return append(b, number<<4|0x0E)
}

// AppendClosing appends a context closing tag.
func AppendClosing(b []byte, number uint8) []byte {
	if number >= 15 {
		return append(b, 0xFF, number)
	}
	return append(b, number<<4|0x0F)
}

func uintLen(v uint64) int {
	n := 1
	for v > 0xFF {
		v >>= 8
		n++
	}
	return n
}

func appendUintBytes(b []byte, v uint64, n int) []byte {
	for i := n - 1; i >= 0; i-- {
		b = append(b, byte(v>>(8*uint(i))))
	}
	return b
}

func intLen(v int64) int {
	n := 1
	for v < -128 || v > 127 {
		v >>= 8
		n++
	}
	return n
}

// AppendUnsigned appends an application-tagged Unsigned (fewest octets).
func AppendUnsigned(b []byte, v uint64) []byte {
	n := uintLen(v)
	return appendUintBytes(AppendTag(b, TagUnsigned, false, n), v, n)
}

// AppendEnumerated appends an application-tagged Enumerated.
func AppendEnumerated(b []byte, v uint64) []byte {
	n := uintLen(v)
	return appendUintBytes(AppendTag(b, TagEnumerated, false, n), v, n)
}

// AppendSigned appends an application-tagged Signed Integer (two's complement, fewest octets).
func AppendSigned(b []byte, v int64) []byte {
	n := intLen(v)
	return appendUintBytes(AppendTag(b, TagSigned, false, n), uint64(v), n)
}

// AppendReal appends an application-tagged IEEE-754 single.
func AppendReal(b []byte, v float32) []byte {
	return binary.BigEndian.AppendUint32(AppendTag(b, TagReal, false, 4), math.Float32bits(v))
}

// AppendDouble appends an application-tagged IEEE-754 double.
func AppendDouble(b []byte, v float64) []byte {
	return binary.BigEndian.AppendUint64(AppendTag(b, TagDouble, false, 8), math.Float64bits(v))
}

// AppendBoolean appends an application-tagged Boolean (value in LVT).
func AppendBoolean(b []byte, v bool) []byte {
	if v {
		return append(b, 0x11)
	}
	return append(b, 0x10)
}

// AppendNull appends an application Null.
func AppendNull(b []byte) []byte { return append(b, 0x00) }

// AppendCharString appends an application Character String in UTF-8 (character set 0).
func AppendCharString(b []byte, s string) []byte {
	b = AppendTag(b, TagCharString, false, len(s)+1)
	b = append(b, 0)
	return append(b, s...)
}

// AppendObjectID appends an application-tagged object identifier.
func AppendObjectID(b []byte, id ObjectID) []byte {
	return binary.BigEndian.AppendUint32(AppendTag(b, TagObjectID, false, 4), id.Raw())
}

// AppendBitString appends an application-tagged bit string of nbits bits.
func AppendBitString(b []byte, bits BitString) []byte {
	return appendBitContent(AppendTag(b, TagBitString, false, 1+len(bits.Bytes)), bits)
}

func appendBitContent(b []byte, bits BitString) []byte {
	unused := len(bits.Bytes)*8 - bits.N
	if unused < 0 || unused > 7 {
		unused = 0
	}
	b = append(b, byte(unused))
	return append(b, bits.Bytes...)
}

// AppendDate appends an application Date.
func AppendDate(b []byte, d Date) []byte {
	return append(AppendTag(b, TagDate, false, 4), d.Year, d.Month, d.Day, d.Weekday)
}

// AppendTime appends an application Time.
func AppendTime(b []byte, t Time) []byte {
	return append(AppendTag(b, TagTime, false, 4), t.Hour, t.Minute, t.Second, t.Hundredths)
}

// AppendContextUnsigned appends a context-tagged Unsigned (also used for Enumerated).
func AppendContextUnsigned(b []byte, tag uint8, v uint64) []byte {
	n := uintLen(v)
	return appendUintBytes(AppendTag(b, tag, true, n), v, n)
}

// AppendContextSigned appends a context-tagged Signed Integer.
func AppendContextSigned(b []byte, tag uint8, v int64) []byte {
	n := intLen(v)
	return appendUintBytes(AppendTag(b, tag, true, n), uint64(v), n)
}

// AppendContextObjectID appends a context-tagged object identifier.
func AppendContextObjectID(b []byte, tag uint8, id ObjectID) []byte {
	return binary.BigEndian.AppendUint32(AppendTag(b, tag, true, 4), id.Raw())
}

// AppendContextBitString appends a context-tagged bit string.
func AppendContextBitString(b []byte, tag uint8, bits BitString) []byte {
	return appendBitContent(AppendTag(b, tag, true, 1+len(bits.Bytes)), bits)
}

// AppendContextReal appends a context-tagged REAL.
func AppendContextReal(b []byte, tag uint8, v float32) []byte {
	return binary.BigEndian.AppendUint32(AppendTag(b, tag, true, 4), math.Float32bits(v))
}

// AppendContextBoolean appends a context-tagged Boolean (one content octet).
func AppendContextBoolean(b []byte, tag uint8, v bool) []byte {
	b = AppendTag(b, tag, true, 1)
	if v {
		return append(b, 1)
	}
	return append(b, 0)
}

// decodeUint reads a big-endian unsigned of 1..8 octets.
func decodeUint(c []byte) (uint64, error) {
	if len(c) == 0 || len(c) > 8 {
		return 0, fmt.Errorf("bacnet: unsigned of %d octets", len(c))
	}
	var v uint64
	for _, x := range c {
		v = v<<8 | uint64(x)
	}
	return v, nil
}

// decodeInt reads a big-endian two's-complement integer of 1..8 octets.
func decodeInt(c []byte) (int64, error) {
	if len(c) == 0 || len(c) > 8 {
		return 0, fmt.Errorf("bacnet: signed of %d octets", len(c))
	}
	v := int64(int8(c[0]))
	for _, x := range c[1:] {
		v = v<<8 | int64(x)
	}
	return v, nil
}
