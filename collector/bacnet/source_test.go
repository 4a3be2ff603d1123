package bacnet

import (
	"context"
	"math"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
	"risewatch/site"
	"risewatch/units"
)

func bref(name string, dev uint32, typ string, inst uint32, unit string, trend *uint32) site.PointRef {
	return site.PointRef{Name: name, Kind: site.PointBACnet, Source: "bas", Unit: unit,
		BACnet: &site.BACnetRef{Device: dev, ObjectType: typ, Instance: inst, Property: "present-value", TrendLog: trend}}
}

func TestSourcePollUnitsAndQuality(t *testing.T) {
	s, dev := newSim(t, bacnetdev.DeviceConfig{Instance: 40, MaxAPDU: 480}, 3)
	dev.AddObject(bacnetdev.Object{ID: wire.ObjectID{Type: wire.ObjectBinaryValue, Instance: 1}, Name: "FAN", Value: 1})
	dev.AddObject(bacnetdev.Object{ID: wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 4}, Units: uint32(UnitDegreesFahrenheit), Value: 131})
	if err := dev.SetFlags(ai(3), [4]bool{false, true, false, false}); err != nil {
		t.Fatal(err)
	}
	tl := uint32(1)
	refs := []site.PointRef{
		bref("VAV-1.ZNT", 40, "analog-input", 1, "degC", nil),
		bref("VAV-1.DAT", 40, "analog-input", 2, "degF", nil), // device says degC: flagged, device unit wins
		bref("VAV-1.AF", 40, "AI", 3, "degC", nil),
		bref("AHU-1.FAN", 40, "binary-value", 1, "", nil),
		bref("VAV-1.HWST", 40, "analog-input", 4, "degF", &tl),
		bref("VAV-1.GONE", 41, "analog-input", 1, "degC", nil), // device 41 does not exist
	}
	dev.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Logged: wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 4}, BufferSize: 100})
	t0 := time.Date(2025, 2, 3, 10, 0, 0, 0, time.UTC)
	for i := 0; i < 5; i++ {
		dev.Advance(t0.Add(time.Duration(i) * time.Minute))
	}
	src, err := NewSource("bas", site.BACnetConfig{Bind: "127.0.0.1:0", Timeout: 100 * time.Millisecond, Retries: 1,
		Devices: map[uint32]string{40: s.Addr().String(), 41: "127.0.0.1:9"}}, refs, &MemCheckpoints{}, time.UTC, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	if err := src.Start(ctxT(t)); err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	var mism []string
	for _, uc := range src.UnitChecks() {
		if uc.Mismatch {
			mism = append(mism, uc.Point)
		}
	}
	if len(mism) != 1 || mism[0] != "VAV-1.DAT" {
		t.Errorf("unit mismatches %v, want [VAV-1.DAT]", mism)
	}
	rs, err := src.PollOnce(ctxT(t))
	if err != nil {
		t.Fatal(err)
	}
	want := []struct {
		v float64
		q collector.Quality
	}{
		{21, collector.Good}, {22, collector.Good}, // sim AI i = 20+i degC
		{23, collector.Bad}, // fault flag set
		{1, collector.Good},
		{units.FToC(131), collector.Good}, // °F → °C, NIST SP 811
		{0, collector.Missing},
	}
	for i, w := range want {
		if rs[i].Point != refs[i].Name || rs[i].Quality != w.q || (w.q != collector.Missing && math.Abs(rs[i].Value-w.v) > 1e-4) {
			t.Errorf("%s: %+v, want %v %v", refs[i].Name, rs[i], w.v, w.q)
		}
	}
	var hist []collector.Reading
	res, err := src.SweepTrends(ctxT(t), func(r []collector.Reading) error { hist = append(hist, r...); return nil })
	if err != nil {
		t.Fatal(err)
	}
	if len(res) != 1 || len(hist) != 5 || !hist[4].At.Equal(t0.Add(4*time.Minute)) || math.Abs(hist[0].Value-units.FToC(131)) > 1e-4 {
		t.Errorf("trend sweep: %+v, %d readings %+v", res, len(hist), hist)
	}
}

func TestSourceRunEmits(t *testing.T) {
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 42}, 1)
	src, err := NewSource("bas", site.BACnetConfig{Bind: "127.0.0.1:0", PollInterval: 20 * time.Millisecond,
		Devices: map[uint32]string{42: s.Addr().String()}}, []site.PointRef{bref("X.ZNT", 42, "AI", 1, "degC", nil)}, nil, nil, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(ctxT(t))
	out := make(chan []collector.Reading)
	done := make(chan error, 1)
	go func() { done <- src.Run(ctx, out) }()
	for i := 0; i < 3; i++ {
		rs := <-out
		if len(rs) != 1 || rs[0].Value != 21 || rs[0].Quality != collector.Good {
			t.Fatalf("batch %d: %+v", i, rs)
		}
	}
	cancel()
	if err := <-done; err != nil {
		t.Fatal(err)
	}
}

func TestNewSourceReportsBadPoints(t *testing.T) {
	refs := []site.PointRef{bref("A.ZNT", 1, "analog-input", 1, "degC", nil), bref("B.ZNT", 1, "analog-thing", 1, "", nil)}
	src, err := NewSource("bas", site.BACnetConfig{}, refs, nil, nil, quietLogger())
	if err == nil || src == nil || len(src.points) != 1 {
		t.Fatalf("want one accepted point and an error naming B.ZNT, got %v", err)
	}
	if got := err.Error(); !contains(got, "B.ZNT") {
		t.Errorf("error %q does not name the point", got)
	}
}

func contains(s, sub string) bool {
	for i := 0; i+len(sub) <= len(s); i++ {
		if s[i:i+len(sub)] == sub {
			return true
		}
	}
	return false
}
