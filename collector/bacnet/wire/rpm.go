package wire

import (
	"errors"
	"fmt"
)

// ReadAccessSpec asks for several properties of one object (ASHRAE 135 clause 15.7).
type ReadAccessSpec struct {
	Object ObjectID
	Props  []PropertyRef
}

// AppendReadPropertyMultiple appends a ReadPropertyMultiple request APDU.
func AppendReadPropertyMultiple(b []byte, h RequestHeader, specs []ReadAccessSpec) []byte {
	b = appendConfirmedHeader(b, h, ServiceReadPropertyMultiple)
	for _, s := range specs {
		b = AppendContextObjectID(b, 0, s.Object)
		b = AppendOpening(b, 1)
		for _, p := range s.Props {
			b = appendPropRef(b, 0, 1, p)
		}
		b = AppendClosing(b, 1)
	}
	return b
}

// maxRPMItems bounds how many object specifications or properties one
// decoded request may hold (a full 1476-octet APDU holds fewer).
const maxRPMItems = 1024

// DecodeReadPropertyMultiple decodes ReadPropertyMultiple request data.
func DecodeReadPropertyMultiple(data []byte) ([]ReadAccessSpec, error) {
	r := NewReader(data)
	var specs []ReadAccessSpec
	n := 0
	for !r.Done() {
		var s ReadAccessSpec
		var err error
		if s.Object, err = r.ContextObjectID(0); err != nil {
			return nil, fmt.Errorf("read-property-multiple: object: %w", err)
		}
		if err := r.Open(1); err != nil {
			return nil, fmt.Errorf("read-property-multiple: %s: %w", s.Object, err)
		}
		for !r.IsClosing(1) {
			if r.Done() {
				return nil, fmt.Errorf("read-property-multiple: %s: %w", s.Object, ErrShort)
			}
			p, err := readPropRef(r, 0, 1)
			if err != nil {
				return nil, fmt.Errorf("read-property-multiple: %s: %w", s.Object, err)
			}
			if n++; n > maxRPMItems {
				return nil, errors.New("read-property-multiple: too many properties")
			}
			s.Props = append(s.Props, p)
		}
		_ = r.Close(1)
		if len(s.Props) == 0 {
			return nil, fmt.Errorf("read-property-multiple: %s: empty property list", s.Object)
		}
		specs = append(specs, s)
	}
	if len(specs) == 0 {
		return nil, errors.New("read-property-multiple: no object specified")
	}
	return specs, nil
}

// AppendReadPropertyMultipleACK appends the Complex-ACK body for results,
// grouped by consecutive runs of the same object.
func AppendReadPropertyMultipleACK(b []byte, results []PropertyValue) []byte {
	for i := 0; i < len(results); {
		obj := results[i].Object
		b = AppendContextObjectID(b, 0, obj)
		b = AppendOpening(b, 1)
		for ; i < len(results) && results[i].Object == obj; i++ {
			b = appendRPMResult(b, results[i])
		}
		b = AppendClosing(b, 1)
	}
	return b
}

func appendRPMResult(b []byte, pv PropertyValue) []byte {
	b = appendPropRef(b, 2, 3, pv.PropertyRef)
	if pv.Err != nil {
		b = AppendOpening(b, 5)
		b = AppendEnumerated(b, uint64(pv.Err.Class))
		b = AppendEnumerated(b, uint64(pv.Err.Code))
		return AppendClosing(b, 5)
	}
	b = AppendOpening(b, 4)
	for _, v := range pv.Values {
		b = AppendValue(b, v)
	}
	return AppendClosing(b, 4)
}

// RPMResultLen is the encoded size of one result inside an RPM ACK, for
// servers that must cut an answer to a max-APDU.
func RPMResultLen(pv PropertyValue) int { return len(appendRPMResult(nil, pv)) }

// DecodeReadPropertyMultipleACK decodes ReadPropertyMultiple Complex-ACK data
// into one PropertyValue per property, in answer order.
func DecodeReadPropertyMultipleACK(data []byte) ([]PropertyValue, error) {
	// A result takes at least 9 octets (property identifier, opening and
	// closing tags, a 5-octet REAL), so these capacities hold a poll's
	// answer without growing; the values share one array.
	out, _, err := DecodeReadPropertyMultipleACKInto(make([]PropertyValue, 0, len(data)/9+1), make([]Value, 0, len(data)/9+1), data)
	return out, err
}

// DecodeReadPropertyMultipleACKInto is DecodeReadPropertyMultipleACK appending
// the results to out and their values to arena (each result's Values is a
// full slice of arena), for a caller that reuses both between answers. It
// returns the extended slices; on error, out is nil.
func DecodeReadPropertyMultipleACKInto(out []PropertyValue, arena []Value, data []byte) ([]PropertyValue, []Value, error) {
	r := NewReader(data)
	first := len(out)
	fail := func(err error) ([]PropertyValue, []Value, error) { return nil, arena, err }
	for !r.Done() {
		obj, err := r.ContextObjectID(0)
		if err != nil {
			return fail(fmt.Errorf("read-property-multiple ack: object: %w", err))
		}
		if err := r.Open(1); err != nil {
			return fail(fmt.Errorf("read-property-multiple ack: %s: %w", obj, err))
		}
		for !r.IsClosing(1) {
			if r.Done() {
				return fail(fmt.Errorf("read-property-multiple ack: %s: %w", obj, ErrShort))
			}
			pv := PropertyValue{Object: obj}
			if pv.PropertyRef, err = readPropRef(r, 2, 3); err != nil {
				return fail(fmt.Errorf("read-property-multiple ack: %s: %w", obj, err))
			}
			switch {
			case r.IsOpening(4):
				_ = r.Open(4)
				start := len(arena)
				if arena, err = r.appendValuesUntil(arena, 4); err != nil {
					return fail(fmt.Errorf("read-property-multiple ack: %s %s: %w", obj, pv.Prop, err))
				}
				if len(arena) > start {
					pv.Values = arena[start:len(arena):len(arena)]
				}
			case r.IsOpening(5):
				_ = r.Open(5)
				c, err1 := r.AppEnumerated()
				k, err2 := r.AppEnumerated()
				if err := errors.Join(err1, err2, r.Close(5)); err != nil {
					return fail(fmt.Errorf("read-property-multiple ack: %s %s: error: %w", obj, pv.Prop, err))
				}
				pv.Err = &PropertyError{Class: uint32(c), Code: uint32(k)}
			default:
				return fail(fmt.Errorf("read-property-multiple ack: %s %s: neither value nor error", obj, pv.Prop))
			}
			if len(out)-first >= maxRPMItems {
				return fail(errors.New("read-property-multiple ack: too many results"))
			}
			out = append(out, pv)
		}
		_ = r.Close(1)
	}
	return out, arena, nil
}
