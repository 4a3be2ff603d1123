package wire

import (
	"encoding/binary"
	"fmt"
)

// NPDU control bits (ASHRAE 135 clause 6.2.2).
const (
	npduNetworkMessage = 0x80
	npduDest           = 0x20
	npduSource         = 0x08
	npduExpectReply    = 0x04
)

// Broadcast network number (all networks).
const GlobalNetwork = 0xFFFF

// NPDU is a decoded network layer header (ASHRAE 135 clause 6.2).
type NPDU struct {
	ExpectingReply bool
	Priority       uint8
	HasDest        bool
	DNet           uint16
	DAdr           []byte // empty with HasDest: broadcast on DNet
	HopCount       uint8
	HasSource      bool
	SNet           uint16
	SAdr           []byte
	NetworkMessage bool
	MessageType    uint8
	VendorID       uint16
}

// DecodeNPDU decodes an NPDU header and returns it with the APDU (or the
// network message body) that follows.
func DecodeNPDU(b []byte) (NPDU, []byte, error) {
	var n NPDU
	if len(b) < 2 {
		return n, nil, fmt.Errorf("npdu: %d octets: %w", len(b), ErrShort)
	}
	if b[0] != 0x01 {
		return n, nil, fmt.Errorf("npdu: protocol version %d, want 1", b[0])
	}
	c := b[1]
	if c&0x50 != 0 {
		return n, nil, fmt.Errorf("npdu: reserved control bits set (0x%02x)", c)
	}
	n.NetworkMessage = c&npduNetworkMessage != 0
	n.ExpectingReply = c&npduExpectReply != 0
	n.Priority = c & 0x03
	p := 2
	if c&npduDest != 0 {
		if len(b) < p+3 {
			return n, nil, fmt.Errorf("npdu: destination: %w", ErrShort)
		}
		n.HasDest = true
		n.DNet = binary.BigEndian.Uint16(b[p:])
		l := int(b[p+2])
		p += 3
		if len(b) < p+l {
			return n, nil, fmt.Errorf("npdu: DADR of %d octets: %w", l, ErrShort)
		}
		n.DAdr = b[p : p+l : p+l]
		p += l
	}
	if c&npduSource != 0 {
		if len(b) < p+3 {
			return n, nil, fmt.Errorf("npdu: source: %w", ErrShort)
		}
		n.HasSource = true
		n.SNet = binary.BigEndian.Uint16(b[p:])
		l := int(b[p+2])
		p += 3
		if l == 0 {
			return n, nil, fmt.Errorf("npdu: SLEN 0 is invalid")
		}
		if n.SNet == GlobalNetwork {
			return n, nil, fmt.Errorf("npdu: SNET 0xFFFF is invalid")
		}
		if len(b) < p+l {
			return n, nil, fmt.Errorf("npdu: SADR of %d octets: %w", l, ErrShort)
		}
		n.SAdr = b[p : p+l : p+l]
		p += l
	}
	if n.HasDest {
		if len(b) < p+1 {
			return n, nil, fmt.Errorf("npdu: hop count: %w", ErrShort)
		}
		n.HopCount = b[p]
		p++
	}
	if n.NetworkMessage {
		if len(b) < p+1 {
			return n, nil, fmt.Errorf("npdu: message type: %w", ErrShort)
		}
		n.MessageType = b[p]
		p++
		if n.MessageType >= 0x80 {
			if len(b) < p+2 {
				return n, nil, fmt.Errorf("npdu: vendor id: %w", ErrShort)
			}
			n.VendorID = binary.BigEndian.Uint16(b[p:])
			p += 2
		}
	}
	return n, b[p:], nil
}

// AppendNPDU appends the header n (ASHRAE 135 clause 6.2). A destination
// without an explicit hop count is sent with 255.
func AppendNPDU(b []byte, n NPDU) []byte {
	c := n.Priority & 0x03
	if n.NetworkMessage {
		c |= npduNetworkMessage
	}
	if n.HasDest {
		c |= npduDest
	}
	if n.HasSource {
		c |= npduSource
	}
	if n.ExpectingReply {
		c |= npduExpectReply
	}
	b = append(b, 0x01, c)
	if n.HasDest {
		b = binary.BigEndian.AppendUint16(b, n.DNet)
		b = append(b, byte(len(n.DAdr)))
		b = append(b, n.DAdr...)
	}
	if n.HasSource {
		b = binary.BigEndian.AppendUint16(b, n.SNet)
		b = append(b, byte(len(n.SAdr)))
		b = append(b, n.SAdr...)
	}
	if n.HasDest {
		h := n.HopCount
		if h == 0 {
			h = 255
		}
		b = append(b, h)
	}
	if n.NetworkMessage {
		b = append(b, n.MessageType)
		if n.MessageType >= 0x80 {
			b = binary.BigEndian.AppendUint16(b, n.VendorID)
		}
	}
	return b
}
