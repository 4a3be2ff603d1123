package bacnet

import (
	"context"
	"fmt"
	"net/netip"
	"syscall"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
	"risewatch/site"
)

func cpuTime() time.Duration {
	var ru syscall.Rusage
	_ = syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// BenchmarkPollSweep2000x8 is one poll sweep of 2,000 simulated devices with
// 8 analog points each (present-value + status-flags, one RPM per device),
// 40 device groups of 50 devices behind a simulated router on loopback.
// cpu-ns/point includes the simulated devices' CPU (same process).
func BenchmarkPollSweep2000x8(b *testing.B) {
	const groups, perGroup, points = 40, 50, 8
	var refs []site.PointRef
	devs := map[uint32]string{}
	var servers []*bacnetdev.Server
	for g := 0; g < groups; g++ {
		s, err := bacnetdev.NewServer(bacnetdev.Config{})
		if err != nil {
			b.Fatal(err)
		}
		defer s.Close()
		servers = append(servers, s)
		for k := 0; k < perGroup; k++ {
			inst := uint32(100000 + g*perGroup + k)
			d, err := s.AddDevice(bacnetdev.DeviceConfig{Instance: inst, Network: uint16(g + 1), MAC: byte(k + 1), MaxAPDU: 480})
			if err != nil {
				b.Fatal(err)
			}
			for p := 1; p <= points; p++ {
				d.AddObject(bacnetdev.Object{ID: ai(uint32(p)), Units: uint32(UnitDegreesCelsius), Value: float64(p)})
				refs = append(refs, bref(fmt.Sprintf("D%d.P%d", inst, p), inst, "analog-input", uint32(p), "degC", nil))
			}
			devs[inst] = Address{IP: s.Addr(), Net: uint16(g + 1), MAC: string([]byte{byte(k + 1)})}.String()
		}
	}
	src, err := NewSource("bas", site.BACnetConfig{Bind: "127.0.0.1:0", Timeout: 2 * time.Second, Retries: 1},
		refs, nil, nil, quietLogger())
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	c, err := Dial(ctx, Options{Bind: "127.0.0.1:0", Timeout: 2 * time.Second, Logger: quietLogger()})
	if err != nil {
		b.Fatal(err)
	}
	src.client = c
	defer c.Close()
	for _, s := range servers {
		if _, err := c.Discover(ctx, []netip.AddrPort{s.Addr()}, -1, -1, 300*time.Millisecond); err != nil {
			b.Fatal(err)
		}
	}
	for inst := range devs {
		d, ok := c.Device(inst)
		if !ok {
			b.Fatalf("device %d not discovered", inst)
		}
		src.devices[inst] = d
	}
	b.ResetTimer()
	cpu0 := cpuTime()
	for i := 0; i < b.N; i++ {
		rs, err := src.PollOnce(ctx)
		if err != nil {
			b.Fatal(err)
		}
		for _, r := range rs {
			if r.Quality != collector.Good {
				b.Fatalf("%s: %v", r.Point, r.Quality)
			}
		}
	}
	b.StopTimer()
	n := float64(b.N * len(refs))
	b.ReportMetric(float64(cpuTime()-cpu0)/n, "cpu-ns/point")
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/n, "ns/point")
	b.ReportMetric(float64(c.Stats.Requests.Load())/float64(b.N), "requests/sweep")
	b.ReportMetric(float64(c.Stats.Retries.Load())/float64(b.N), "retries/sweep")
}

// BenchmarkDecodeRPMACK decodes the ASHRAE 135 Annex F example F.3.7 RPM ACK.
func BenchmarkDecodeRPMACK(b *testing.B) {
	data := []byte{0x0C, 0, 0, 0, 0x21, 0x1E, 0x29, 0x55, 0x4E, 0x44, 0x42, 0x29, 0x33, 0x33, 0x4F, 0x1F,
		0x0C, 0, 0, 0, 0x32, 0x1E, 0x29, 0x55, 0x5E, 0x91, 0x01, 0x91, 0x1F, 0x5F, 0x1F}
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := wire.DecodeReadPropertyMultipleACK(data); err != nil {
			b.Fatal(err)
		}
	}
}
