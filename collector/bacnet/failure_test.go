package bacnet

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
	"risewatch/site"
)

// Enumeration values and names below are BACnetErrorClass, BACnetErrorCode,
// BACnetRejectReason and BACnetAbortReason of ASHRAE 135 clause 21.
func TestClassifyReadError(t *testing.T) {
	cases := []struct {
		err    error
		kind   FailureKind
		reason string
		ok     bool
	}{
		{fmt.Errorf("device 7: %w", &ServiceError{Service: wire.ServiceReadProperty, Class: 1, Code: 31}), FailError, "class object code 31", true},
		{&ServiceError{Class: 9, Code: 0}, FailError, "class 9 code 0", true},
		{fmt.Errorf("device 7: read-property-multiple: %w", &RejectError{Reason: 9}), FailReject, "unrecognized-service (9)", true},
		{&RejectError{Reason: 200}, FailReject, "reason 200", true},
		{&AbortError{Reason: 4, Server: true}, FailAbort, "segmentation-not-supported (4) by device", true},
		{&AbortError{Reason: 10}, FailAbort, "tsm-timeout (10) by client", true},
		{fmt.Errorf("device 7 at x: %w", ErrTimeout), FailTimeout, "no answer", true},
		{&net.OpError{Op: "write", Err: errors.New("network is unreachable")}, FailUnreachable, "write: network is unreachable", true},
		{errors.New("device 7: read ai 1 present-value: answer is for ai 2 present-value"), FailMalformed, "device 7: read ai 1 present-value: answer is for ai 2 present-value", true},
		{fmt.Errorf("poll: %w", context.Canceled), "", "", false},
		{ErrClosed, "", "", false},
		{nil, "", "", false},
	}
	for _, c := range cases {
		k, r, ok := ClassifyReadError(c.err)
		if k != c.kind || r != c.reason || ok != c.ok {
			t.Errorf("%v: %q %q %v, want %q %q %v", c.err, k, r, ok, c.kind, c.reason, c.ok)
		}
	}
}

type lockedBuf struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuf) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

// count counts log lines containing every substring.
func (l *lockedBuf) count(substr ...string) int {
	l.mu.Lock()
	defer l.mu.Unlock()
	n := 0
line:
	for _, ln := range strings.Split(l.b.String(), "\n") {
		for _, s := range substr {
			if !strings.Contains(ln, s) {
				continue line
			}
		}
		n++
	}
	return n
}

// TestSourceReportsFailures checks the hook and the rate-limited log for a
// device answering with a property error, one going silent and coming back.
func TestSourceReportsFailures(t *testing.T) {
	s40, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 40}, 1)
	s50, d50 := newSim(t, bacnetdev.DeviceConfig{Instance: 50}, 1)
	refs := []site.PointRef{
		bref("VAV-1.ZNT", 40, "analog-input", 1, "degC", nil),
		bref("VAV-1.DAT", 40, "analog-input", 99, "degC", nil), // no such object: Error unknown-object
		bref("VAV-2.ZNT", 50, "analog-input", 1, "degC", nil),
	}
	var logs lockedBuf
	src, err := NewSource("bas", site.BACnetConfig{Bind: "127.0.0.1:0", Timeout: 80 * time.Millisecond, Retries: 1,
		Devices: map[uint32]string{40: s40.Addr().String(), 50: s50.Addr().String()}}, refs, &MemCheckpoints{}, time.UTC,
		slog.New(slog.NewTextHandler(&logs, nil)))
	if err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	got := map[uint32][]ReadFailure{}
	src.OnReadFailure = func(f ReadFailure) {
		mu.Lock()
		got[f.Device] = append(got[f.Device], f)
		mu.Unlock()
	}
	src.FailureLogEvery = time.Hour
	ctx := ctxT(t)
	if err := src.Start(ctx); err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	poll := func() []collector.Reading {
		t.Helper()
		rs, err := src.PollOnce(ctx)
		if err != nil {
			t.Fatal(err)
		}
		return rs
	}
	d50.SetMisbehaviour(bacnetdev.Misbehaviour{Silent: true})
	poll()
	poll()
	src.FailureLogEvery = time.Nanosecond // the next repeat is due at once
	rs := poll()
	if rs[0].Quality != collector.Good || rs[0].Value != 21 { // sim AI i = 20+i degC
		t.Errorf("healthy point %+v, want 21 Good", rs[0])
	}
	if rs[1].Quality != collector.Missing || rs[2].Quality != collector.Missing {
		t.Errorf("failed points %+v %+v, want Missing", rs[1], rs[2])
	}
	mu.Lock()
	f40, f50 := got[40], got[50]
	mu.Unlock()
	if len(f40) != 3 || f40[0].Kind != FailError || f40[0].Reason != "class object code 31" || f40[0].Points != 1 ||
		f40[0].Address != s40.Addr().String() {
		t.Errorf("device 40 failures %+v, want 3 × bacnet-error class object code 31 on 1 point", f40)
	}
	if len(f50) != 3 || f50[0].Kind != FailTimeout || f50[0].Points != 1 || f50[0].Took < 160*time.Millisecond {
		t.Errorf("device 50 failures %+v, want 3 timeouts of one point after 2 × 80 ms", f50)
	}
	// Lines: the first failure, the third (due, with the second suppressed).
	if n := logs.count("device read failed", "device=50", "kind=timeout"); n != 2 {
		t.Errorf("%d timeout lines, want 2", n)
	}
	if n := logs.count("device read failed", "device=50", "failed_polls=3", "suppressed=1"); n != 1 {
		t.Errorf("repeat line without the suppressed count")
	}
	d50.SetMisbehaviour(bacnetdev.Misbehaviour{})
	rs = poll()
	if rs[2].Quality != collector.Good || rs[2].Value != 21 {
		t.Errorf("recovered point %+v, want 21 Good", rs[2])
	}
	if n := logs.count("device answers again", "device=50", "failed_polls=3"); n != 1 {
		t.Errorf("%d recovery lines, want 1", n)
	}
	if n := logs.count("device answers again", "device=40"); n != 0 {
		t.Errorf("device 40 still fails but was logged as recovered")
	}
}
