package bacnet

import (
	"errors"
	"fmt"

	"risewatch/collector/bacnet/wire"
)

// ErrTimeout is returned when a device gave no answer after all retries.
var ErrTimeout = errors.New("bacnet: no answer from device")

// ErrClosed is returned after the client is closed.
var ErrClosed = errors.New("bacnet: client closed")

// ServiceError is a BACnet Error PDU answering a request.
type ServiceError struct {
	Service     wire.ConfirmedService
	Class, Code uint32
}

func (e *ServiceError) Error() string {
	return fmt.Sprintf("bacnet %s: error class %d code %d", e.Service, e.Class, e.Code)
}

// RejectError is a BACnet Reject PDU.
type RejectError struct{ Reason uint8 }

func (e *RejectError) Error() string {
	return fmt.Sprintf("bacnet: request rejected (reason %d)", e.Reason)
}

// AbortError is a BACnet Abort PDU.
type AbortError struct {
	Reason uint8
	Server bool
}

func (e *AbortError) Error() string {
	return fmt.Sprintf("bacnet: transaction aborted (reason %d)", e.Reason)
}

// tooBig reports whether err says the answer did not fit (split and retry).
func tooBig(err error) bool {
	var a *AbortError
	if errors.As(err, &a) {
		return a.Reason == wire.AbortSegmentationNotSupported || a.Reason == wire.AbortAPDUTooLong ||
			a.Reason == wire.AbortBufferOverflow
	}
	var r *RejectError
	if errors.As(err, &r) {
		return r.Reason == wire.RejectBufferOverflow
	}
	return false
}

// unsupported reports whether err says the device does not implement the service.
func unsupported(err error) bool {
	var r *RejectError
	if errors.As(err, &r) {
		return true // any Reject of a well-formed request: the device cannot parse or serve it
	}
	var s *ServiceError
	if errors.As(err, &s) {
		return s.Class == wire.ErrClassServices && (s.Code == wire.ErrCodeServiceRequestDenied || s.Code == wire.ErrCodeOptionalNotSupported)
	}
	return false
}
