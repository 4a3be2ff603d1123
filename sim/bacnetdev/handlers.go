package bacnetdev

import (
	"net/netip"
	"time"

	"risewatch/collector/bacnet/wire"
)

// overhead of a Complex-ACK header (segmented form) in octets.
const ackHeader = 5

func (s *Server) confirmed(d *Device, rp reply, a wire.APDU) {
	m := d.misbehaviour()
	if m.Silent {
		return
	}
	d.mu.Lock()
	drop := d.dropped < m.DropFirst
	if drop {
		d.dropped++
	}
	d.mu.Unlock()
	if drop {
		return
	}
	id := a.InvokeID
	if a.Segmented {
		s.send(rp, m, func(b []byte) []byte { return wire.AppendAbort(b, true, id, wire.AbortSegmentationNotSupported) })
		return
	}
	svc := wire.ConfirmedService(a.Service)
	reject := func(reason uint8) {
		s.Stats.Rejected.Add(1)
		s.send(rp, m, func(b []byte) []byte { return wire.AppendReject(b, id, reason) })
	}
	fail := func(e *wire.PropertyError) {
		s.send(rp, m, func(b []byte) []byte { return wire.AppendError(b, id, svc, e.Class, e.Code) })
	}
	respMax := min(a.MaxAPDU, d.cfg.MaxAPDU)
	var body []byte
	switch svc {
	case wire.ServiceReadProperty:
		obj, p, err := wire.DecodeReadProperty(a.Data)
		if err != nil {
			reject(wire.RejectInvalidTag)
			return
		}
		vs, perr := d.read(obj, p)
		if perr != nil {
			fail(perr)
			return
		}
		if obj.Type == wire.ObjectDevice {
			obj.Instance = d.cfg.Instance
		}
		body = wire.AppendReadPropertyACK(nil, obj, p, vs)
	case wire.ServiceReadPropertyMultiple:
		if m.RejectRPM {
			reject(wire.RejectUnrecognizedService)
			return
		}
		specs, err := wire.DecodeReadPropertyMultiple(a.Data)
		if err != nil {
			reject(wire.RejectInvalidTag)
			return
		}
		body = wire.AppendReadPropertyMultipleACK(nil, d.readMultiple(specs))
	case wire.ServiceReadRange:
		q, err := wire.DecodeReadRange(a.Data)
		if err != nil {
			reject(wire.RejectInvalidTag)
			return
		}
		if q.Kind == wire.RangeByTime && m.RejectReadRangeByTime {
			reject(wire.RejectInvalidTag)
			return
		}
		if q.Kind == wire.RangeByTime && m.ErrorReadRangeByTime {
			fail(&wire.PropertyError{Class: wire.ErrClassServices, Code: wire.ErrCodeOptionalNotSupported})
			return
		}
		budget := respMax - ackHeader - 24
		if a.SegmentedAccepted && d.cfg.Segmentation.CanTransmit() {
			budget = (respMax - ackHeader) * min(maxSegs(a.MaxSegments), 16)
		}
		ack, perr := d.readRange(q, budget)
		if perr != nil {
			fail(perr)
			return
		}
		body = wire.AppendReadRangeACK(nil, ack)
	default:
		reject(wire.RejectUnrecognizedService) // this simulator serves reads only
		return
	}
	if len(body)+3 <= respMax {
		s.send(rp, m, func(b []byte) []byte {
			return append(wire.AppendComplexACKHeader(b, id, svc, nil), body...)
		})
		return
	}
	if !a.SegmentedAccepted || !d.cfg.Segmentation.CanTransmit() {
		s.send(rp, m, func(b []byte) []byte { return wire.AppendAbort(b, true, id, wire.AbortSegmentationNotSupported) })
		return
	}
	chunk := respMax - ackHeader
	nseg := (len(body) + chunk - 1) / chunk
	if nseg > maxSegs(a.MaxSegments) || nseg > 255 {
		s.send(rp, m, func(b []byte) []byte { return wire.AppendAbort(b, true, id, wire.AbortBufferOverflow) })
		return
	}
	chunks := make([][]byte, nseg)
	for i := range chunks {
		chunks[i] = body[i*chunk : min((i+1)*chunk, len(body))]
	}
	s.startSegmented(d, rp, m, id, svc, chunks)
}

func maxSegs(n int) int {
	if n <= 0 {
		return 64 // unspecified: assume the common 64
	}
	return n
}

// readMultiple answers every property of every spec, expanding all/required/optional.
func (d *Device) readMultiple(specs []wire.ReadAccessSpec) []wire.PropertyValue {
	var out []wire.PropertyValue
	for _, sp := range specs {
		obj := sp.Object
		if obj.Type == wire.ObjectDevice && obj.Instance == wire.WildcardInstance {
			obj.Instance = d.cfg.Instance
		}
		for _, p := range sp.Props {
			if p.Prop == wire.PropAll || p.Prop == wire.PropRequired || p.Prop == wire.PropOptional {
				list, perr := d.propertyList(obj)
				if perr != nil {
					out = append(out, wire.PropertyValue{Object: obj, PropertyRef: p, Err: perr})
					continue
				}
				for _, id := range list {
					ref := wire.PropertyRef{Prop: id, Index: wire.NoIndex}
					vs, perr := d.read(obj, ref)
					out = append(out, wire.PropertyValue{Object: obj, PropertyRef: ref, Values: vs, Err: perr})
				}
				continue
			}
			vs, perr := d.read(obj, p)
			out = append(out, wire.PropertyValue{Object: obj, PropertyRef: p, Values: vs, Err: perr})
		}
	}
	return out
}

type segKey struct {
	to     netip.AddrPort
	snet   uint16
	sadr   byte
	invoke uint8
}

// segmentedReply is a segmented Complex-ACK in flight (ASHRAE 135 clause 5.4.5, responder side).
type segmentedReply struct {
	ack chan wire.APDU
}

func (s *Server) startSegmented(d *Device, rp reply, m Misbehaviour, id uint8, svc wire.ConfirmedService, chunks [][]byte) {
	k := segKey{rp.to, rp.snet, rp.sadr, id}
	sr := &segmentedReply{ack: make(chan wire.APDU, 8)}
	s.mu.Lock()
	s.pending[k] = sr
	s.mu.Unlock()
	m.Delay = 0 // the first window goes out at once; Delay applies to whole answers only
	s.wg.Add(1)
	go func() {
		defer s.wg.Done()
		defer func() {
			s.mu.Lock()
			if s.pending[k] == sr {
				delete(s.pending, k)
			}
			s.mu.Unlock()
		}()
		window := int(s.cfg.Window)
		base, tries := 0, 0
		for base < len(chunks) {
			for i := base; i < min(base+window, len(chunks)); i++ {
				seg := &wire.Segment{Sequence: uint8(i), Window: uint8(window), More: i < len(chunks)-1}
				c := chunks[i]
				s.Stats.SegmentsSent.Add(1)
				s.send(rp, m, func(b []byte) []byte { return append(wire.AppendComplexACKHeader(b, id, svc, seg), c...) })
			}
		wait:
			for {
				select {
				case a := <-sr.ack:
					delta := int(uint8(a.Sequence + 1 - uint8(base)))
					if delta > window {
						continue // stale acknowledgement
					}
					base += delta
					tries = 0
					if a.Window > 0 {
						window = min(window, int(a.Window))
					}
					break wait
				case <-time.After(s.cfg.SegmentTimeout):
					if tries++; tries > s.cfg.SegmentRetries {
						s.send(rp, m, func(b []byte) []byte { return wire.AppendAbort(b, true, id, wire.AbortTSMTimeout) })
						return
					}
					break wait
				case <-s.closed:
					return
				}
			}
		}
	}()
}

func (s *Server) segmentACK(d *Device, rp reply, a wire.APDU) {
	m := d.misbehaviour()
	d.mu.Lock()
	drop := d.segDrop < m.DropSegmentACKs
	if drop {
		d.segDrop++
	}
	d.mu.Unlock()
	if drop {
		return
	}
	s.mu.Lock()
	sr := s.pending[segKey{rp.to, rp.snet, rp.sadr, a.InvokeID}]
	s.mu.Unlock()
	if sr != nil {
		select {
		case sr.ack <- a:
		default:
		}
	}
}
