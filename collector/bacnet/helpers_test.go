package bacnet

import (
	"context"
	"io"
	"log/slog"
	"strconv"
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
)

var (
	ai = func(i uint32) wire.ObjectID { return wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: i} }
	pv = wire.PropertyRef{Prop: wire.PropPresentValue, Index: wire.NoIndex}
)

func quietLogger() *slog.Logger { return slog.New(slog.NewTextHandler(io.Discard, nil)) }

// newSim starts one device group with one direct device holding n analog inputs
// (AI i = 20+i degC) and a trend log on AI 1.
func newSim(t testing.TB, cfg bacnetdev.DeviceConfig, n int) (*bacnetdev.Server, *bacnetdev.Device) {
	t.Helper()
	s, err := bacnetdev.NewServer(bacnetdev.Config{SegmentTimeout: 100 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	d, err := s.AddDevice(cfg)
	if err != nil {
		t.Fatal(err)
	}
	for i := 1; i <= n; i++ {
		d.AddObject(bacnetdev.Object{ID: ai(uint32(i)), Name: "AI-" + strconv.Itoa(i), Units: uint32(UnitDegreesCelsius), Value: 20 + float64(i)})
	}
	return s, d
}

func newClient(t testing.TB, o Options) *Client {
	t.Helper()
	if o.Timeout == 0 {
		o.Timeout = 150 * time.Millisecond
	}
	if o.Bind == "" {
		o.Bind = "127.0.0.1:0"
	}
	o.Logger = quietLogger()
	c, err := Dial(context.Background(), o)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { c.Close() })
	return c
}

func ctxT(t testing.TB) context.Context {
	ctx, cancel := context.WithTimeout(context.Background(), 20*time.Second)
	t.Cleanup(cancel)
	return ctx
}
