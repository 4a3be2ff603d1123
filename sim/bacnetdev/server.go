package bacnetdev

import (
	"context"
	"errors"
	"fmt"
	"net"
	"net/netip"
	"sync"
	"sync/atomic"
	"time"

	"risewatch/collector/bacnet/wire"
)

// Config configures one device group.
type Config struct {
	// Bind is the UDP address (default "127.0.0.1:0": loopback, any free port).
	Bind string
	// SegmentTimeout is how long a segmented answer waits for a Segment-ACK
	// before resending the window (default 500 ms); SegmentRetries how often (default 3).
	SegmentTimeout time.Duration
	SegmentRetries int
	// Window is the proposed window size for segmented answers (default 4).
	Window uint8
}

// Stats counts what a server saw.
type Stats struct {
	Requests, Answers, WhoIs, SegmentsSent, Rejected atomic.Uint64
	// InFlight and MaxInFlight count delayed answers not yet sent (how many
	// requests a client had open at once toward slow devices).
	InFlight, MaxInFlight atomic.Int64
}

// Server is one simulated device group on one UDP port.
type Server struct {
	cfg   Config
	conn  *net.UDPConn
	Stats Stats

	mu      sync.Mutex
	direct  map[uint32]*Device         // devices on the port itself (normally one)
	routed  map[routeKey]*Device       // devices behind the router
	byInst  map[uint32]*Device         // all devices
	pending map[segKey]*segmentedReply // segmented answers waiting for Segment-ACKs

	closed chan struct{}
	wg     sync.WaitGroup
}

type routeKey struct {
	net uint16
	mac byte
}

// NewServer binds the group's UDP port and starts serving.
func NewServer(cfg Config) (*Server, error) {
	if cfg.Bind == "" {
		cfg.Bind = "127.0.0.1:0"
	}
	if cfg.SegmentTimeout <= 0 {
		cfg.SegmentTimeout = 500 * time.Millisecond
	}
	if cfg.SegmentRetries <= 0 {
		cfg.SegmentRetries = 3
	}
	if cfg.Window == 0 {
		cfg.Window = 4
	}
	la, err := net.ResolveUDPAddr("udp4", cfg.Bind)
	if err != nil {
		return nil, fmt.Errorf("bacnetdev: bind %q: %w", cfg.Bind, err)
	}
	conn, err := net.ListenUDP("udp4", la)
	if err != nil {
		return nil, fmt.Errorf("bacnetdev: bind %s: %w", cfg.Bind, err)
	}
	_ = conn.SetReadBuffer(1 << 20)
	s := &Server{cfg: cfg, conn: conn, direct: map[uint32]*Device{}, routed: map[routeKey]*Device{},
		byInst: map[uint32]*Device{}, pending: map[segKey]*segmentedReply{}, closed: make(chan struct{})}
	s.wg.Add(1)
	go s.serve()
	return s, nil
}

// Addr is the group's UDP address.
func (s *Server) Addr() netip.AddrPort {
	a := s.conn.LocalAddr().(*net.UDPAddr).AddrPort()
	return netip.AddrPortFrom(a.Addr().Unmap(), a.Port())
}

// Close stops serving.
func (s *Server) Close() error {
	select {
	case <-s.closed:
		return nil
	default:
	}
	close(s.closed)
	err := s.conn.Close()
	s.wg.Wait()
	return err
}

// AddDevice adds a device to the group (behind the router when cfg.Network is set).
func (s *Server) AddDevice(cfg DeviceConfig) (*Device, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if _, dup := s.byInst[cfg.Instance]; dup {
		return nil, fmt.Errorf("bacnetdev: device %d already exists", cfg.Instance)
	}
	if cfg.Instance >= wire.WildcardInstance {
		return nil, fmt.Errorf("bacnetdev: device instance %d out of range", cfg.Instance)
	}
	d := newDevice(cfg)
	if cfg.Network != 0 {
		k := routeKey{cfg.Network, cfg.MAC}
		if _, dup := s.routed[k]; dup || cfg.Network == wire.GlobalNetwork {
			return nil, fmt.Errorf("bacnetdev: network %d MAC %d taken or invalid", cfg.Network, cfg.MAC)
		}
		s.routed[k] = d
	} else {
		s.direct[cfg.Instance] = d
	}
	s.byInst[cfg.Instance] = d
	return d, nil
}

// Device returns a device of the group.
func (s *Server) Device(instance uint32) (*Device, bool) {
	s.mu.Lock()
	defer s.mu.Unlock()
	d, ok := s.byInst[instance]
	return d, ok
}

// SetValue sets present-value of an object of a device in the group.
func (s *Server) SetValue(device uint32, obj wire.ObjectID, v float64) error {
	d, ok := s.Device(device)
	if !ok {
		return fmt.Errorf("bacnetdev: no device %d on %s", device, s.Addr())
	}
	return d.SetValue(obj, v)
}

// Advance lets every trend log of every device record at now.
func (s *Server) Advance(now time.Time) {
	s.mu.Lock()
	ds := make([]*Device, 0, len(s.byInst))
	for _, d := range s.byInst {
		ds = append(ds, d)
	}
	s.mu.Unlock()
	for _, d := range ds {
		d.Advance(now)
	}
}

func (s *Server) serve() {
	defer s.wg.Done()
	buf := make([]byte, 2048)
	for {
		n, from, err := s.conn.ReadFromUDPAddrPort(buf)
		if err != nil {
			if errors.Is(err, net.ErrClosed) {
				return
			}
			continue
		}
		s.handle(netip.AddrPortFrom(from.Addr().Unmap(), from.Port()), append([]byte(nil), buf[:n]...))
	}
}

// reply is where an answer goes: the requester, and the routing header a
// router adds for a device behind it.
type reply struct {
	to     netip.AddrPort
	routed bool
	snet   uint16
	sadr   byte
	// requester routing (when the request itself came from a remote network)
	dnet uint16
	dadr []byte
}

func (s *Server) handle(from netip.AddrPort, b []byte) {
	f, err := wire.DecodeBVLC(b)
	if err != nil {
		return
	}
	switch f.Function {
	case wire.BVLCOriginalUnicast, wire.BVLCOriginalBroadcast, wire.BVLCDistributeBroadcast:
	case wire.BVLCForwardedNPDU:
		from = f.Origin
	case wire.BVLCRegisterForeignDevice:
		// The group also acts as a BBMD that accepts every registration.
		_, _ = s.conn.WriteToUDPAddrPort(wire.AppendBVLCResult(nil, wire.BVLCResultSuccess), from)
		return
	default:
		return
	}
	n, apduBytes, err := wire.DecodeNPDU(f.NPDU)
	if err != nil || n.NetworkMessage {
		return
	}
	a, err := wire.DecodeAPDU(apduBytes)
	if err != nil {
		return
	}
	rp := reply{to: from}
	if n.HasSource {
		rp.dnet, rp.dadr = n.SNet, append([]byte(nil), n.SAdr...)
	}
	if a.Type == wire.PDUUnconfirmed && wire.UnconfirmedService(a.Service) == wire.ServiceWhoIs {
		s.whoIs(rp, n, a.Data)
		return
	}
	d, rp := s.target(rp, n)
	if d == nil {
		return
	}
	switch a.Type {
	case wire.PDUConfirmedRequest:
		s.Stats.Requests.Add(1)
		s.confirmed(d, rp, a)
	case wire.PDUSegmentACK:
		s.segmentACK(d, rp, a)
	case wire.PDUAbort:
		s.mu.Lock()
		delete(s.pending, segKey{rp.to, rp.snet, rp.sadr, a.InvokeID})
		s.mu.Unlock()
	}
}

// target finds the device a directed message is for.
func (s *Server) target(rp reply, n wire.NPDU) (*Device, reply) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if n.HasDest {
		if len(n.DAdr) != 1 {
			return nil, rp
		}
		d := s.routed[routeKey{n.DNet, n.DAdr[0]}]
		if d != nil {
			rp.routed, rp.snet, rp.sadr = true, n.DNet, n.DAdr[0]
		}
		return d, rp
	}
	if len(s.direct) == 1 {
		for _, d := range s.direct {
			return d, rp
		}
	}
	return nil, rp // several devices on one port without routing cannot be told apart
}

func (s *Server) whoIs(rp reply, n wire.NPDU, data []byte) {
	s.Stats.WhoIs.Add(1)
	lo, hi, ranged, err := wire.DecodeWhoIs(data)
	if err != nil {
		return
	}
	s.mu.Lock()
	var ds []*Device
	for _, d := range s.byInst {
		if ranged && (d.cfg.Instance < lo || d.cfg.Instance > hi) {
			continue
		}
		if n.HasDest && n.DNet != wire.GlobalNetwork && (d.cfg.Network != n.DNet) {
			continue
		}
		ds = append(ds, d)
	}
	s.mu.Unlock()
	for _, d := range ds {
		m := d.misbehaviour()
		if m.Silent {
			continue
		}
		r := rp
		if d.cfg.Network != 0 {
			r.routed, r.snet, r.sadr = true, d.cfg.Network, d.cfg.MAC
		}
		i := wire.IAm{Device: d.cfg.Instance, MaxAPDU: d.cfg.MaxAPDU, Segmentation: d.cfg.Segmentation, Vendor: d.cfg.Vendor}
		s.send(r, m, func(b []byte) []byte { return wire.AppendIAm(b, i) })
	}
}

// send frames and sends an APDU, applying the device's misbehaviour.
func (s *Server) send(rp reply, m Misbehaviour, apdu func([]byte) []byte) {
	b := wire.StartBVLC(make([]byte, 0, 1500), wire.BVLCOriginalUnicast)
	n := wire.NPDU{}
	if rp.routed {
		n.HasSource, n.SNet, n.SAdr = true, rp.snet, []byte{rp.sadr}
	}
	if rp.dnet != 0 {
		n.HasDest, n.DNet, n.DAdr = true, rp.dnet, rp.dadr
	}
	b = wire.FinishBVLC(apdu(wire.AppendNPDU(b, n)), 0)
	out := func() {
		if m.MalformedFirst {
			bad := append([]byte(nil), b[:len(b)-1]...) // length field now disagrees
			_, _ = s.conn.WriteToUDPAddrPort(bad, rp.to)
			garbage := append([]byte{0x81, 0x0A, 0x00, 0x08, 0x01, 0x00}, 0x3E, 0x05) // unterminated ACK
			_, _ = s.conn.WriteToUDPAddrPort(garbage, rp.to)
		}
		_, _ = s.conn.WriteToUDPAddrPort(b, rp.to)
		if m.Duplicate {
			_, _ = s.conn.WriteToUDPAddrPort(b, rp.to)
		}
		s.Stats.Answers.Add(1)
	}
	if m.Delay > 0 {
		n := s.Stats.InFlight.Add(1)
		for {
			old := s.Stats.MaxInFlight.Load()
			if n <= old || s.Stats.MaxInFlight.CompareAndSwap(old, n) {
				break
			}
		}
		s.wg.Add(1)
		go func() {
			defer s.wg.Done()
			select {
			case <-time.After(m.Delay):
				s.Stats.InFlight.Add(-1) // before sending: the requester may send its next one at once
				out()
			case <-s.closed:
				s.Stats.InFlight.Add(-1)
			}
		}()
		return
	}
	out()
}

// Run serves until ctx ends, then closes the server (for callers that prefer a blocking API).
func (s *Server) Run(ctx context.Context) error {
	select {
	case <-ctx.Done():
	case <-s.closed:
	}
	return s.Close()
}
