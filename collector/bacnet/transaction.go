package bacnet

import (
	"context"
	"errors"
	"fmt"
	"net/netip"
	"time"

	"risewatch/collector/bacnet/wire"
)

// txn is one confirmed-request transaction (ASHRAE 135 clause 5.4, client side).
type txn struct {
	addr    Address
	id      uint8
	svc     wire.ConfirmedService
	done    chan result
	segment chan struct{} // a segment arrived: the wait restarts its segment timer
	// Reassembly state, touched only by the receive goroutine.
	segData  []byte
	nextSeq  uint8
	inWindow int
	window   uint8
	started  bool
	limit    int
}

type result struct {
	apdu wire.APDU
	data []byte
	err  error
}

func (c *Client) peerFor(a Address) *peer {
	p, ok := c.peers[a]
	if !ok {
		p = &peer{}
		c.peers[a] = p
	}
	return p
}

// open allocates an invoke ID toward a, waiting while all 256 are in use.
func (c *Client) open(ctx context.Context, a Address, svc wire.ConfirmedService) (*txn, error) {
	for {
		c.mu.Lock()
		p := c.peerFor(a)
		for i := 0; i < 256; i++ {
			id := p.next + uint8(i)
			if p.find(id) < 0 {
				t := &txn{addr: a, id: id, svc: svc, done: make(chan result, 1), segment: make(chan struct{}, 1),
					limit: c.opts.MaxSegments * c.opts.MaxAPDU}
				p.open = append(p.open, t)
				p.next = id + 1
				c.mu.Unlock()
				return t, nil
			}
		}
		if p.free == nil {
			p.free = make(chan struct{}, 1)
		}
		free := p.free
		c.mu.Unlock()
		select {
		case <-free:
		case <-ctx.Done():
			return nil, ctx.Err()
		case <-c.closed:
			return nil, ErrClosed
		}
	}
}

func (c *Client) closeTxn(t *txn) {
	c.mu.Lock()
	p := c.peers[t.addr]
	if p != nil {
		if i := p.find(t.id); i >= 0 && p.open[i] == t {
			last := len(p.open) - 1
			p.open[i], p.open[last] = p.open[last], nil
			p.open = p.open[:last]
			if p.free != nil {
				select {
				case p.free <- struct{}{}:
				default:
				}
			}
		}
	}
	c.mu.Unlock()
}

func (c *Client) lookup(a Address, id uint8) *txn {
	c.mu.Lock()
	defer c.mu.Unlock()
	if p := c.peers[a]; p != nil {
		if i := p.find(id); i >= 0 {
			return p.open[i]
		}
	}
	return nil
}

// confirmed runs one confirmed request against d: waits for a slot under the
// device's outstanding limit, sends, and resends on timeout. encode appends
// the APDU for the given header; it is always one of the wire read encoders.
func (c *Client) confirmed(ctx context.Context, d *Device, svc wire.ConfirmedService,
	encode func([]byte, wire.RequestHeader) []byte) ([]byte, error) {
	select {
	case d.sem <- struct{}{}:
	case <-ctx.Done():
		return nil, ctx.Err()
	case <-c.closed:
		return nil, ErrClosed
	}
	defer func() { <-d.sem }()
	t, err := c.open(ctx, d.Addr, svc)
	if err != nil {
		return nil, err
	}
	defer c.closeTxn(t)
	h := wire.RequestHeader{InvokeID: t.id, MaxAPDU: c.opts.MaxAPDU}
	if d.Segmentation.CanTransmit() {
		h.SegmentedAccepted, h.MaxSegments = true, c.opts.MaxSegments
	}
	bp := c.bufPool.Get().(*[]byte)
	f := c.frame(*bp, d.Addr, false, true, func(b []byte) []byte { return encode(b, h) })
	defer c.bufPool.Put(bp)
	if len(f)-4 > wire.MaxBVLCLength {
		return nil, fmt.Errorf("bacnet: request of %d octets too long", len(f))
	}
	timer := time.NewTimer(c.opts.Timeout)
	defer timer.Stop()
	for attempt := 0; attempt <= c.opts.Retries; attempt++ {
		if attempt == 0 {
			c.Stats.Requests.Add(1)
		} else {
			c.Stats.Retries.Add(1)
		}
		if err := c.send(d.Addr.IP, f); err != nil {
			return nil, fmt.Errorf("bacnet: send to device %d at %s: %w", d.Instance, d.Addr, err)
		}
		timer.Reset(c.opts.Timeout)
	wait:
		for {
			select {
			case r := <-t.done:
				return r.data, r.err
			case <-t.segment:
				// Segments are arriving: wait per segment, not per request.
				if !timer.Stop() {
					select {
					case <-timer.C:
					default:
					}
				}
				timer.Reset(c.opts.SegmentTimeout)
			case <-timer.C:
				break wait
			case <-ctx.Done():
				return nil, ctx.Err()
			case <-c.closed:
				return nil, ErrClosed
			}
		}
	}
	c.Stats.Timeouts.Add(1)
	return nil, fmt.Errorf("device %d at %s, %s after %d attempts of %s: %w", d.Instance, d.Addr, svc,
		c.opts.Retries+1, c.opts.Timeout, ErrTimeout)
}

// receive reads datagrams until the socket closes.
func (c *Client) receive() {
	defer c.wg.Done()
	buf := make([]byte, 2048)
	for {
		n, from, err := c.conn.ReadFromUDPAddrPort(buf)
		if err != nil {
			select {
			case <-c.closed:
				return
			default:
			}
			if errors.Is(err, errClosedConn) {
				return
			}
			continue
		}
		c.handle(netip.AddrPortFrom(from.Addr().Unmap(), from.Port()), buf[:n])
	}
}

func (c *Client) malformed(from netip.AddrPort, what string, err error) {
	c.Stats.Malformed.Add(1)
	c.opts.Logger.Debug("bacnet: dropped malformed frame", "from", from, "layer", what, "err", err)
}

func (c *Client) handle(from netip.AddrPort, b []byte) {
	f, err := wire.DecodeBVLC(b)
	if err != nil {
		c.malformed(from, "bvlc", err)
		return
	}
	switch f.Function {
	case wire.BVLCResult:
		select {
		case c.fdResult <- f.Result:
		default:
		}
		return
	case wire.BVLCForwardedNPDU:
		from = f.Origin
	case wire.BVLCOriginalUnicast, wire.BVLCOriginalBroadcast:
	default:
		return
	}
	n, apduBytes, err := wire.DecodeNPDU(f.NPDU)
	if err != nil {
		c.malformed(from, "npdu", err)
		return
	}
	if n.NetworkMessage {
		return // router management; nothing a reader needs
	}
	src := Address{IP: from}
	if n.HasSource {
		src.Net, src.MAC = n.SNet, string(n.SAdr)
	}
	a, err := wire.DecodeAPDU(apduBytes)
	if err != nil {
		c.malformed(from, "apdu", err)
		return
	}
	switch a.Type {
	case wire.PDUUnconfirmed:
		if wire.UnconfirmedService(a.Service) == wire.ServiceIAm {
			i, err := wire.DecodeIAm(a.Data)
			if err != nil {
				c.malformed(from, "i-am", err)
				return
			}
			c.learn(i, src)
		}
		return
	case wire.PDUConfirmedRequest:
		return // a reading client serves nothing
	}
	t := c.lookup(src, a.InvokeID)
	if t == nil {
		c.Stats.Unmatched.Add(1) // late or duplicated answer
		return
	}
	var r result
	switch a.Type {
	case wire.PDUSimpleACK:
		r.apdu = a
	case wire.PDUComplexACK:
		if wire.ConfirmedService(a.Service) != t.svc {
			c.malformed(from, "complex-ack", fmt.Errorf("service %d answers a %s", a.Service, t.svc))
			return
		}
		if a.Segmented {
			c.segmentArrived(from, t, a)
			return
		}
		r.apdu, r.data = a, append([]byte(nil), a.Data...)
	case wire.PDUError:
		cl, co, err := wire.DecodeErrorBody(a.Data)
		if err != nil {
			c.malformed(from, "error", err)
			return
		}
		r.err = &ServiceError{Service: t.svc, Class: cl, Code: co}
	case wire.PDUReject:
		r.err = &RejectError{Reason: a.Reason}
	case wire.PDUAbort:
		r.err = &AbortError{Reason: a.Reason, Server: a.Server}
	default:
		return
	}
	c.finish(t, r)
}

// finish delivers the final result and releases the invoke ID at once, so
// a duplicated answer arriving later counts as unmatched.
func (c *Client) finish(t *txn, r result) {
	select {
	case t.done <- r:
	default:
	}
	c.closeTxn(t)
}

// segmentArrived reassembles a segmented Complex-ACK and sends Segment-ACKs
// (ASHRAE 135 clause 5.4.4 requester side: acknowledge each full window and
// the last segment; a segment out of order is answered with a negative ACK
// naming the last one received in order).
func (c *Client) segmentArrived(from netip.AddrPort, t *txn, a wire.APDU) {
	c.Stats.Segments.Add(1)
	if a.Sequence == 0 && t.started {
		// The server restarted the answer (our request was resent): start over.
		t.started, t.segData, t.nextSeq, t.inWindow = false, t.segData[:0], 0, 0
	}
	if !t.started {
		if a.Sequence != 0 {
			return // joined mid-answer: the server resends after its segment timeout
		}
		t.started, t.window = true, min(a.Window, 127)
	}
	select {
	case t.segment <- struct{}{}:
	default:
	}
	if a.Sequence != t.nextSeq {
		c.sendSegmentACK(t, true, t.nextSeq-1, t.window)
		return
	}
	if len(t.segData)+len(a.Data) > t.limit {
		c.sendAbort(t, wire.AbortBufferOverflow)
		c.finish(t, result{err: &AbortError{Reason: wire.AbortBufferOverflow}})
		return
	}
	t.segData = append(t.segData, a.Data...)
	t.nextSeq++
	t.inWindow++
	if !a.MoreFollows {
		c.sendSegmentACK(t, false, a.Sequence, t.window)
		c.finish(t, result{apdu: a, data: t.segData})
		return
	}
	if t.inWindow >= int(t.window) {
		t.inWindow = 0
		c.sendSegmentACK(t, false, a.Sequence, t.window)
	}
}

func (c *Client) sendSegmentACK(t *txn, nak bool, seq, window uint8) {
	var buf [32]byte
	f := c.frame(buf[:0], t.addr, false, false, func(b []byte) []byte {
		return wire.AppendSegmentACK(b, nak, false, t.id, seq, window)
	})
	_ = c.send(t.addr.IP, f)
}

func (c *Client) sendAbort(t *txn, reason uint8) {
	var buf [32]byte
	f := c.frame(buf[:0], t.addr, false, false, func(b []byte) []byte { return wire.AppendAbort(b, false, t.id, reason) })
	_ = c.send(t.addr.IP, f)
}
