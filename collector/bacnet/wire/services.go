package wire

import (
	"errors"
	"fmt"
	"strconv"
)

// ConfirmedService is a BACnetConfirmedServiceChoice.
type ConfirmedService uint8

// The confirmed services this package can encode as requests. risewatch is
// read-only toward the building: no other confirmed service number is
// defined here, and the request encoders below are the only callers of the
// unexported header encoder.
const (
	ServiceReadProperty         ConfirmedService = 12
	ServiceReadPropertyMultiple ConfirmedService = 14
	ServiceReadRange            ConfirmedService = 26
)

// ServiceInfo names one service a request encoder exists for.
type ServiceInfo struct {
	Choice ConfirmedService
	Name   string
}

// ConfirmedServices is the encoder's service table: every confirmed service
// for which a request encoder exists. All of them only read.
func ConfirmedServices() []ServiceInfo {
	return []ServiceInfo{
		{ServiceReadProperty, "readProperty"},
		{ServiceReadPropertyMultiple, "readPropertyMultiple"},
		{ServiceReadRange, "readRange"},
	}
}

func (s ConfirmedService) String() string {
	for _, i := range ConfirmedServices() {
		if i.Choice == s {
			return i.Name
		}
	}
	return "confirmed-service-" + strconv.Itoa(int(s))
}

// UnconfirmedService is a BACnetUnconfirmedServiceChoice.
type UnconfirmedService uint8

// Unconfirmed services used for discovery.
const (
	ServiceIAm   UnconfirmedService = 0
	ServiceWhoIs UnconfirmedService = 8
)

// NoIndex means "no array index" (the whole property).
const NoIndex = ^uint32(0)

// AppendWhoIs appends a Who-Is APDU; low < 0 asks every device, otherwise
// devices low..high (ASHRAE 135 clause 16.10).
func AppendWhoIs(b []byte, low, high int) []byte {
	b = AppendUnconfirmedHeader(b, ServiceWhoIs)
	if low >= 0 {
		b = AppendContextUnsigned(b, 0, uint64(low))
		b = AppendContextUnsigned(b, 1, uint64(high))
	}
	return b
}

// DecodeWhoIs decodes Who-Is service data; ok is false when no range is given.
func DecodeWhoIs(data []byte) (low, high uint32, ok bool, err error) {
	if len(data) == 0 {
		return 0, 0, false, nil
	}
	r := NewReader(data)
	l, err := r.ContextUnsigned(0)
	if err != nil {
		return 0, 0, false, fmt.Errorf("who-is: low limit: %w", err)
	}
	h, err := r.ContextUnsigned(1)
	if err != nil {
		return 0, 0, false, fmt.Errorf("who-is: high limit: %w", err)
	}
	if l > WildcardInstance || h > WildcardInstance {
		return 0, 0, false, errors.New("who-is: limit above 4194303")
	}
	return uint32(l), uint32(h), true, nil
}

// IAm is the body of an I-Am (ASHRAE 135 clause 16.1).
type IAm struct {
	Device       uint32
	MaxAPDU      int
	Segmentation Segmentation
	Vendor       uint16
}

// AppendIAm appends an I-Am APDU.
func AppendIAm(b []byte, i IAm) []byte {
	b = AppendUnconfirmedHeader(b, ServiceIAm)
	b = AppendObjectID(b, ObjectID{Type: ObjectDevice, Instance: i.Device})
	b = AppendUnsigned(b, uint64(i.MaxAPDU))
	b = AppendEnumerated(b, uint64(i.Segmentation))
	return AppendUnsigned(b, uint64(i.Vendor))
}

// DecodeIAm decodes I-Am service data.
func DecodeIAm(data []byte) (IAm, error) {
	r := NewReader(data)
	var i IAm
	v, err := r.App()
	if err != nil || v.Tag != TagObjectID || v.Obj.Type != ObjectDevice {
		return i, fmt.Errorf("i-am: device identifier: %v", orTag(err, v))
	}
	i.Device = v.Obj.Instance
	if v, err = r.App(); err != nil || v.Tag != TagUnsigned {
		return i, fmt.Errorf("i-am: max-APDU: %v", orTag(err, v))
	}
	i.MaxAPDU = int(min(v.U, 65535))
	if v, err = r.App(); err != nil || v.Tag != TagEnumerated || v.U > 3 {
		return i, fmt.Errorf("i-am: segmentation: %v", orTag(err, v))
	}
	i.Segmentation = Segmentation(v.U)
	if v, err = r.App(); err != nil || v.Tag != TagUnsigned || v.U > 65535 {
		return i, fmt.Errorf("i-am: vendor: %v", orTag(err, v))
	}
	i.Vendor = uint16(v.U)
	return i, nil
}

func orTag(err error, v Value) any {
	if err != nil {
		return err
	}
	return fmt.Sprintf("unexpected value %s (application tag %d)", v, v.Tag)
}

// PropertyRef names one property (and optional array index) of an object.
type PropertyRef struct {
	Prop  PropertyID
	Index uint32 // NoIndex for the whole property
}

// AppendReadProperty appends a ReadProperty request APDU (ASHRAE 135 clause 15.5).
func AppendReadProperty(b []byte, h RequestHeader, obj ObjectID, p PropertyRef) []byte {
	b = appendConfirmedHeader(b, h, ServiceReadProperty)
	b = AppendContextObjectID(b, 0, obj)
	b = AppendContextUnsigned(b, 1, uint64(p.Prop))
	if p.Index != NoIndex {
		b = AppendContextUnsigned(b, 2, uint64(p.Index))
	}
	return b
}

// DecodeReadProperty decodes ReadProperty request data.
func DecodeReadProperty(data []byte) (ObjectID, PropertyRef, error) {
	r := NewReader(data)
	obj, err := r.ContextObjectID(0)
	if err != nil {
		return obj, PropertyRef{}, fmt.Errorf("read-property: object: %w", err)
	}
	p, err := readPropRef(r, 1, 2)
	if err != nil {
		return obj, p, fmt.Errorf("read-property: %w", err)
	}
	if !r.Done() {
		return obj, p, errors.New("read-property: trailing data")
	}
	return obj, p, nil
}

func readPropRef(r *Reader, propTag, idxTag uint8) (PropertyRef, error) {
	pv, err := r.ContextUnsigned(propTag)
	if err != nil {
		return PropertyRef{}, fmt.Errorf("property: %w", err)
	}
	if pv > 0x3FFFFF {
		return PropertyRef{}, fmt.Errorf("property %d out of range", pv)
	}
	p := PropertyRef{Prop: PropertyID(pv), Index: NoIndex}
	if r.IsContext(idxTag) {
		iv, err := r.ContextUnsigned(idxTag)
		if err != nil {
			return p, fmt.Errorf("array index: %w", err)
		}
		if iv >= uint64(NoIndex) {
			return p, fmt.Errorf("array index %d out of range", iv)
		}
		p.Index = uint32(iv)
	}
	return p, nil
}

func appendPropRef(b []byte, propTag, idxTag uint8, p PropertyRef) []byte {
	b = AppendContextUnsigned(b, propTag, uint64(p.Prop))
	if p.Index != NoIndex {
		b = AppendContextUnsigned(b, idxTag, uint64(p.Index))
	}
	return b
}

// PropertyValue is one property read result: values, or an error.
type PropertyValue struct {
	Object ObjectID
	PropertyRef
	Values []Value
	Err    *PropertyError // set when the device answered with an error for this property
}

// PropertyError is an error-class / error-code pair for one property.
type PropertyError struct{ Class, Code uint32 }

func (e *PropertyError) Error() string {
	return fmt.Sprintf("bacnet error class %d code %d", e.Class, e.Code)
}

// AppendReadPropertyACK appends a ReadProperty Complex-ACK body (without the APDU header).
func AppendReadPropertyACK(b []byte, obj ObjectID, p PropertyRef, values []Value) []byte {
	b = AppendContextObjectID(b, 0, obj)
	b = appendPropRef(b, 1, 2, p)
	b = AppendOpening(b, 3)
	for _, v := range values {
		b = AppendValue(b, v)
	}
	return AppendClosing(b, 3)
}

// DecodeReadPropertyACK decodes ReadProperty Complex-ACK data.
func DecodeReadPropertyACK(data []byte) (PropertyValue, error) {
	r := NewReader(data)
	var pv PropertyValue
	var err error
	if pv.Object, err = r.ContextObjectID(0); err != nil {
		return pv, fmt.Errorf("read-property ack: object: %w", err)
	}
	if pv.PropertyRef, err = readPropRef(r, 1, 2); err != nil {
		return pv, fmt.Errorf("read-property ack: %w", err)
	}
	if err := r.Open(3); err != nil {
		return pv, fmt.Errorf("read-property ack: value: %w", err)
	}
	if pv.Values, err = r.ValuesUntil(3); err != nil {
		return pv, fmt.Errorf("read-property ack: value: %w", err)
	}
	return pv, nil
}
