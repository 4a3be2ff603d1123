package bacnet

import (
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/sim/bacnetdev"
	"risewatch/site"
)

// TestSweepInterleavesByTime: six hours of one-minute history in three trend
// logs on two devices (one behind a router) reach an assembler whose
// lateness window is ten minutes without a single reading counted late,
// every step has every point, and a second sweep after more records
// delivers only the new ones.
func TestSweepInterleavesByTime(t *testing.T) {
	t.Run("batch-checkpoints", func(t *testing.T) { testSweepInterleaves(t, &MemCheckpoints{}) })
	t.Run("one-put-per-log", func(t *testing.T) { testSweepInterleaves(t, plainCheckpoints{&MemCheckpoints{}}) })
}

// plainCheckpoints hides PutMany: the sweep stores each log's position alone.
type plainCheckpoints struct{ m *MemCheckpoints }

func (p plainCheckpoints) Get(k string) ([]byte, bool, error) { return p.m.Get(k) }
func (p plainCheckpoints) Put(k string, v []byte) error       { return p.m.Put(k, v) }

func testSweepInterleaves(t *testing.T, cp Checkpoints) {
	s, devA := newSim(t, bacnetdev.DeviceConfig{Instance: 50, MaxAPDU: 480}, 2)
	devB, err := s.AddDevice(bacnetdev.DeviceConfig{Instance: 51, Network: 7, MAC: 3, MaxAPDU: 206})
	if err != nil {
		t.Fatal(err)
	}
	devB.AddObject(bacnetdev.Object{ID: ai(1), Units: uint32(UnitDegreesCelsius)})
	devA.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Logged: ai(1), BufferSize: 2000})
	devA.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 2, Logged: ai(2), BufferSize: 2000})
	devB.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Logged: ai(1), BufferSize: 2000})
	t0 := time.Date(2025, 1, 14, 6, 0, 0, 0, time.UTC)
	minutes := 0
	fill := func(n int) {
		for k := 0; k < n; k++ {
			at := t0.Add(time.Duration(minutes) * time.Minute)
			v := float64(minutes)
			_ = devA.SetValue(ai(1), 20+v/100)
			_ = devA.SetValue(ai(2), 30+v/100)
			_ = devB.SetValue(ai(1), 40+v/100)
			devA.Advance(at)
			devB.Advance(at)
			minutes++
		}
	}
	fill(360)
	one, two := uint32(1), uint32(2)
	refs := []site.PointRef{
		bref("VAV-1.DAT", 50, "analog-input", 1, "degC", &one),
		bref("VAV-1.ZNT", 50, "analog-input", 2, "degC", &two),
		bref("AHU-1.SAT", 51, "analog-input", 1, "degC", &one),
	}
	st := &site.Site{Name: "sweep", Terminals: []site.Terminal{{ID: "VAV-1", AHU: "AHU-1",
		Points: site.TerminalPoints{Discharge: refs[0], ZoneTemp: refs[1]}}},
		AHUs: []site.AHU{{ID: "AHU-1", SupplyAir: refs[2]}}}
	st.Index()
	src, err := NewSource("bas", site.BACnetConfig{Bind: "127.0.0.1:0", Timeout: time.Second, Retries: 1,
		Devices: map[uint32]string{50: s.Addr().String(), 51: s.Addr().String() + "/7:03"}}, refs, cp, time.UTC, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	if err := src.Start(ctxT(t)); err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	asm, err := collector.NewAssembler(st, collector.AssembleConfig{Lateness: 10 * time.Minute, Sources: []string{"bas"}, Logger: quietLogger()})
	if err != nil {
		t.Fatal(err)
	}
	var steps []collector.Sample
	emitSteps := func(ss []collector.Sample) { steps = append(steps, ss...) }
	batches := 0
	var prev time.Time
	sweep := func() int {
		n := 0
		_, err := src.SweepTrends(ctxT(t), func(rs []collector.Reading) error {
			batches++
			for _, r := range rs {
				if r.At.Before(prev) {
					t.Fatalf("reading %s at %v after one at %v: not in time order", r.Point, r.At, prev)
				}
				prev = r.At
			}
			n += len(rs)
			asm.Add("bas", rs, emitSteps)
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		return n
	}
	if n := sweep(); n != 3*360 {
		t.Fatalf("first sweep delivered %d readings, want %d", n, 3*360)
	}
	fill(30)
	if n := sweep(); n != 3*30 {
		t.Fatalf("second sweep delivered %d readings, want the 90 new ones", n)
	}
	asm.Flush(emitSteps)
	if stt := asm.Stats(); stt.Late != 0 || stt.Readings != 3*390 {
		t.Fatalf("assembler: %+v; want no late reading and all %d accepted", stt, 3*390)
	}
	if batches < 3 {
		t.Errorf("%d batches: the sweep did not page in lockstep", batches)
	}
	if len(steps) != 390 {
		t.Fatalf("%d steps, want 390", len(steps))
	}
	for i, sm := range steps {
		if sm.Flags&(collector.FlagDischarge|collector.FlagZone|collector.FlagSupply) != 0 {
			t.Fatalf("step %d (%v): flags %b: a point is missing", i, sm.At, sm.Flags)
		}
		// The logged values are 20, 30, 40 °C plus minutes/100 (set above).
		want := float64(i) / 100
		if d := sm.DischargeC - (20 + want); d > 1e-3 || d < -1e-3 {
			t.Fatalf("step %d: DAT %g, want %g", i, sm.DischargeC, 20+want)
		}
		if d := sm.SupplyC - (40 + want); d > 1e-3 || d < -1e-3 {
			t.Fatalf("step %d: SAT %g, want %g", i, sm.SupplyC, 40+want)
		}
	}
}
