package bacnet

import (
	"context"
	"fmt"

	"risewatch/collector/bacnet/wire"
)

// ReadProperty reads one property (ASHRAE 135 clause 15.5).
func (c *Client) ReadProperty(ctx context.Context, d *Device, obj wire.ObjectID, p wire.PropertyRef) ([]wire.Value, error) {
	data, err := c.confirmed(ctx, d, wire.ServiceReadProperty, func(b []byte, h wire.RequestHeader) []byte {
		return wire.AppendReadProperty(b, h, obj, p)
	})
	if err != nil {
		return nil, fmt.Errorf("device %d: read %s %s: %w", d.Instance, obj, p.Prop, err)
	}
	pv, err := wire.DecodeReadPropertyACK(data)
	if err != nil {
		return nil, fmt.Errorf("device %d: read %s %s: %w", d.Instance, obj, p.Prop, err)
	}
	if pv.Object != obj && obj.Instance != wire.WildcardInstance || pv.Prop != p.Prop {
		return nil, fmt.Errorf("device %d: read %s %s: answer is for %s %s", d.Instance, obj, p.Prop, pv.Object, pv.Prop)
	}
	return pv.Values, nil
}

// ReadPropertyMultiple reads several properties in one request (ASHRAE 135 clause 15.7).
func (c *Client) ReadPropertyMultiple(ctx context.Context, d *Device, specs []wire.ReadAccessSpec) ([]wire.PropertyValue, error) {
	return c.readPropertyMultiple(ctx, d, specs, nil)
}

// readPropertyMultiple is ReadPropertyMultiple decoding into the scratch
// buffers sc when it is not nil (the answers then alias sc.pvs, and their
// values sc.vals, which grows: values of earlier answers stay valid).
func (c *Client) readPropertyMultiple(ctx context.Context, d *Device, specs []wire.ReadAccessSpec, sc *readScratch) ([]wire.PropertyValue, error) {
	data, err := c.confirmed(ctx, d, wire.ServiceReadPropertyMultiple, func(b []byte, h wire.RequestHeader) []byte {
		return wire.AppendReadPropertyMultiple(b, h, specs)
	})
	if err != nil {
		return nil, fmt.Errorf("device %d: read-property-multiple: %w", d.Instance, err)
	}
	var res []wire.PropertyValue
	if sc != nil {
		var vals []wire.Value
		res, vals, err = wire.DecodeReadPropertyMultipleACKInto(sc.pvs[:0], sc.vals, data)
		sc.vals = vals
		if res != nil {
			sc.pvs = res
		}
	} else {
		res, err = wire.DecodeReadPropertyMultipleACK(data)
	}
	if err != nil {
		return nil, fmt.Errorf("device %d: read-property-multiple: %w", d.Instance, err)
	}
	return res, nil
}

// ReadRange reads part of a list property, normally a trend log's log-buffer (ASHRAE 135 clause 15.8).
func (c *Client) ReadRange(ctx context.Context, d *Device, q wire.ReadRangeRequest) (wire.ReadRangeACK, error) {
	data, err := c.confirmed(ctx, d, wire.ServiceReadRange, func(b []byte, h wire.RequestHeader) []byte {
		return wire.AppendReadRange(b, h, q)
	})
	if err != nil {
		return wire.ReadRangeACK{}, fmt.Errorf("device %d: read-range %s: %w", d.Instance, q.Object, err)
	}
	a, err := wire.DecodeReadRangeACK(data)
	if err != nil {
		return a, fmt.Errorf("device %d: read-range %s: %w", d.Instance, q.Object, err)
	}
	return a, nil
}
