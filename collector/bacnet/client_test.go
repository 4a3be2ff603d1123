package bacnet

import (
	"errors"
	"math"
	"net/netip"
	"sync"
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
)

func discoverOne(t *testing.T, c *Client, at netip.AddrPort, instance uint32) *Device {
	t.Helper()
	ds, err := c.Discover(ctxT(t), []netip.AddrPort{at}, -1, -1, 200*time.Millisecond)
	if err != nil {
		t.Fatal(err)
	}
	for _, d := range ds {
		if d.Instance == instance {
			return d
		}
	}
	t.Fatalf("device %d not discovered at %s (found %d devices)", instance, at, len(ds))
	return nil
}

func TestDiscoverAndRead(t *testing.T) {
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 1001, MaxAPDU: 1476, Segmentation: wire.NoSegmentation}, 4)
	c := newClient(t, Options{})
	d := discoverOne(t, c, s.Addr(), 1001)
	if d.MaxAPDU != 1476 || d.Segmentation != wire.NoSegmentation || d.Addr.IP != s.Addr() || d.Addr.Routed() {
		t.Errorf("device from I-Am: %+v", d)
	}
	vs, err := c.ReadProperty(ctxT(t), d, ai(3), pv)
	if err != nil || len(vs) != 1 || vs[0].F != 23 { // sim sets AI i to 20+i
		t.Fatalf("RP: %v %v", vs, err)
	}
	_, err = c.ReadProperty(ctxT(t), d, ai(99), pv)
	var se *ServiceError
	if !errors.As(err, &se) || se.Class != wire.ErrClassObject || se.Code != wire.ErrCodeUnknownObject {
		t.Errorf("unknown object: %v", err)
	}
	// More requests than invoke IDs: IDs wrap and are reused after each transaction ends.
	for i := 0; i < 300; i++ {
		if _, err := c.ReadProperty(ctxT(t), d, ai(1), pv); err != nil {
			t.Fatalf("request %d: %v", i, err)
		}
	}
}

func TestSilentDeviceTimesOutAfterRetries(t *testing.T) {
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 7, Misbehaviour: bacnetdev.Misbehaviour{Silent: true}}, 1)
	c := newClient(t, Options{Timeout: 50 * time.Millisecond, Retries: 2})
	d := c.AddDevice(7, Address{IP: s.Addr()})
	_, err := c.ReadProperty(ctxT(t), d, ai(1), pv)
	if !errors.Is(err, ErrTimeout) {
		t.Fatalf("want timeout, got %v", err)
	}
	if r := c.Stats.Retries.Load(); r != 2 {
		t.Errorf("retries = %d, want 2", r)
	}
	if n := s.Stats.Requests.Load(); n != 3 {
		t.Errorf("device saw %d requests, want 3 (1 + 2 retries)", n)
	}
}

func TestRetriesRecoverDroppedRequests(t *testing.T) {
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 8, Misbehaviour: bacnetdev.Misbehaviour{DropFirst: 2}}, 1)
	c := newClient(t, Options{Timeout: 50 * time.Millisecond, Retries: 3})
	d := c.AddDevice(8, Address{IP: s.Addr()})
	vs, err := c.ReadProperty(ctxT(t), d, ai(1), pv)
	if err != nil || vs[0].F != 21 {
		t.Fatalf("RP after drops: %v %v", vs, err)
	}
	if r := c.Stats.Retries.Load(); r != 2 {
		t.Errorf("retries = %d, want 2", r)
	}
}

func TestSlowRepliesAndOutstandingLimit(t *testing.T) {
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 9, MaxAPDU: 1476,
		Misbehaviour: bacnetdev.Misbehaviour{Delay: 40 * time.Millisecond}}, 2)
	c := newClient(t, Options{Timeout: 500 * time.Millisecond, MaxOutstanding: 2})
	d := discoverOne(t, c, s.Addr(), 9)
	var wg sync.WaitGroup
	errs := make(chan error, 12)
	for i := 0; i < 12; i++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			_, err := c.ReadProperty(ctxT(t), d, ai(2), pv)
			errs <- err
		}()
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		if err != nil {
			t.Fatal(err)
		}
	}
	if m := s.Stats.MaxInFlight.Load(); m < 1 || m > 2 {
		t.Errorf("device had %d requests open at once, limit is 2", m)
	}
}

func TestDuplicateAndMalformedPackets(t *testing.T) {
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 10, Misbehaviour: bacnetdev.Misbehaviour{Duplicate: true, MalformedFirst: true}}, 3)
	c := newClient(t, Options{})
	d := c.AddDevice(10, Address{IP: s.Addr()})
	for i := 0; i < 5; i++ {
		res := c.ReadMany(ctxT(t), d, []Read{{ai(1), pv}, {ai(2), pv}, {ai(3), pv}})
		for k, r := range res {
			if r.Err != nil || r.Values[0].F != float64(21+k) {
				t.Fatalf("round %d point %d: %+v", i, k, r)
			}
		}
	}
	if c.Stats.Malformed.Load() == 0 {
		t.Error("malformed frames were not counted")
	}
	if c.Stats.Unmatched.Load() == 0 {
		t.Error("duplicated answers were not counted as unmatched")
	}
}

func TestRejectRPMFallsBackAndIsRemembered(t *testing.T) {
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 11, Misbehaviour: bacnetdev.Misbehaviour{RejectRPM: true}}, 4)
	c := newClient(t, Options{})
	d := discoverOne(t, c, s.Addr(), 11)
	reads := []Read{{ai(1), pv}, {ai(2), pv}, {ai(3), pv}, {ai(4), pv}}
	for round := 0; round < 3; round++ {
		for k, r := range c.ReadMany(ctxT(t), d, reads) {
			if r.Err != nil || r.Values[0].F != float64(21+k) {
				t.Fatalf("round %d read %d: %+v", round, k, r)
			}
		}
	}
	if d.RPMSupported() {
		t.Error("device still marked as serving RPM")
	}
	if n := s.Stats.Rejected.Load(); n != 1 {
		t.Errorf("RPM tried %d times; want once, then remembered", n)
	}
}

func TestSegmentedAnswer(t *testing.T) {
	const n = 120
	s, dev := newSim(t, bacnetdev.DeviceConfig{Instance: 12, MaxAPDU: 128, Segmentation: wire.SegmentedBoth,
		Misbehaviour: bacnetdev.Misbehaviour{DropSegmentACKs: 1, Duplicate: true}}, n)
	_ = dev
	c := newClient(t, Options{Timeout: time.Second})
	d := discoverOne(t, c, s.Addr(), 12)
	vs, err := c.ReadProperty(ctxT(t), d, wire.ObjectID{Type: wire.ObjectDevice, Instance: 12},
		wire.PropertyRef{Prop: wire.PropObjectList, Index: wire.NoIndex})
	if err != nil {
		t.Fatal(err)
	}
	if len(vs) != n+1 || vs[0].Obj.Type != wire.ObjectDevice || vs[n].Obj != ai(n) {
		t.Fatalf("object list of %d entries, want %d", len(vs), n+1)
	}
	if s.Stats.SegmentsSent.Load() < 5 {
		t.Errorf("only %d segments sent; the answer should not fit 128 octets", s.Stats.SegmentsSent.Load())
	}
}

func TestUnsegmentedDeviceAnswerTooLongSplits(t *testing.T) {
	// 60 properties do not fit one 206-octet answer: the batcher packs to the
	// device's max APDU, so no Abort happens and every value arrives.
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 13, MaxAPDU: 206, Segmentation: wire.NoSegmentation}, 60)
	c := newClient(t, Options{})
	d := discoverOne(t, c, s.Addr(), 13)
	var reads []Read
	for i := 1; i <= 60; i++ {
		reads = append(reads, Read{ai(uint32(i)), pv})
	}
	for k, r := range c.ReadMany(ctxT(t), d, reads) {
		if r.Err != nil || math.Abs(r.Values[0].F-float64(21+k)) > 1e-6 {
			t.Fatalf("read %d: %+v", k, r)
		}
	}
	if got := s.Stats.Requests.Load(); got < 6 {
		t.Errorf("%d requests for 60 properties on a 206-octet device; want at least 6 (10 per RPM)", got)
	}
}

func TestRoutedDevices(t *testing.T) {
	s, err := bacnetdev.NewServer(bacnetdev.Config{})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	for i := 1; i <= 3; i++ {
		d, err := s.AddDevice(bacnetdev.DeviceConfig{Instance: uint32(500 + i), Network: 5, MAC: byte(i), MaxAPDU: 480})
		if err != nil {
			t.Fatal(err)
		}
		d.AddObject(bacnetdev.Object{ID: ai(1), Value: float64(i)})
	}
	c := newClient(t, Options{})
	ds, err := c.Discover(ctxT(t), []netip.AddrPort{s.Addr()}, 502, 503, 200*time.Millisecond)
	if err != nil || len(ds) != 2 {
		t.Fatalf("discover 502..503: %d devices, %v", len(ds), err)
	}
	for _, d := range ds {
		if d.Addr.Net != 5 || len(d.Addr.MAC) != 1 || d.Addr.IP != s.Addr() {
			t.Errorf("routed address %s", d.Addr)
		}
		vs, err := c.ReadProperty(ctxT(t), d, ai(1), pv)
		if err != nil || vs[0].F != float64(d.Instance-500) {
			t.Errorf("device %d: %v %v", d.Instance, vs, err)
		}
		a, err := ParseAddress(d.Addr.String())
		if err != nil || a != d.Addr {
			t.Errorf("address %s does not round-trip: %v %v", d.Addr, a, err)
		}
	}
}

func TestForeignDeviceRegistration(t *testing.T) {
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 14}, 1)
	c := newClient(t, Options{BBMD: s.Addr().String(), TTL: 2 * time.Second})
	if !c.Registered() {
		t.Fatal("not registered with the BBMD")
	}
}
