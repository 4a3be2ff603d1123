package daemon

import (
	"context"
	"log/slog"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet"
	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
	"risewatch/site"
)

// TestBACnetTrendGapInMetrics: a trend log whose buffer wraps between two
// sweeps loses the records overwritten before they were read; the daemon
// counts them in risewatch_bacnet_trend_records_lost_total (issue: "a log
// buffer that wrapped is reported as a counted gap").
func TestBACnetTrendGapInMetrics(t *testing.T) {
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	srv, err := bacnetdev.NewServer(bacnetdev.Config{})
	if err != nil {
		t.Fatal(err)
	}
	defer srv.Close()
	const inst, bufSize = 301, 10
	d, err := srv.AddDevice(bacnetdev.DeviceConfig{Instance: inst})
	if err != nil {
		t.Fatal(err)
	}
	ai := wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 1}
	d.AddObject(bacnetdev.Object{ID: ai, Name: "DAT", Units: uint32(bacnet.UnitDegreesCelsius), Value: 30})
	d.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Logged: ai, BufferSize: bufSize})
	t0 := time.Date(2026, 1, 12, 6, 0, 0, 0, time.UTC)
	rec := func(from, n int) {
		for i := from; i < from+n; i++ {
			if err := d.Record(1, t0.Add(time.Duration(i)*time.Minute), 30+float64(i)/10, [4]bool{}); err != nil {
				t.Fatal(err)
			}
		}
	}
	tl := uint32(1)
	s := &site.Site{Name: "gap-campus",
		Sources: []site.SourceConfig{{Name: "bas", Kind: "bacnet", BACnet: &site.BACnetConfig{Bind: "127.0.0.1:0",
			Timeout: 500 * time.Millisecond, Retries: 1, Devices: map[uint32]string{inst: srv.Addr().String()}}}},
		Terminals: []site.Terminal{{ID: "VAV-1", Points: site.TerminalPoints{Discharge: site.PointRef{Name: "VAV-1.DAT",
			Kind: site.PointBACnet, Source: "bas", Unit: "degC",
			BACnet: &site.BACnetRef{Device: inst, ObjectType: "analog-input", Instance: 1, Property: "present-value", TrendLog: &tl}}}}},
		TerminalIndex: map[string]int{"VAV-1": 0},
	}
	b, m := startBACnetCron(ctx, t, s, slog.New(slog.DiscardHandler))
	var got []collector.Reading
	emit := func(rs []collector.Reading) error { got = append(got, rs...); return nil }
	lost := func() float64 {
		return gauge(t, m, "risewatch_bacnet_trend_records_lost_total", map[string]string{"source": "bas"})
	}

	rec(0, 5) // sequence 1..5, all in the buffer
	if n := b.sweep(ctx, emit); n != 5 {
		t.Fatalf("first sweep delivered %d readings, want 5", n)
	}
	if v := lost(); v != 0 {
		t.Fatalf("lost %v after a sweep of an unwrapped log, want 0", v)
	}
	// 25 more: the 10-record buffer holds 21..30; 6..20 were overwritten unread.
	rec(5, 25)
	got = got[:0]
	if n := b.sweep(ctx, emit); n != bufSize {
		t.Fatalf("second sweep delivered %d readings, want the %d still in the buffer", n, bufSize)
	}
	if v, want := lost(), float64(25-bufSize); v != want {
		t.Errorf("trend_records_lost_total = %v, want %v (records 6..20 overwritten before the sweep)", v, want)
	}
	if len(got) > 0 && !got[0].At.Equal(t0.Add(20*time.Minute)) {
		t.Errorf("first reading after the gap at %v, want %v", got[0].At, t0.Add(20*time.Minute))
	}
	// A sweep with nothing new adds nothing.
	b.sweep(ctx, emit)
	if v, want := lost(), float64(25-bufSize); v != want {
		t.Errorf("after an idle sweep lost = %v, want still %v", v, want)
	}
}
