package bacnet

import (
	"context"
	"fmt"
	"slices"

	"risewatch/collector/bacnet/wire"
)

// Read names one property of one object to read.
type Read struct {
	Object wire.ObjectID
	Prop   wire.PropertyRef
}

// ReadResult is the answer to one Read.
type ReadResult struct {
	Values []wire.Value
	Err    error
}

// Size estimates for packing ReadPropertyMultiple answers into one APDU
// (encodings of ASHRAE 135 clause 21): per object the identifier (5) and
// the list's opening/closing tags (2); per property its identifier (2-4),
// opening/closing tags (2) and a value or an error (at most 7 for REAL,
// enumerations and status flags, 6 for an error).
const (
	rpmAckHeader   = 3
	rpmPerObject   = 7
	rpmPerProperty = 13
)

// maxRPMProperties caps properties per request for small devices: 10 for
// 206-octet devices, 20 for 480-octet ones (a BAS vendor's client limits,
// quoted in practice guides); 128 otherwise.
func maxRPMProperties(maxAPDU int) int {
	switch {
	case maxAPDU <= 206:
		return 10
	case maxAPDU <= 480:
		return 20
	}
	return 128
}

// batches splits reads into ReadPropertyMultiple requests whose answers fit
// the device's max-APDU without segmentation.
func batches(reads []Read, maxAPDU int) [][]Read {
	var out [][]Read
	budget := maxAPDU - rpmAckHeader
	limit := maxRPMProperties(maxAPDU)
	start, size := 0, 0
	for i, r := range reads {
		add := rpmPerProperty
		if i == start || reads[i-1].Object != r.Object {
			add += rpmPerObject
		}
		if i > start && (size+add > budget || i-start >= limit) {
			out = append(out, reads[start:i])
			start, size = i, rpmPerObject+rpmPerProperty
			continue
		}
		size += add
	}
	if start < len(reads) {
		out = append(out, reads[start:])
	}
	return out
}

// readScratch is a poll worker's buffers, reused from device to device:
// the reads, the access specs and the decoded answers. Results read with it
// alias its arrays until its next use.
type readScratch struct {
	reads []Read
	props []wire.PropertyRef
	specs []wire.ReadAccessSpec
	pvs   []wire.PropertyValue
	vals  []wire.Value
	res   []ReadResult
}

// specsOf groups consecutive reads of one object into access specs. The
// specs and their property lists take two allocations per request, not one
// per object, and none with scratch buffers (sc, may be nil).
func specsOf(reads []Read, sc *readScratch) []wire.ReadAccessSpec {
	objects := 0
	for i, r := range reads {
		if i == 0 || reads[i-1].Object != r.Object {
			objects++
		}
	}
	var specs []wire.ReadAccessSpec
	var props []wire.PropertyRef
	if sc != nil {
		specs, props = slices.Grow(sc.specs[:0], objects), slices.Grow(sc.props[:0], len(reads))[:len(reads)]
		sc.specs, sc.props = specs, props
	} else {
		specs, props = make([]wire.ReadAccessSpec, 0, objects), make([]wire.PropertyRef, len(reads))
	}
	for i, r := range reads {
		props[i] = r.Prop
		if n := len(specs); n > 0 && specs[n-1].Object == r.Object {
			specs[n-1].Props = props[i-len(specs[n-1].Props) : i+1 : i+1]
			continue
		}
		specs = append(specs, wire.ReadAccessSpec{Object: r.Object, Props: props[i : i+1 : i+1]})
	}
	return specs
}

// ReadMany reads every property, packed into ReadPropertyMultiple requests
// up to the device's max-APDU. A device that rejects ReadPropertyMultiple is
// remembered and read with ReadProperty from then on; a batch whose answer
// is too long is split in two. Results are in the order of reads.
func (c *Client) ReadMany(ctx context.Context, d *Device, reads []Read) []ReadResult {
	return c.readMany(ctx, d, reads, nil)
}

// readMany is ReadMany with the results and their values in the scratch
// buffers sc when it is not nil (valid until sc's next use).
func (c *Client) readMany(ctx context.Context, d *Device, reads []Read, sc *readScratch) []ReadResult {
	var out []ReadResult
	if sc != nil {
		out = slices.Grow(sc.res[:0], len(reads))[:len(reads)]
		clear(out)
		sc.res, sc.vals = out, sc.vals[:0]
	} else {
		out = make([]ReadResult, len(reads))
	}
	if d.noRPM.Load() {
		c.readEach(ctx, d, reads, out)
		return out
	}
	off := 0
	for _, b := range batches(reads, d.MaxAPDU) {
		c.readBatch(ctx, d, b, out[off:off+len(b)], sc)
		off += len(b)
	}
	return out
}

func (c *Client) readBatch(ctx context.Context, d *Device, reads []Read, out []ReadResult, sc *readScratch) {
	if d.noRPM.Load() {
		c.readEach(ctx, d, reads, out)
		return
	}
	res, err := c.readPropertyMultiple(ctx, d, specsOf(reads, sc), sc)
	switch {
	case err == nil:
		matchResults(reads, res, out)
	case unsupported(err):
		if !d.noRPM.Swap(true) {
			// Debug only: a Source logs the fallback once per device
			// (Source.noteFallback), naming its source and address.
			c.opts.Logger.Debug("bacnet: device does not serve ReadPropertyMultiple; using ReadProperty",
				"device", d.Instance, "address", d.Addr.String(), "err", err)
		}
		c.readEach(ctx, d, reads, out)
	case tooBig(err) && len(reads) > 1:
		h := len(reads) / 2
		c.readBatch(ctx, d, reads[:h], out[:h], sc)
		c.readBatch(ctx, d, reads[h:], out[h:], sc)
	case tooBig(err):
		c.readEach(ctx, d, reads, out)
	default:
		for i := range out {
			out[i].Err = err
		}
	}
}

// matchResults pairs answers with requests by object, property and index.
func matchResults(reads []Read, res []wire.PropertyValue, out []ReadResult) {
	type key struct {
		o wire.ObjectID
		p wire.PropertyRef
	}
	j := 0
	var idx map[key]int
	for i, r := range reads {
		// Answers normally come in request order; fall back to a lookup when not.
		if j < len(res) && res[j].Object == r.Object && res[j].PropertyRef == r.Prop {
			out[i] = resultOf(res[j])
			j++
			continue
		}
		if idx == nil {
			idx = make(map[key]int, len(res))
			for k, pv := range res {
				idx[key{pv.Object, pv.PropertyRef}] = k
			}
		}
		if k, ok := idx[key{r.Object, r.Prop}]; ok {
			out[i] = resultOf(res[k])
			continue
		}
		out[i].Err = fmt.Errorf("%s %s: missing from the read-property-multiple answer", r.Object, r.Prop.Prop)
	}
}

func resultOf(pv wire.PropertyValue) ReadResult {
	if pv.Err != nil {
		return ReadResult{Err: &ServiceError{Service: wire.ServiceReadPropertyMultiple, Class: pv.Err.Class, Code: pv.Err.Code}}
	}
	return ReadResult{Values: pv.Values}
}

// readEach reads properties one ReadProperty at a time (up to the device's
// outstanding limit in parallel).
func (c *Client) readEach(ctx context.Context, d *Device, reads []Read, out []ReadResult) {
	done := make(chan struct{}, len(reads))
	par := cap(d.sem)
	next := make(chan int)
	for w := 0; w < par; w++ {
		go func() {
			for i := range next {
				vs, err := c.ReadProperty(ctx, d, reads[i].Object, reads[i].Prop)
				out[i] = ReadResult{Values: vs, Err: err}
				done <- struct{}{}
			}
		}()
	}
	for i := range reads {
		next <- i
	}
	close(next)
	for range reads {
		<-done
	}
}
