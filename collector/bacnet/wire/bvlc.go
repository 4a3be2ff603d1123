package wire

import (
	"encoding/binary"
	"fmt"
	"net/netip"
)

// BVLCType is the BVLL type octet for BACnet/IP (ASHRAE 135 Annex J.2).
const BVLCType = 0x81

// BVLC function codes (ASHRAE 135 Annex J.2; bacnet-stack bvlc.h).
const (
	BVLCResult                  = 0x00
	BVLCWriteBDT                = 0x01
	BVLCReadBDT                 = 0x02
	BVLCReadBDTAck              = 0x03
	BVLCForwardedNPDU           = 0x04
	BVLCRegisterForeignDevice   = 0x05
	BVLCReadFDT                 = 0x06
	BVLCReadFDTAck              = 0x07
	BVLCDeleteFDTEntry          = 0x08
	BVLCDistributeBroadcast     = 0x09
	BVLCOriginalUnicast         = 0x0A
	BVLCOriginalBroadcast       = 0x0B
	BVLCSecureBVLL              = 0x0C
	BVLCResultSuccess           = 0x0000
	BVLCResultRegisterFDNAK     = 0x0030
	BVLCResultDistributeBcastNA = 0x0060
)

// MaxBVLCLength is the largest BACnet/IP frame: 4 BVLL + 10 forwarding
// octets + a 1497-octet NPDU at most; anything longer is malformed.
const MaxBVLCLength = 1536

// BVLC is one decoded BACnet/IP virtual link frame.
type BVLC struct {
	Function uint8
	// Origin is the original source of a Forwarded-NPDU (the device, not the BBMD).
	Origin netip.AddrPort
	// Result is the BVLC-Result code; TTL is the Register-Foreign-Device time-to-live in seconds.
	Result uint16
	TTL    uint16
	// NPDU is the network layer data of unicast, broadcast, forwarded and
	// distribute-broadcast frames.
	NPDU []byte
}

// DecodeBVLC decodes a BACnet/IP frame (ASHRAE 135 Annex J.2).
func DecodeBVLC(b []byte) (BVLC, error) {
	if len(b) < 4 {
		return BVLC{}, fmt.Errorf("bvlc: frame of %d octets: %w", len(b), ErrShort)
	}
	if b[0] != BVLCType {
		return BVLC{}, fmt.Errorf("bvlc: type 0x%02x is not BACnet/IP", b[0])
	}
	l := int(binary.BigEndian.Uint16(b[2:]))
	if l != len(b) {
		return BVLC{}, fmt.Errorf("bvlc: length field %d but frame has %d octets", l, len(b))
	}
	f := BVLC{Function: b[1]}
	body := b[4:]
	switch f.Function {
	case BVLCResult:
		if len(body) != 2 {
			return f, fmt.Errorf("bvlc: result of %d octets", len(body))
		}
		f.Result = binary.BigEndian.Uint16(body)
	case BVLCRegisterForeignDevice:
		if len(body) != 2 {
			return f, fmt.Errorf("bvlc: register-foreign-device of %d octets", len(body))
		}
		f.TTL = binary.BigEndian.Uint16(body)
	case BVLCForwardedNPDU:
		if len(body) < 6 {
			return f, fmt.Errorf("bvlc: forwarded-npdu without origin: %w", ErrShort)
		}
		ip := netip.AddrFrom4([4]byte(body[0:4]))
		f.Origin = netip.AddrPortFrom(ip, binary.BigEndian.Uint16(body[4:6]))
		f.NPDU = body[6:]
	case BVLCOriginalUnicast, BVLCOriginalBroadcast, BVLCDistributeBroadcast:
		f.NPDU = body
	default:
		// BDT/FDT management and Secure-BVLL: recognised, carried no further.
	}
	return f, nil
}

// StartBVLC appends a 4-octet BVLL header with a placeholder length; call
// FinishBVLC after appending the body.
func StartBVLC(b []byte, function uint8) []byte {
	return append(b, BVLCType, function, 0, 0)
}

// FinishBVLC fills in the length of the frame that starts at b[start].
func FinishBVLC(b []byte, start int) []byte {
	binary.BigEndian.PutUint16(b[start+2:], uint16(len(b)-start))
	return b
}

// AppendForwardedHeader starts a Forwarded-NPDU with its origin address.
func AppendForwardedHeader(b []byte, origin netip.AddrPort) []byte {
	b = StartBVLC(b, BVLCForwardedNPDU)
	ip := origin.Addr().Unmap().As4()
	b = append(b, ip[:]...)
	return binary.BigEndian.AppendUint16(b, origin.Port())
}

// AppendRegisterForeignDevice appends a complete Register-Foreign-Device frame.
func AppendRegisterForeignDevice(b []byte, ttlSeconds uint16) []byte {
	return binary.BigEndian.AppendUint16(append(b, BVLCType, BVLCRegisterForeignDevice, 0, 6), ttlSeconds)
}

// AppendBVLCResult appends a complete BVLC-Result frame.
func AppendBVLCResult(b []byte, code uint16) []byte {
	return binary.BigEndian.AppendUint16(append(b, BVLCType, BVLCResult, 0, 6), code)
}
