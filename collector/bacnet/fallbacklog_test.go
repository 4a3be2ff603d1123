package bacnet

import (
	"log/slog"
	"testing"
	"time"

	"risewatch/sim/bacnetdev"
	"risewatch/site"
)

// TestFallbackLoggedOnce: a device that rejects ReadPropertyMultiple is
// named in one log line (at Info and above) however often it is polled.
func TestFallbackLoggedOnce(t *testing.T) {
	s, _ := newSim(t, bacnetdev.DeviceConfig{Instance: 44, Misbehaviour: bacnetdev.Misbehaviour{RejectRPM: true}}, 2)
	var buf lockedBuf
	log := slog.New(slog.NewTextHandler(&buf, &slog.HandlerOptions{Level: slog.LevelInfo}))
	src, err := NewSource("bas", site.BACnetConfig{Bind: "127.0.0.1:0", Timeout: time.Second, Retries: 1,
		Devices: map[uint32]string{44: s.Addr().String()}},
		[]site.PointRef{bref("X.ZNT", 44, "analog-input", 1, "degC", nil), bref("X.DAT", 44, "analog-input", 2, "degC", nil)}, nil, nil, log)
	if err != nil {
		t.Fatal(err)
	}
	if err := src.Start(ctxT(t)); err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	for i := 0; i < 3; i++ {
		rs, err := src.PollOnce(ctxT(t))
		if err != nil || len(rs) != 2 || rs[0].Value != 21 || rs[1].Value != 22 {
			t.Fatalf("poll %d through ReadProperty: %+v, %v", i, rs, err)
		}
	}
	if n := buf.count("ReadProperty"); n != 1 {
		t.Fatalf("%d lines about the fallback, want 1:\n%s", n, buf.b.String())
	}
	if n := buf.count("ReadProperty", "source=bas", "device=44", "address="+s.Addr().String()); n != 1 {
		t.Errorf("the fallback line does not name the source, device and address:\n%s", buf.b.String())
	}
}
