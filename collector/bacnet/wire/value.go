package wire

import (
	"encoding/binary"
	"fmt"
	"math"
	"strconv"
	"time"
)

// ObjectID is a BACnet object identifier: 10-bit type, 22-bit instance
// (ASHRAE 135 clause 20.2.14).
type ObjectID struct {
	Type     ObjectType
	Instance uint32
}

// WildcardInstance addresses "the device I am talking to" in a Device object identifier.
const WildcardInstance = 0x3FFFFF

// Raw returns the 32-bit encoding.
func (o ObjectID) Raw() uint32 { return uint32(o.Type)<<22 | o.Instance&0x3FFFFF }

// ObjectIDFromRaw splits a 32-bit object identifier.
func ObjectIDFromRaw(v uint32) ObjectID {
	return ObjectID{Type: ObjectType(v >> 22), Instance: v & 0x3FFFFF}
}

func (o ObjectID) String() string {
	return o.Type.String() + ":" + strconv.FormatUint(uint64(o.Instance), 10)
}

// BitString is a BACnet bit string; bit 0 is the most significant bit of Bytes[0].
type BitString struct {
	N     int // number of bits used
	Bytes []byte
}

// Bit reports bit i.
func (b BitString) Bit(i int) bool {
	if i < 0 || i >= b.N || i/8 >= len(b.Bytes) {
		return false
	}
	return b.Bytes[i/8]&(0x80>>uint(i%8)) != 0
}

// NewBitString builds a bit string from booleans.
func NewBitString(bits ...bool) BitString {
	bs := BitString{N: len(bits), Bytes: make([]byte, (len(bits)+7)/8)}
	for i, v := range bits {
		if v {
			bs.Bytes[i/8] |= 0x80 >> uint(i%8)
		}
	}
	return bs
}

// Date is a BACnet date; 0xFF in a field means unspecified.
type Date struct{ Year, Month, Day, Weekday uint8 } // Year is years since 1900

// Time is a BACnet time of day; 0xFF in a field means unspecified.
type Time struct{ Hour, Minute, Second, Hundredths uint8 }

// DateTimeOf splits t (in its own location) into BACnet date and time.
func DateTimeOf(t time.Time) (Date, Time) {
	wd := uint8(t.Weekday())
	if wd == 0 {
		wd = 7 // BACnet: 1 = Monday ... 7 = Sunday
	}
	return Date{Year: uint8(t.Year() - 1900), Month: uint8(t.Month()), Day: uint8(t.Day()), Weekday: wd},
		Time{Hour: uint8(t.Hour()), Minute: uint8(t.Minute()), Second: uint8(t.Second()), Hundredths: uint8(t.Nanosecond() / 1e7)}
}

// ToTime joins a BACnet date and time in loc. Unspecified time fields count as 0;
// an unspecified date field is an error.
func ToTime(d Date, t Time, loc *time.Location) (time.Time, error) {
	if d.Year == 0xFF || d.Month == 0 || d.Month > 12 || d.Day == 0 || d.Day > 31 {
		return time.Time{}, fmt.Errorf("bacnet: date %d-%d-%d not fully specified", int(d.Year)+1900, d.Month, d.Day)
	}
	h, m, s, c := t.Hour, t.Minute, t.Second, t.Hundredths
	if h == 0xFF {
		h = 0
	}
	if m == 0xFF {
		m = 0
	}
	if s == 0xFF {
		s = 0
	}
	if c == 0xFF {
		c = 0
	}
	if loc == nil {
		loc = time.UTC
	}
	return time.Date(int(d.Year)+1900, time.Month(d.Month), int(d.Day), int(h), int(m), int(s), int(c)*1e7, loc), nil
}

// TagRaw marks a Value that holds a context-tagged or constructed element
// kept as raw octets (Value.S) rather than decoded.
const TagRaw = 0xFF

// Value is one decoded application-tagged primitive (ASHRAE 135 clause 20.2).
type Value struct {
	Tag  uint8 // application tag number, or TagRaw
	U    uint64
	I    int64
	F    float64
	S    string // character string, octet string, or raw element
	Bits BitString
	Obj  ObjectID
	Date Date
	Time Time
}

// Float returns the value as a number when it is numeric (Real, Double,
// Unsigned, Signed, Enumerated, Boolean).
func (v Value) Float() (float64, bool) {
	switch v.Tag {
	case TagReal, TagDouble:
		return v.F, true
	case TagUnsigned, TagEnumerated, TagBoolean:
		return float64(v.U), true
	case TagSigned:
		return float64(v.I), true
	}
	return 0, false
}

func (v Value) String() string {
	switch v.Tag {
	case TagNull:
		return "null"
	case TagBoolean:
		return strconv.FormatBool(v.U != 0)
	case TagUnsigned, TagEnumerated:
		return strconv.FormatUint(v.U, 10)
	case TagSigned:
		return strconv.FormatInt(v.I, 10)
	case TagReal:
		return strconv.FormatFloat(v.F, 'g', 7, 64)
	case TagDouble:
		return strconv.FormatFloat(v.F, 'g', -1, 64)
	case TagCharString:
		return v.S
	case TagObjectID:
		return v.Obj.String()
	case TagBitString:
		s := make([]byte, v.Bits.N)
		for i := range s {
			s[i] = '0'
			if v.Bits.Bit(i) {
				s[i] = '1'
			}
		}
		return string(s)
	case TagDate:
		return fmt.Sprintf("%04d-%02d-%02d", int(v.Date.Year)+1900, v.Date.Month, v.Date.Day)
	case TagTime:
		return fmt.Sprintf("%02d:%02d:%02d.%02d", v.Time.Hour, v.Time.Minute, v.Time.Second, v.Time.Hundredths)
	}
	return fmt.Sprintf("raw(%x)", v.S)
}

// AppendValue appends v with its application tag (TagRaw values are copied verbatim).
func AppendValue(b []byte, v Value) []byte {
	switch v.Tag {
	case TagNull:
		return AppendNull(b)
	case TagBoolean:
		return AppendBoolean(b, v.U != 0)
	case TagUnsigned:
		return AppendUnsigned(b, v.U)
	case TagEnumerated:
		return AppendEnumerated(b, v.U)
	case TagSigned:
		return AppendSigned(b, v.I)
	case TagReal:
		return AppendReal(b, float32(v.F))
	case TagDouble:
		return AppendDouble(b, v.F)
	case TagOctets:
		return append(AppendTag(b, TagOctets, false, len(v.S)), v.S...)
	case TagCharString:
		return AppendCharString(b, v.S)
	case TagBitString:
		return AppendBitString(b, v.Bits)
	case TagDate:
		return AppendDate(b, v.Date)
	case TagTime:
		return AppendTime(b, v.Time)
	case TagObjectID:
		return AppendObjectID(b, v.Obj)
	}
	return append(b, v.S...)
}

// Real makes a Real value.
func Real(f float64) Value { return Value{Tag: TagReal, F: float64(float32(f))} }

// Enum makes an Enumerated value.
func Enum(u uint64) Value { return Value{Tag: TagEnumerated, U: u} }

// Unsigned makes an Unsigned value.
func Unsigned(u uint64) Value { return Value{Tag: TagUnsigned, U: u} }

// CharString makes a Character String value.
func CharString(s string) Value { return Value{Tag: TagCharString, S: s} }

// ObjectIDValue makes an Object Identifier value.
func ObjectIDValue(o ObjectID) Value { return Value{Tag: TagObjectID, Obj: o} }

// BitsValue makes a Bit String value.
func BitsValue(b BitString) Value { return Value{Tag: TagBitString, Bits: b} }

// decodeAppContent decodes the content c of an application tag t.
func decodeAppContent(t Tag, c []byte) (Value, error) {
	v := Value{Tag: t.Number}
	var err error
	switch t.Number {
	case TagNull:
	case TagBoolean:
		v.U = uint64(t.Len)
		if v.U > 1 {
			return v, fmt.Errorf("bacnet: boolean value %d", v.U)
		}
	case TagUnsigned, TagEnumerated:
		v.U, err = decodeUint(c)
	case TagSigned:
		v.I, err = decodeInt(c)
	case TagReal:
		if len(c) != 4 {
			return v, fmt.Errorf("bacnet: real of %d octets", len(c))
		}
		v.F = float64(math.Float32frombits(binary.BigEndian.Uint32(c)))
	case TagDouble:
		if len(c) != 8 {
			return v, fmt.Errorf("bacnet: double of %d octets", len(c))
		}
		v.F = math.Float64frombits(binary.BigEndian.Uint64(c))
	case TagOctets:
		v.S = string(c)
	case TagCharString:
		if len(c) < 1 {
			return v, fmt.Errorf("bacnet: empty character string")
		}
		// Character set 0 is UTF-8; others are kept as their octets.
		v.S = string(c[1:])
	case TagBitString:
		v.Bits, err = decodeBits(c)
	case TagDate:
		if len(c) != 4 {
			return v, fmt.Errorf("bacnet: date of %d octets", len(c))
		}
		v.Date = Date{c[0], c[1], c[2], c[3]}
	case TagTime:
		if len(c) != 4 {
			return v, fmt.Errorf("bacnet: time of %d octets", len(c))
		}
		v.Time = Time{c[0], c[1], c[2], c[3]}
	case TagObjectID:
		if len(c) != 4 {
			return v, fmt.Errorf("bacnet: object identifier of %d octets", len(c))
		}
		v.Obj = ObjectIDFromRaw(binary.BigEndian.Uint32(c))
	default:
		// Reserved application tags 13-15: keep the octets.
		v.Tag = TagRaw
		v.S = string(c)
	}
	return v, err
}

func decodeBits(c []byte) (BitString, error) {
	if len(c) < 1 {
		return BitString{}, fmt.Errorf("bacnet: empty bit string")
	}
	unused := int(c[0])
	if unused > 7 || (len(c) == 1 && unused != 0) {
		return BitString{}, fmt.Errorf("bacnet: bit string with %d unused bits", unused)
	}
	data := append([]byte(nil), c[1:]...)
	return BitString{N: len(data)*8 - unused, Bytes: data}, nil
}
