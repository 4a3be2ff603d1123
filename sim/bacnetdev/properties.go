package bacnetdev

import (
	"risewatch/collector/bacnet/wire"
)

var (
	errUnknownObject   = &wire.PropertyError{Class: wire.ErrClassObject, Code: wire.ErrCodeUnknownObject}
	errUnknownProperty = &wire.PropertyError{Class: wire.ErrClassProperty, Code: wire.ErrCodeUnknownProperty}
	errBadIndex        = &wire.PropertyError{Class: wire.ErrClassProperty, Code: wire.ErrCodeInvalidArrayIndex}
	errNotArray        = &wire.PropertyError{Class: wire.ErrClassProperty, Code: 50} // property-is-not-an-array
)

// Properties each object kind answers for "all" (a subset of the required ones).
var (
	deviceProps = []wire.PropertyID{wire.PropObjectIdentifier, wire.PropObjectName, wire.PropObjectType,
		wire.PropSystemStatus, wire.PropVendorIdentifier, wire.PropProtocolRevision, wire.PropMaxAPDULength,
		wire.PropSegmentationSupported, wire.PropAPDUTimeout, wire.PropNumberOfAPDURetries}
	pointProps = []wire.PropertyID{wire.PropObjectIdentifier, wire.PropObjectName, wire.PropObjectType,
		wire.PropPresentValue, wire.PropDescription, wire.PropStatusFlags, wire.PropEventState,
		wire.PropOutOfService, wire.PropUnits}
	logProps = []wire.PropertyID{wire.PropObjectIdentifier, wire.PropObjectName, wire.PropObjectType,
		wire.PropEnable, wire.PropStopWhenFull, wire.PropBufferSize, wire.PropRecordCount,
		wire.PropTotalRecordCount, wire.PropLogInterval, wire.PropLoggingType, wire.PropStatusFlags}
)

// propertyList names the properties "all" expands to for obj.
func (d *Device) propertyList(obj wire.ObjectID) ([]wire.PropertyID, *wire.PropertyError) {
	d.mu.Lock()
	defer d.mu.Unlock()
	switch {
	case obj.Type == wire.ObjectDevice && (obj.Instance == d.cfg.Instance || obj.Instance == wire.WildcardInstance):
		return deviceProps, nil
	case obj.Type == wire.ObjectTrendLog:
		if d.logs[obj.Instance] != nil {
			return logProps, nil
		}
	default:
		if o := d.objects[obj]; o != nil {
			if obj.Type.IsBinary() {
				return pointProps[:len(pointProps)-1], nil // binary objects have no units
			}
			return pointProps, nil
		}
	}
	return nil, errUnknownObject
}

// read answers one property of one object.
func (d *Device) read(obj wire.ObjectID, p wire.PropertyRef) ([]wire.Value, *wire.PropertyError) {
	d.mu.Lock()
	defer d.mu.Unlock()
	var vs []wire.Value
	var perr *wire.PropertyError
	switch {
	case obj.Type == wire.ObjectDevice && (obj.Instance == d.cfg.Instance || obj.Instance == wire.WildcardInstance):
		vs, perr = d.readDevice(p)
	case obj.Type == wire.ObjectTrendLog:
		l := d.logs[obj.Instance]
		if l == nil {
			return nil, errUnknownObject
		}
		vs, perr = readTrendLog(obj, l, p.Prop)
	default:
		o := d.objects[obj]
		if o == nil {
			return nil, errUnknownObject
		}
		vs, perr = readPoint(o, p.Prop)
	}
	if perr != nil || p.Index == wire.NoIndex || p.Prop == wire.PropObjectList {
		return vs, perr
	}
	return nil, errNotArray
}

func (d *Device) readDevice(p wire.PropertyRef) ([]wire.Value, *wire.PropertyError) {
	id := wire.ObjectID{Type: wire.ObjectDevice, Instance: d.cfg.Instance}
	switch p.Prop {
	case wire.PropObjectIdentifier:
		return []wire.Value{wire.ObjectIDValue(id)}, nil
	case wire.PropObjectName:
		return []wire.Value{wire.CharString(d.cfg.Name)}, nil
	case wire.PropObjectType:
		return []wire.Value{wire.Enum(uint64(wire.ObjectDevice))}, nil
	case wire.PropSystemStatus:
		return []wire.Value{wire.Enum(0)}, nil // operational
	case wire.PropVendorIdentifier:
		return []wire.Value{wire.Unsigned(uint64(d.cfg.Vendor))}, nil
	case wire.PropProtocolRevision:
		return []wire.Value{wire.Unsigned(14)}, nil
	case wire.PropMaxAPDULength:
		return []wire.Value{wire.Unsigned(uint64(d.cfg.MaxAPDU))}, nil
	case wire.PropSegmentationSupported:
		return []wire.Value{wire.Enum(uint64(d.cfg.Segmentation))}, nil
	case wire.PropAPDUTimeout:
		return []wire.Value{wire.Unsigned(3000)}, nil
	case wire.PropNumberOfAPDURetries:
		return []wire.Value{wire.Unsigned(3)}, nil
	case wire.PropObjectList:
		list := d.objectList()
		switch {
		case p.Index == wire.NoIndex:
			vs := make([]wire.Value, len(list))
			for i, o := range list {
				vs[i] = wire.ObjectIDValue(o)
			}
			return vs, nil
		case p.Index == 0:
			return []wire.Value{wire.Unsigned(uint64(len(list)))}, nil
		case int(p.Index) <= len(list):
			return []wire.Value{wire.ObjectIDValue(list[p.Index-1])}, nil
		}
		return nil, errBadIndex
	}
	return nil, errUnknownProperty
}

func flagsValue(f [4]bool) wire.Value {
	return wire.BitsValue(wire.NewBitString(f[0], f[1], f[2], f[3]))
}

func readPoint(o *Object, p wire.PropertyID) ([]wire.Value, *wire.PropertyError) {
	binary := o.ID.Type.IsBinary()
	switch p {
	case wire.PropObjectIdentifier:
		return []wire.Value{wire.ObjectIDValue(o.ID)}, nil
	case wire.PropObjectName:
		return []wire.Value{wire.CharString(o.Name)}, nil
	case wire.PropObjectType:
		return []wire.Value{wire.Enum(uint64(o.ID.Type))}, nil
	case wire.PropPresentValue:
		if binary {
			v := uint64(0)
			if o.Value != 0 {
				v = 1
			}
			return []wire.Value{wire.Enum(v)}, nil
		}
		return []wire.Value{wire.Real(o.Value)}, nil
	case wire.PropDescription:
		return []wire.Value{wire.CharString(o.Description)}, nil
	case wire.PropStatusFlags:
		return []wire.Value{flagsValue(o.Flags)}, nil
	case wire.PropEventState:
		return []wire.Value{wire.Enum(0)}, nil
	case wire.PropOutOfService:
		b := wire.Value{Tag: wire.TagBoolean}
		if o.Flags[wire.StatusOutOfService] {
			b.U = 1
		}
		return []wire.Value{b}, nil
	case wire.PropUnits:
		if !binary {
			return []wire.Value{wire.Enum(uint64(o.Units))}, nil
		}
	}
	return nil, errUnknownProperty
}

func readTrendLog(id wire.ObjectID, l *trendLog, p wire.PropertyID) ([]wire.Value, *wire.PropertyError) {
	switch p {
	case wire.PropObjectIdentifier:
		return []wire.Value{wire.ObjectIDValue(id)}, nil
	case wire.PropObjectName:
		return []wire.Value{wire.CharString(l.cfg.Name)}, nil
	case wire.PropObjectType:
		return []wire.Value{wire.Enum(uint64(wire.ObjectTrendLog))}, nil
	case wire.PropEnable:
		return []wire.Value{{Tag: wire.TagBoolean, U: 1}}, nil
	case wire.PropStopWhenFull:
		return []wire.Value{{Tag: wire.TagBoolean}}, nil
	case wire.PropBufferSize:
		return []wire.Value{wire.Unsigned(uint64(l.cfg.BufferSize))}, nil
	case wire.PropRecordCount:
		return []wire.Value{wire.Unsigned(uint64(l.count()))}, nil
	case wire.PropTotalRecordCount:
		return []wire.Value{wire.Unsigned(uint64(l.total))}, nil
	case wire.PropLogInterval:
		return []wire.Value{wire.Unsigned(uint64(l.cfg.Interval / (10 * 1e6)))}, nil // hundredths of a second
	case wire.PropLoggingType:
		return []wire.Value{wire.Enum(0)}, nil // polled
	case wire.PropStatusFlags:
		return []wire.Value{flagsValue([4]bool{})}, nil
	}
	return nil, errUnknownProperty
}
