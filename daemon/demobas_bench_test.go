package daemon

import (
	"context"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet"
	"risewatch/sim"
)

// demoSource serves hours of the demo campus on simulated BACnet/IP devices
// and returns a started source on them.
func demoSource(b *testing.B, hours int) *bacnet.Source {
	base, err := sim.DemoScenario()
	if err != nil {
		b.Fatal(err)
	}
	sc, err := base.With(1, 0)
	if err != nil {
		b.Fatal(err)
	}
	sm, err := sim.New(sc)
	if err != nil {
		b.Fatal(err)
	}
	s := sm.Site("")
	bas, err := newDemoBAS(s, hours*60+60, time.Second, time.Minute)
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(bas.close)
	end := sc.StartTime().Add(time.Duration(hours) * time.Hour)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	_ = sm.Run(ctx, func(st *sim.Step) error {
		if !st.At.Before(end) {
			cancel()
			return ctx.Err()
		}
		bas.feed(st)
		return nil
	})
	src, err := bacnet.NewSource(DemoSourceName, *s.Sources[0].BACnet, bacnet.PointsFor(s, DemoSourceName), &bacnet.MemCheckpoints{}, s.Location, quietLog())
	if err != nil {
		b.Fatal(err)
	}
	if err := src.Start(context.Background()); err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { src.Close() })
	return src
}

// BenchmarkDemoPoll: one poll of the demo campus's 373 points on 64
// simulated devices (60 behind routers) with ReadPropertyMultiple.
func BenchmarkDemoPoll(b *testing.B) {
	src := demoSource(b, 1)
	n := 0
	for b.Loop() {
		rs, err := src.PollOnce(context.Background())
		if err != nil {
			b.Fatal(err)
		}
		n += len(rs)
	}
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "points/s")
}

// BenchmarkDemoBackfill: the trend-log sweep of six hours of the demo
// campus (373 logs, one record a minute each), in time order across logs.
func BenchmarkDemoBackfill(b *testing.B) {
	src := demoSource(b, 6)
	n := 0
	for b.Loop() {
		b.StopTimer()
		cp := &bacnet.MemCheckpoints{}
		src.SetCheckpoints(cp)
		b.StartTimer()
		if _, err := src.SweepTrends(context.Background(), func(rs []collector.Reading) error { n += len(rs); return nil }); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "records/s")
}
