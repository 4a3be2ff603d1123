package bacnet

import (
	"context"
	"fmt"
	"log/slog"
	"net"
	"net/netip"
	"sync"
	"sync/atomic"
	"time"

	"risewatch/collector/bacnet/wire"
)

// Options configure a Client. Zero values take the defaults named.
type Options struct {
	// Bind is the local UDP address (default "0.0.0.0:0"; use port 47808 to
	// receive broadcast I-Ams on a real network).
	Bind string
	// Timeout is the APDU timeout per attempt (default 3 s, the bacnet-stack
	// and @bacnet-js/client default); Retries the number of resends after the
	// first attempt (default 3). Routed networks often need 6-10 s.
	Timeout time.Duration
	Retries int
	// NoRetries forces Retries to 0 (a zero Retries means the default).
	NoRetries bool
	// SegmentTimeout bounds the wait for the next segment of a segmented answer (default 2 s).
	SegmentTimeout time.Duration
	// MaxOutstanding is the per-device limit of open transactions (default 2;
	// devices with max-APDU 480 or less, typically MS/TP, get 1).
	MaxOutstanding int
	// MaxAPDU and MaxSegments are what the client accepts (defaults 1476 and 64).
	MaxAPDU     int
	MaxSegments int
	// BBMD, when set, registers the client as a foreign device there with TTL
	// (default 5 min), re-registering before it runs out; broadcasts then go
	// as Distribute-Broadcast-To-Network through the BBMD.
	BBMD string
	TTL  time.Duration
	// Logger receives warnings about malformed traffic (default slog.Default()).
	Logger *slog.Logger
	// Sent, when set, sees every datagram the client sends (tests write it to a pcap).
	Sent func(to netip.AddrPort, frame []byte)
}

func (o *Options) fill() {
	if o.Bind == "" {
		o.Bind = "0.0.0.0:0"
	}
	if o.Timeout <= 0 {
		o.Timeout = 3 * time.Second
	}
	if o.NoRetries {
		o.Retries = 0
	} else if o.Retries <= 0 {
		o.Retries = 3
	}
	if o.SegmentTimeout <= 0 {
		o.SegmentTimeout = 2 * time.Second
	}
	if o.MaxOutstanding <= 0 {
		o.MaxOutstanding = 2
	}
	if o.MaxAPDU <= 0 || o.MaxAPDU > 1476 {
		o.MaxAPDU = 1476
	}
	if o.MaxSegments <= 0 {
		o.MaxSegments = 64
	}
	if o.TTL <= 0 {
		o.TTL = 5 * time.Minute
	}
	if o.Logger == nil {
		o.Logger = slog.Default()
	}
}

// Stats counts traffic since the client started.
type Stats struct {
	Requests, Retries, Timeouts, Malformed, Unmatched, Segments atomic.Uint64
}

// Client is a BACnet/IP client bound to one UDP socket. It is safe for concurrent use.
type Client struct {
	opts  Options
	conn  *net.UDPConn
	bbmd  netip.AddrPort
	Stats Stats

	mu      sync.Mutex
	peers   map[Address]*peer
	devices map[uint32]*Device
	iamSubs map[int]chan<- *Device
	nextSub int

	fdResult   chan uint16
	registered atomic.Bool
	closed     chan struct{}
	wg         sync.WaitGroup
	bufPool    sync.Pool
}

// peer holds the open transactions toward one address, keyed by invoke ID.
type peer struct {
	next uint8
	// open holds the transactions in flight, in no order: a short slice
	// searched by invoke ID, not a 256-slot array (2 KiB) or a map (a few
	// hundred octets once used), because a device has a few in flight at
	// most and a campus has one peer per controller.
	open []*txn
	// free, made when a request first waits for an invoke ID (all 256 in
	// use), is signalled when an ID is released.
	free chan struct{}
}

// find returns the position of invoke ID id in p.open, or -1.
func (p *peer) find(id uint8) int {
	for i, t := range p.open {
		if t.id == id {
			return i
		}
	}
	return -1
}

// Device is a BACnet device the client knows: from an I-Am or configuration.
type Device struct {
	Instance     uint32
	Addr         Address
	MaxAPDU      int // octets the device accepts (clamped to 1476)
	Segmentation wire.Segmentation
	Vendor       uint16
	// FromIAm is false for devices added from configuration without an I-Am.
	FromIAm bool

	sem   chan struct{}
	noRPM atomic.Bool // device rejected ReadPropertyMultiple: poll with ReadProperty
}

// RPMSupported reports whether the poller still uses ReadPropertyMultiple for the device.
func (d *Device) RPMSupported() bool { return !d.noRPM.Load() }

// Dial opens the UDP socket and starts receiving. Close releases it.
func Dial(ctx context.Context, opts Options) (*Client, error) {
	opts.fill()
	la, err := net.ResolveUDPAddr("udp4", opts.Bind)
	if err != nil {
		return nil, fmt.Errorf("bacnet: bind address %q: %w", opts.Bind, err)
	}
	conn, err := net.ListenUDP("udp4", la)
	if err != nil {
		return nil, fmt.Errorf("bacnet: bind %s: %w", opts.Bind, err)
	}
	// Answers from many devices arrive in bursts; a larger receive buffer
	// (capped by net.core.rmem_max) keeps the kernel from dropping them.
	_ = conn.SetReadBuffer(4 << 20)
	c := &Client{opts: opts, conn: conn, peers: map[Address]*peer{}, devices: map[uint32]*Device{},
		iamSubs: map[int]chan<- *Device{}, fdResult: make(chan uint16, 1), closed: make(chan struct{})}
	c.bufPool.New = func() any { b := make([]byte, 0, wire.MaxBVLCLength); return &b }
	c.wg.Add(1)
	go c.receive()
	if opts.BBMD != "" {
		a, err := ParseAddress(opts.BBMD)
		if err != nil {
			c.Close()
			return nil, fmt.Errorf("bacnet: BBMD: %w", err)
		}
		c.bbmd = a.IP
		if err := c.register(ctx); err != nil {
			c.Close()
			return nil, err
		}
		c.wg.Add(1)
		go c.reregister()
	}
	return c, nil
}

// LocalAddr is the bound UDP address.
func (c *Client) LocalAddr() netip.AddrPort { return c.conn.LocalAddr().(*net.UDPAddr).AddrPort() }

// Close stops the client; open transactions end with ErrClosed.
func (c *Client) Close() error {
	select {
	case <-c.closed:
		return nil
	default:
	}
	close(c.closed)
	err := c.conn.Close()
	c.wg.Wait()
	return err
}

func (c *Client) send(to netip.AddrPort, frame []byte) error {
	if c.opts.Sent != nil {
		c.opts.Sent(to, frame)
	}
	_, err := c.conn.WriteToUDPAddrPort(frame, to)
	return err
}

// frame builds BVLC + NPDU around an APDU written by body.
func (c *Client) frame(buf []byte, to Address, broadcast, expectReply bool, body func([]byte) []byte) []byte {
	fn := uint8(wire.BVLCOriginalUnicast)
	if broadcast {
		fn = wire.BVLCOriginalBroadcast
		if c.bbmd.IsValid() {
			fn = wire.BVLCDistributeBroadcast
		}
	}
	b := wire.StartBVLC(buf[:0], fn)
	n := wire.NPDU{ExpectingReply: expectReply}
	if to.Routed() {
		n.HasDest, n.DNet, n.DAdr = true, to.Net, []byte(to.MAC)
	}
	b = wire.AppendNPDU(b, n)
	b = body(b)
	return wire.FinishBVLC(b, 0)
}

// AddDevice registers a device from configuration (no I-Am seen). Until an
// I-Am or its device properties say otherwise it is assumed to accept 480
// octets without segmentation, which every BACnet/IP and MS/TP device does.
func (c *Client) AddDevice(instance uint32, addr Address) *Device {
	c.mu.Lock()
	defer c.mu.Unlock()
	if d, ok := c.devices[instance]; ok {
		return d
	}
	d := c.newDevice(wire.IAm{Device: instance, MaxAPDU: 480, Segmentation: wire.NoSegmentation}, addr)
	c.devices[instance] = d
	return d
}

// Device returns a known device.
func (c *Client) Device(instance uint32) (*Device, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	d, ok := c.devices[instance]
	return d, ok
}

// Devices returns every known device.
func (c *Client) Devices() []*Device {
	c.mu.Lock()
	defer c.mu.Unlock()
	out := make([]*Device, 0, len(c.devices))
	for _, d := range c.devices {
		out = append(out, d)
	}
	return out
}

func (c *Client) newDevice(i wire.IAm, addr Address) *Device {
	maxAPDU := min(max(i.MaxAPDU, 50), 1476) // @bacnet-js/client advertises 1482; B/IP carries at most 1476
	limit := c.opts.MaxOutstanding
	if maxAPDU <= 480 {
		limit = 1
	}
	return &Device{Instance: i.Device, Addr: addr, MaxAPDU: maxAPDU, Segmentation: i.Segmentation,
		Vendor: i.Vendor, sem: make(chan struct{}, limit)}
}

// learn records an I-Am; an existing device keeps its RPM memory and semaphore.
func (c *Client) learn(i wire.IAm, addr Address) *Device {
	c.mu.Lock()
	defer c.mu.Unlock()
	d, ok := c.devices[i.Device]
	if ok && d.FromIAm && d.Addr == addr && d.MaxAPDU == min(max(i.MaxAPDU, 50), 1476) && d.Segmentation == i.Segmentation {
		return d
	}
	nd := c.newDevice(i, addr)
	nd.FromIAm = true
	if ok {
		nd.noRPM.Store(d.noRPM.Load())
		if cap(d.sem) == cap(nd.sem) {
			nd.sem = d.sem
		}
	}
	c.devices[i.Device] = nd
	for _, ch := range c.iamSubs {
		select {
		case ch <- nd:
		default:
		}
	}
	return nd
}

// Discover sends Who-Is (to each target, or broadcast when targets holds a
// broadcast address) and collects I-Ams for wait. low < 0 asks every device.
func (c *Client) Discover(ctx context.Context, targets []netip.AddrPort, low, high int, wait time.Duration) ([]*Device, error) {
	ch := make(chan *Device, 1024)
	c.mu.Lock()
	id := c.nextSub
	c.nextSub++
	c.iamSubs[id] = ch
	c.mu.Unlock()
	defer func() {
		c.mu.Lock()
		delete(c.iamSubs, id)
		c.mu.Unlock()
	}()
	bp := c.bufPool.Get().(*[]byte)
	defer c.bufPool.Put(bp)
	for _, t := range targets {
		bcast := isBroadcast(t.Addr())
		f := c.frame(*bp, Address{IP: t}, bcast, false, func(b []byte) []byte { return wire.AppendWhoIs(b, low, high) })
		to := t
		if bcast && c.bbmd.IsValid() {
			to = c.bbmd
		}
		if err := c.send(to, f); err != nil {
			return nil, fmt.Errorf("bacnet: who-is to %s: %w", t, err)
		}
	}
	seen := map[uint32]*Device{}
	timer := time.NewTimer(wait)
	defer timer.Stop()
	for {
		select {
		case d := <-ch:
			if low < 0 || (int(d.Instance) >= low && int(d.Instance) <= high) {
				seen[d.Instance] = d
				if low >= 0 && low == high {
					return []*Device{d}, nil // one instance asked for: it answered
				}
			}
		case <-timer.C:
			out := make([]*Device, 0, len(seen))
			for _, d := range seen {
				out = append(out, d)
			}
			return out, nil
		case <-ctx.Done():
			return nil, ctx.Err()
		case <-c.closed:
			return nil, ErrClosed
		}
	}
}

func isBroadcast(ip netip.Addr) bool {
	if !ip.Is4() {
		return false
	}
	b := ip.As4()
	return b[3] == 255 || ip == netip.AddrFrom4([4]byte{255, 255, 255, 255})
}

// Resolve makes sure a configured device is known: a unicast Who-Is for its
// instance; when no I-Am comes, its Device object's max-APDU-length-accepted
// and segmentation-supported are read instead.
func (c *Client) Resolve(ctx context.Context, instance uint32, addr Address) (*Device, error) {
	if d, ok := c.Device(instance); ok && d.FromIAm {
		return d, nil
	}
	target := addr.IP
	if !addr.Routed() {
		if ds, err := c.Discover(ctx, []netip.AddrPort{target}, int(instance), int(instance), c.opts.Timeout); err == nil && len(ds) == 1 {
			return ds[0], nil
		} else if err != nil {
			return nil, err
		}
	}
	d := c.AddDevice(instance, addr)
	devObj := wire.ObjectID{Type: wire.ObjectDevice, Instance: instance}
	res, err := c.ReadPropertyMultiple(ctx, d, []wire.ReadAccessSpec{{Object: devObj, Props: []wire.PropertyRef{
		{Prop: wire.PropMaxAPDULength, Index: wire.NoIndex}, {Prop: wire.PropSegmentationSupported, Index: wire.NoIndex}}}})
	if err != nil {
		if unsupported(err) {
			d.noRPM.Store(true)
		}
		return d, nil // keep the safe defaults
	}
	i := wire.IAm{Device: instance, MaxAPDU: d.MaxAPDU, Segmentation: d.Segmentation, Vendor: d.Vendor}
	for _, r := range res {
		if r.Err != nil || len(r.Values) != 1 {
			continue
		}
		switch r.Prop {
		case wire.PropMaxAPDULength:
			i.MaxAPDU = int(min(r.Values[0].U, 1476))
		case wire.PropSegmentationSupported:
			i.Segmentation = wire.Segmentation(min(r.Values[0].U, 3))
		}
	}
	c.mu.Lock()
	nd := c.newDevice(i, addr)
	c.devices[instance] = nd
	c.mu.Unlock()
	return nd, nil
}
