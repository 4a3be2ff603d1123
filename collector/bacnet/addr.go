// Package bacnet is risewatch's read-only BACnet/IP client: discovery
// (Who-Is/I-Am), ReadProperty, ReadPropertyMultiple and ReadRange with
// transactions, retries, segmentation and foreign-device registration, a
// poller that batches points into ReadPropertyMultiple requests, and a
// trend-log reader that backfills history from per-log checkpoints. It
// implements collector.Source. No write service exists in this package or
// in wire/ (readonly_test.go proves it).
package bacnet

import (
	"encoding/hex"
	"fmt"
	"net/netip"
	"strconv"
	"strings"
)

// DefaultPort is the BACnet/IP UDP port 47808 (0xBAC0).
const DefaultPort = 47808

// Address locates a BACnet device: its B/IP address (for a routed device, the
// router's), plus the remote network number and MAC address when the device
// sits behind a router. Address is comparable and keeps the UDP port, so
// several devices on one host are distinct.
type Address struct {
	IP  netip.AddrPort
	Net uint16 // 0: on the local B/IP network
	MAC string // address on Net (octets), empty when Net is 0
}

// Routed reports whether the device is behind a router.
func (a Address) Routed() bool { return a.Net != 0 }

// String formats "ip:port" or "ip:port/net:machex".
func (a Address) String() string {
	if !a.Routed() {
		return a.IP.String()
	}
	return a.IP.String() + "/" + strconv.Itoa(int(a.Net)) + ":" + hex.EncodeToString([]byte(a.MAC))
}

// ParseAddress reads "ip[:port]" or "ip[:port]/net:machex" (port 47808 when left out).
func ParseAddress(s string) (Address, error) {
	var a Address
	host, route, routed := strings.Cut(strings.TrimSpace(s), "/")
	ap, err := netip.ParseAddrPort(host)
	if err != nil {
		ip, err2 := netip.ParseAddr(host)
		if err2 != nil {
			return a, fmt.Errorf("bacnet address %q: %w", s, err)
		}
		ap = netip.AddrPortFrom(ip, DefaultPort)
	}
	a.IP = netip.AddrPortFrom(ap.Addr().Unmap(), ap.Port())
	if routed {
		n, mac, ok := strings.Cut(route, ":")
		nv, err := strconv.ParseUint(n, 10, 16)
		if !ok || err != nil || nv == 0 || nv == 0xFFFF {
			return a, fmt.Errorf("bacnet address %q: want /NET:MAC with NET 1..65534", s)
		}
		m, err := hex.DecodeString(mac)
		if err != nil || len(m) == 0 || len(m) > 7 {
			return a, fmt.Errorf("bacnet address %q: MAC must be 1..7 octets in hex", s)
		}
		a.Net, a.MAC = uint16(nv), string(m)
	}
	return a, nil
}
