package bacnet

import (
	"bufio"
	"math"
	"net"
	"net/netip"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
	"risewatch/internal/testenv"
)

// TestInteropBacnetJS runs testdata/interop/device.js, a device built on the
// independent @bacnet-js/client stack, and reads it: discovery, RP, RPM with
// a property error, units and a trend log by sequence number.
func TestInteropBacnetJS(t *testing.T) {
	node := testenv.LookTool(t, "node", "install Node.js 20 (scripts/deps/bacnet.apt)")
	dir, _ := filepath.Abs(filepath.Join("testdata", "interop"))
	if _, err := os.Stat(filepath.Join(dir, "node_modules", "@bacnet-js", "client", "package.json")); err != nil {
		testenv.Missing(t, "@bacnet-js/client not installed; run scripts/deps/bacnet.sh (npm ci in collector/bacnet/testdata/interop)")
	}
	// A free UDP port for the peer; the port stays part of its address.
	pc, err := net.ListenPacket("udp4", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	port := pc.LocalAddr().(*net.UDPAddr).Port
	pc.Close()
	cmd := exec.Command(node, "device.js", strconv.Itoa(port), "1234")
	cmd.Dir = dir
	cmd.Env = append(os.Environ(), "TZ=UTC")
	stdout, _ := cmd.StdoutPipe()
	cmd.Stderr = os.Stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = cmd.Process.Kill(); _ = cmd.Wait() })
	ready := make(chan bool, 1)
	go func() {
		sc := bufio.NewScanner(stdout)
		for sc.Scan() {
			if sc.Text() == "listening" {
				ready <- true
			}
		}
	}()
	select {
	case <-ready:
	case <-time.After(15 * time.Second):
		t.Fatal("interop device did not start")
	}
	c := newClient(t, Options{Timeout: time.Second, Retries: 2})
	peer := netip.AddrPortFrom(netip.MustParseAddr("127.0.0.1"), uint16(port))
	ds, err := c.Discover(ctxT(t), []netip.AddrPort{peer}, 1234, 1234, 500*time.Millisecond)
	if err != nil || len(ds) != 1 {
		t.Fatalf("discover: %v %v", ds, err)
	}
	d := ds[0]
	// The peer advertises 1482 octets; BACnet/IP carries at most 1476 (ASHRAE 135 clause 20.1.2.5).
	if d.MaxAPDU != 1476 || d.Addr.IP != peer {
		t.Errorf("device %+v: want max-APDU clamped to 1476 at %s", d, peer)
	}
	vs, err := c.ReadProperty(ctxT(t), d, wire.ObjectID{Type: wire.ObjectDevice, Instance: 1234}, wire.PropertyRef{Prop: wire.PropObjectList, Index: wire.NoIndex})
	if err != nil || len(vs) != 5 {
		t.Fatalf("object-list: %v %v", vs, err)
	}
	av3 := wire.ObjectID{Type: wire.ObjectAnalogValue, Instance: 3}
	res := c.ReadMany(ctxT(t), d, []Read{
		{ai(1), pv}, {ai(1), wire.PropertyRef{Prop: wire.PropUnits, Index: wire.NoIndex}},
		{ai(2), pv}, {av3, pv}, {ai(1), wire.PropertyRef{Prop: wire.PropDescription, Index: wire.NoIndex}},
	})
	// Values the device script serves: 95.5 °F, units 64 (degrees-Fahrenheit), 420 cfm, 35 %.
	want := []float64{95.5, float64(UnitDegreesFahrenheit), 420, 35}
	for i, w := range want {
		if res[i].Err != nil {
			t.Fatalf("read %d: %v", i, res[i].Err)
		}
		if f, _ := res[i].Values[0].Float(); math.Abs(f-w) > 1e-4 {
			t.Errorf("read %d = %v, want %v", i, f, w)
		}
	}
	if res[4].Err == nil {
		t.Error("description of AI 1 should be unknown-property")
	}
	if !d.RPMSupported() {
		t.Error("RPM marked unsupported")
	}
	var got []TrendRecord
	tr := &TrendReader{Client: c, Checkpoints: &MemCheckpoints{}, Page: 8}
	r, err := tr.Backfill(ctxT(t), d, 1, func(rs []TrendRecord) error { got = append(got, rs...); return nil })
	if err != nil || r.Records != 30 || len(got) != 30 {
		t.Fatalf("trend: %+v %v", r, err)
	}
	t0 := time.Date(2025, 1, 6, 8, 0, 0, 0, time.UTC)
	for i, g := range got {
		if g.Seq != uint32(i+1) || !g.At.Equal(t0.Add(time.Duration(i)*time.Minute)) || math.Abs(g.Value-(20+float64(i)/10)) > 1e-4 {
			t.Fatalf("record %d: %+v", i, g)
		}
	}
}
