package bacnet

import (
	"context"
	"errors"
	"fmt"
	"net"
	"sync"
	"time"

	"risewatch/collector/bacnet/wire"
)

// FailureKind classifies a failed device read. The set is closed so a
// caller can use it as a metric label.
type FailureKind string

// Failure kinds.
const (
	FailTimeout     FailureKind = "timeout"      // no answer after every retry
	FailError       FailureKind = "bacnet-error" // Error PDU, or an error in a ReadPropertyMultiple answer
	FailReject      FailureKind = "reject"       // Reject PDU
	FailAbort       FailureKind = "abort"        // Abort PDU
	FailMalformed   FailureKind = "malformed"    // an answer that could not be decoded or used
	FailUnreachable FailureKind = "unreachable"  // the request could not be sent
	FailNotFound    FailureKind = "notfound"     // the device was never found
)

// ReadFailure is one device's failed read in one poll, after retries.
type ReadFailure struct {
	Source  string
	Device  uint32
	Address string // "" when the device was never found
	Kind    FailureKind
	Reason  string // class/code, reject or abort reason, or what was malformed
	Points  int    // points of the device that got no value
	Took    time.Duration
	Err     error // the first error (nil for notfound)
}

// rejectReasons names BACnetRejectReason values (ASHRAE 135 clause 21).
var rejectReasons = map[uint8]string{
	wire.RejectOther: "other", wire.RejectBufferOverflow: "buffer-overflow", wire.RejectInconsistentParams: "inconsistent-parameters",
	wire.RejectInvalidParameterType: "invalid-parameter-data-type", wire.RejectInvalidTag: "invalid-tag",
	wire.RejectMissingParameter: "missing-required-parameter", wire.RejectParameterOutOfRange: "parameter-out-of-range",
	wire.RejectTooManyArguments: "too-many-arguments", 8: "undefined-enumeration", wire.RejectUnrecognizedService: "unrecognized-service",
}

// abortReasons names BACnetAbortReason values (ASHRAE 135 clause 21).
var abortReasons = map[uint8]string{
	wire.AbortOther: "other", wire.AbortBufferOverflow: "buffer-overflow", wire.AbortInvalidAPDUInThisState: "invalid-apdu-in-this-state",
	3: "preempted-by-higher-priority-task", wire.AbortSegmentationNotSupported: "segmentation-not-supported",
	5: "security-error", 6: "insufficient-security", wire.AbortWindowSizeOutOfRange: "window-size-out-of-range",
	wire.AbortApplicationExceededReply: "application-exceeded-reply-time", wire.AbortOutOfResources: "out-of-resources",
	wire.AbortTSMTimeout: "tsm-timeout", wire.AbortAPDUTooLong: "apdu-too-long",
}

// errorClasses names the BACnetErrorClass values (ASHRAE 135 clause 21).
var errorClasses = map[uint32]string{0: "device", 1: "object", 2: "property", 3: "resources", 4: "security", 5: "services", 6: "vt", 7: "communication"}

func reasonName(names map[uint8]string, r uint8) string {
	if n, ok := names[r]; ok {
		return fmt.Sprintf("%s (%d)", n, r)
	}
	return fmt.Sprintf("reason %d", r)
}

// ClassifyReadError maps a read error to its kind and a short reason. ok is
// false for cancellation and a closed client (shutdown, not a failure).
func ClassifyReadError(err error) (kind FailureKind, reason string, ok bool) {
	var se *ServiceError
	var re *RejectError
	var ae *AbortError
	var ne net.Error
	switch {
	case err == nil, errors.Is(err, context.Canceled), errors.Is(err, ErrClosed):
		return "", "", false
	case errors.Is(err, ErrTimeout), errors.Is(err, context.DeadlineExceeded):
		return FailTimeout, "no answer", true
	case errors.As(err, &se):
		cl := errorClasses[se.Class]
		if cl == "" {
			cl = fmt.Sprint(se.Class)
		}
		return FailError, fmt.Sprintf("class %s code %d", cl, se.Code), true
	case errors.As(err, &re):
		return FailReject, reasonName(rejectReasons, re.Reason), true
	case errors.As(err, &ae):
		who := "device"
		if !ae.Server {
			who = "client"
		}
		return FailAbort, reasonName(abortReasons, ae.Reason) + " by " + who, true
	case errors.As(err, &ne):
		return FailUnreachable, ne.Error(), true
	}
	return FailMalformed, err.Error(), true
}

// failureLogEvery is the default interval between repeated log lines for a
// device that keeps failing the same way.
const failureLogEvery = 10 * time.Minute

// devState is one device's log state.
type devState struct {
	failing    bool
	kind       FailureKind
	lastLog    time.Time
	suppressed int // failures not logged since lastLog
	failedRuns int // consecutive failed polls
	fellBack   bool
}

// failures rate-limits failure logs per device and tracks RPM fallbacks.
type failures struct {
	mu   sync.Mutex
	devs map[uint32]*devState
}

func (f *failures) state(inst uint32) *devState {
	if f.devs == nil {
		f.devs = map[uint32]*devState{}
	}
	st := f.devs[inst]
	if st == nil {
		st = &devState{}
		f.devs[inst] = st
	}
	return st
}

// reportFailure logs a failure (first one, a change of kind, then at most
// once per FailureLogEvery with the count suppressed) and hands it to
// OnReadFailure.
func (s *Source) reportFailure(rf ReadFailure) {
	now := time.Now()
	every := s.FailureLogEvery
	if every <= 0 {
		every = failureLogEvery
	}
	s.fail.mu.Lock()
	st := s.fail.state(rf.Device)
	st.failedRuns++
	logIt := !st.failing || st.kind != rf.Kind || now.Sub(st.lastLog) >= every
	suppressed, runs := st.suppressed, st.failedRuns
	if logIt {
		st.lastLog, st.suppressed = now, 0
	} else {
		st.suppressed++
	}
	st.failing, st.kind = true, rf.Kind
	s.fail.mu.Unlock()
	if logIt {
		s.log.Warn("bacnet: device read failed", "source", s.name, "device", rf.Device, "address", rf.Address,
			"kind", string(rf.Kind), "reason", rf.Reason, "points", rf.Points, "failed_polls", runs, "suppressed", suppressed)
	}
	if s.OnReadFailure != nil {
		s.OnReadFailure(rf)
	}
}

// deviceOK notes a fully successful read; a device that was failing gets
// one line saying it answers again.
func (s *Source) deviceOK(d *Device) {
	s.fail.mu.Lock()
	st := s.fail.devs[d.Instance] // a device that never failed needs no state
	if st == nil {
		s.fail.mu.Unlock()
		return
	}
	was, runs := st.failing, st.failedRuns
	st.failing, st.failedRuns, st.suppressed = false, 0, 0
	s.fail.mu.Unlock()
	if was {
		s.log.Info("bacnet: device answers again", "source", s.name, "device", d.Instance, "address", d.Addr.String(), "failed_polls", runs)
	}
}

// noteFallback logs once per device that it no longer serves
// ReadPropertyMultiple and is read with ReadProperty, and reports it as a
// reject (the device refused the service; the reads themselves go on).
func (s *Source) noteFallback(d *Device) {
	if d == nil || d.RPMSupported() {
		return
	}
	s.fail.mu.Lock()
	st := s.fail.state(d.Instance)
	first := !st.fellBack
	st.fellBack = true
	s.fail.mu.Unlock()
	if !first {
		return
	}
	const reason = "read-property-multiple refused; reading each property with read-property"
	s.log.Warn("bacnet: device falls back to ReadProperty", "source", s.name, "device", d.Instance, "address", d.Addr.String(),
		"kind", string(FailReject), "reason", reason)
	if s.OnReadFailure != nil {
		s.OnReadFailure(ReadFailure{Source: s.name, Device: d.Instance, Address: d.Addr.String(), Kind: FailReject, Reason: reason})
	}
}
