package wire

import (
	"fmt"
	"strconv"
	"strings"
)

// ObjectType is a BACnet object type (ASHRAE 135 clause 21, BACnetObjectType).
type ObjectType uint16

// Object types the reader uses; numbers as in bacnet-stack bacenum.h and the
// @bacnet-js/client ObjectType enum.
const (
	ObjectAnalogInput       ObjectType = 0
	ObjectAnalogOutput      ObjectType = 1
	ObjectAnalogValue       ObjectType = 2
	ObjectBinaryInput       ObjectType = 3
	ObjectBinaryOutput      ObjectType = 4
	ObjectBinaryValue       ObjectType = 5
	ObjectCalendar          ObjectType = 6
	ObjectDevice            ObjectType = 8
	ObjectMultiStateInput   ObjectType = 13
	ObjectMultiStateOutput  ObjectType = 14
	ObjectNotificationClass ObjectType = 15
	ObjectSchedule          ObjectType = 17
	ObjectMultiStateValue   ObjectType = 19
	ObjectTrendLog          ObjectType = 20
	ObjectTrendLogMultiple  ObjectType = 27
)

var objectTypeNames = map[ObjectType]string{
	ObjectAnalogInput: "analog-input", ObjectAnalogOutput: "analog-output", ObjectAnalogValue: "analog-value",
	ObjectBinaryInput: "binary-input", ObjectBinaryOutput: "binary-output", ObjectBinaryValue: "binary-value",
	ObjectCalendar: "calendar", ObjectDevice: "device", ObjectMultiStateInput: "multi-state-input",
	ObjectMultiStateOutput: "multi-state-output", ObjectNotificationClass: "notification-class",
	ObjectSchedule: "schedule", ObjectMultiStateValue: "multi-state-value", ObjectTrendLog: "trend-log",
	ObjectTrendLogMultiple: "trend-log-multiple",
}

func (t ObjectType) String() string {
	if s, ok := objectTypeNames[t]; ok {
		return s
	}
	return "object-type-" + strconv.Itoa(int(t))
}

// IsBinary reports whether present-value is BACnetBinaryPV (0 inactive, 1 active).
func (t ObjectType) IsBinary() bool {
	return t == ObjectBinaryInput || t == ObjectBinaryOutput || t == ObjectBinaryValue
}

// ParseObjectType accepts an ASHRAE 135 name ("analog-input"), its common
// short form ("AI") or a number.
func ParseObjectType(s string) (ObjectType, error) {
	k := strings.ToLower(strings.TrimSpace(s))
	for t, n := range objectTypeNames {
		if n == k {
			return t, nil
		}
	}
	short := map[string]ObjectType{"ai": ObjectAnalogInput, "ao": ObjectAnalogOutput, "av": ObjectAnalogValue,
		"bi": ObjectBinaryInput, "bo": ObjectBinaryOutput, "bv": ObjectBinaryValue, "msi": ObjectMultiStateInput,
		"mso": ObjectMultiStateOutput, "msv": ObjectMultiStateValue, "tl": ObjectTrendLog, "dev": ObjectDevice}
	if t, ok := short[k]; ok {
		return t, nil
	}
	if n, err := strconv.ParseUint(k, 10, 10); err == nil {
		return ObjectType(n), nil
	}
	return 0, fmt.Errorf("bacnet: unknown object type %q", s)
}

// PropertyID is a BACnet property identifier (BACnetPropertyIdentifier).
type PropertyID uint32

// Property identifiers the reader uses (bacnet-stack bacenum.h, @bacnet-js/client PropertyIdentifier).
const (
	PropActiveText            PropertyID = 4
	PropAll                   PropertyID = 8
	PropAPDUSegmentTimeout    PropertyID = 10
	PropAPDUTimeout           PropertyID = 11
	PropDescription           PropertyID = 28
	PropEventState            PropertyID = 36
	PropInactiveText          PropertyID = 46
	PropMaxAPDULength         PropertyID = 62
	PropNumberOfAPDURetries   PropertyID = 73
	PropObjectIdentifier      PropertyID = 75
	PropObjectList            PropertyID = 76
	PropObjectName            PropertyID = 77
	PropObjectType            PropertyID = 79
	PropOptional              PropertyID = 80
	PropOutOfService          PropertyID = 81
	PropPresentValue          PropertyID = 85
	PropProtocolServices      PropertyID = 97
	PropReliability           PropertyID = 103
	PropRequired              PropertyID = 105
	PropSegmentationSupported PropertyID = 107
	PropStatusFlags           PropertyID = 111
	PropSystemStatus          PropertyID = 112
	PropUnits                 PropertyID = 117
	PropVendorIdentifier      PropertyID = 120
	PropBufferSize            PropertyID = 126
	PropLogBuffer             PropertyID = 131
	PropLogDeviceObjectProp   PropertyID = 132
	PropEnable                PropertyID = 133
	PropLogInterval           PropertyID = 134
	PropProtocolRevision      PropertyID = 139
	PropRecordCount           PropertyID = 141
	PropStartTime             PropertyID = 142
	PropStopTime              PropertyID = 143
	PropStopWhenFull          PropertyID = 144
	PropTotalRecordCount      PropertyID = 145
	PropLoggingType           PropertyID = 197
	PropPropertyList          PropertyID = 371
)

var propertyNames = map[PropertyID]string{
	PropActiveText: "active-text", PropAll: "all", PropAPDUSegmentTimeout: "apdu-segment-timeout",
	PropAPDUTimeout: "apdu-timeout", PropDescription: "description", PropEventState: "event-state",
	PropInactiveText: "inactive-text", PropMaxAPDULength: "max-apdu-length-accepted",
	PropNumberOfAPDURetries: "number-of-apdu-retries", PropObjectIdentifier: "object-identifier",
	PropObjectList: "object-list", PropObjectName: "object-name", PropObjectType: "object-type",
	PropOptional: "optional", PropOutOfService: "out-of-service", PropPresentValue: "present-value",
	PropProtocolServices: "protocol-services-supported", PropReliability: "reliability",
	PropRequired: "required", PropSegmentationSupported: "segmentation-supported",
	PropStatusFlags: "status-flags", PropSystemStatus: "system-status", PropUnits: "units",
	PropVendorIdentifier: "vendor-identifier", PropBufferSize: "buffer-size", PropLogBuffer: "log-buffer",
	PropLogDeviceObjectProp: "log-device-object-property", PropEnable: "enable", PropLogInterval: "log-interval",
	PropProtocolRevision: "protocol-revision", PropRecordCount: "record-count", PropStartTime: "start-time",
	PropStopTime: "stop-time", PropStopWhenFull: "stop-when-full", PropTotalRecordCount: "total-record-count",
	PropLoggingType: "logging-type", PropPropertyList: "property-list",
}

func (p PropertyID) String() string {
	if s, ok := propertyNames[p]; ok {
		return s
	}
	return "property-" + strconv.Itoa(int(p))
}

// ParsePropertyID accepts an ASHRAE 135 property name or a number; "" means present-value.
func ParsePropertyID(s string) (PropertyID, error) {
	k := strings.ToLower(strings.TrimSpace(s))
	if k == "" {
		return PropPresentValue, nil
	}
	for p, n := range propertyNames {
		if n == k {
			return p, nil
		}
	}
	if n, err := strconv.ParseUint(k, 10, 22); err == nil {
		return PropertyID(n), nil
	}
	return 0, fmt.Errorf("bacnet: unknown property %q", s)
}

// Segmentation is the segmentation-supported enumeration (BACnetSegmentation).
type Segmentation uint8

// Segmentation values.
const (
	SegmentedBoth     Segmentation = 0
	SegmentedTransmit Segmentation = 1
	SegmentedReceive  Segmentation = 2
	NoSegmentation    Segmentation = 3
)

// CanTransmit reports whether a device with this support can send segmented answers.
func (s Segmentation) CanTransmit() bool { return s == SegmentedBoth || s == SegmentedTransmit }

func (s Segmentation) String() string {
	switch s {
	case SegmentedBoth:
		return "segmented-both"
	case SegmentedTransmit:
		return "segmented-transmit"
	case SegmentedReceive:
		return "segmented-receive"
	case NoSegmentation:
		return "no-segmentation"
	}
	return "segmentation-" + strconv.Itoa(int(s))
}

// Status-flags bits (BACnetStatusFlags).
const (
	StatusInAlarm = iota
	StatusFault
	StatusOverridden
	StatusOutOfService
)

// Error classes (BACnetErrorClass).
const (
	ErrClassDevice   = 0
	ErrClassObject   = 1
	ErrClassProperty = 2
	ErrClassServices = 5
)

// Error codes (BACnetErrorCode) the reader reacts to.
const (
	ErrCodeOther                  = 0
	ErrCodeReadAccessDenied       = 27
	ErrCodeServiceRequestDenied   = 29
	ErrCodeUnknownObject          = 31
	ErrCodeUnknownProperty        = 32
	ErrCodeInvalidArrayIndex      = 42
	ErrCodeOptionalNotSupported   = 45
	ErrCodeAbortSegmentationNotSu = 54
)

// Reject reasons (BACnetRejectReason).
const (
	RejectOther                = 0
	RejectBufferOverflow       = 1
	RejectInvalidTag           = 4
	RejectMissingParameter     = 5
	RejectTooManyArguments     = 7
	RejectUnrecognizedService  = 9
	RejectParameterOutOfRange  = 6
	RejectInconsistentParams   = 2
	RejectInvalidParameterType = 3
)

// Abort reasons (BACnetAbortReason).
const (
	AbortOther                    = 0
	AbortBufferOverflow           = 1
	AbortInvalidAPDUInThisState   = 2
	AbortSegmentationNotSupported = 4
	AbortWindowSizeOutOfRange     = 7
	AbortApplicationExceededReply = 8
	AbortOutOfResources           = 9
	AbortTSMTimeout               = 10
	AbortAPDUTooLong              = 11
)
