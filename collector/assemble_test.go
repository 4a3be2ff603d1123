package collector

import (
	"context"
	"fmt"
	"math"
	"testing"
	"time"

	"risewatch/site"
)

func tp(name, src string) site.PointRef {
	return site.PointRef{Name: name, Kind: site.PointTrendColumn, Source: src, Column: name}
}

// testSite: one loop without a supply point (design 82 °C), one AHU, n terminals.
func testSite(n int) *site.Site {
	s := &site.Site{Name: "test",
		Loops: []site.Loop{{ID: "HW-1", DesignSupplyC: 82, PlantEnabled: tp("HW-1.EN", "b")}},
		AHUs:  []site.AHU{{ID: "AHU-1", SupplyAir: tp("AHU-1.SAT", "b"), FanStatus: tp("AHU-1.FAN", "b")}},
	}
	for i := 0; i < n; i++ {
		id := fmt.Sprintf("VAV-%d", i)
		s.Terminals = append(s.Terminals, site.Terminal{ID: id, AHU: "AHU-1", Loop: "HW-1",
			Points: site.TerminalPoints{Airflow: tp(id+".FLOW", "a"), Discharge: tp(id+".DAT", "a"), Valve: tp(id+".VLV", "a")}})
	}
	s.LoopIndex = map[string]int{"HW-1": 0}
	s.AHUIndex = map[string]int{"AHU-1": 0}
	return s
}

func at(min int) time.Time { return t0.Add(time.Duration(min) * time.Minute) }

func TestAssemblerWaitsForAllSources(t *testing.T) {
	s := testSite(2)
	a, err := NewAssembler(s, AssembleConfig{Sources: []string{"a", "b"}})
	if err != nil {
		t.Fatal(err)
	}
	var steps [][]Sample
	emit := func(ss []Sample) { steps = append(steps, append([]Sample(nil), ss...)) }
	var batchA []Reading
	for m := 0; m <= 10; m++ {
		for i := 0; i < 2; i++ {
			id := fmt.Sprintf("VAV-%d", i)
			batchA = append(batchA,
				Reading{Point: id + ".FLOW", At: at(m), Value: 0.2, Quality: Good},
				Reading{Point: id + ".DAT", At: at(m), Value: 30 + float64(i), Quality: Good},
				Reading{Point: id + ".VLV", At: at(m), Value: 0.5, Quality: Good})
		}
	}
	a.Add("a", batchA, emit)
	if len(steps) != 0 {
		t.Fatalf("emitted %d steps before source b reported", len(steps))
	}
	a.Add("b", []Reading{
		{Point: "AHU-1.SAT", At: at(0), Value: 13, Quality: Good},
		{Point: "AHU-1.FAN", At: at(0), Value: 1, Quality: Good},
		{Point: "HW-1.EN", At: at(0), Value: 1, Quality: Good},
		{Point: "AHU-1.SAT", At: at(5), Value: 14, Quality: Good},
	}, emit)
	// b is at 0:05: steps 0..4 are complete.
	if len(steps) != 5 {
		t.Fatalf("emitted %d steps, want 5", len(steps))
	}
	s0 := steps[0][1]
	if s0.Terminal != 1 || s0.DischargeC != 31 || s0.SupplyC != 13 || !s0.FanOn || !s0.PlantOn || s0.ValveFrac != 0.5 {
		t.Errorf("sample %+v", s0)
	}
	if s0.HotWaterC != 82 || s0.Flags&FlagHotWater != 0 {
		t.Errorf("hot water %v flags %b: want the loop's design value 82", s0.HotWaterC, s0.Flags)
	}
	want := FlagAirflowSet | FlagZone | FlagZoneSet | FlagOccupied | FlagOutdoor
	if s0.Flags != want {
		t.Errorf("flags %b, want %b (unconfigured fields)", s0.Flags, want)
	}
	a.SourceDone("b", emit)
	a.SourceDone("a", emit)
	// Steps 5..10 flushed; SAT 14 held within MaxGap.
	if len(steps) != 11 {
		t.Fatalf("after done: %d steps, want 11", len(steps))
	}
	if got := steps[10][0].SupplyC; got != 14 {
		t.Errorf("step 10 SAT %v, want held 14", got)
	}
	if st := a.Stats(); st.Late != 0 || st.UnknownPoint != 0 || st.ForcedSteps != 0 {
		t.Errorf("stats %+v", st)
	}
}

func TestAssemblerLatenessForcesSteps(t *testing.T) {
	s := testSite(1)
	a, _ := NewAssembler(s, AssembleConfig{Sources: []string{"a", "b"}, Lateness: 10 * time.Minute})
	n := 0
	emit := func(ss []Sample) {
		n++
		if ss[0].Flags&FlagSupply == 0 {
			t.Errorf("step %v has SAT though source b never sent", ss[0].At)
		}
	}
	for m := 0; m < 60; m++ {
		a.Add("a", []Reading{{Point: "VAV-0.DAT", At: at(m), Value: 30, Quality: Good}}, emit)
	}
	if n < 40 || n > 50 {
		t.Errorf("emitted %d steps with a 10-min lateness over 60 min", n)
	}
	// A reading from b older than what was emitted is late, not applied.
	a.Add("b", []Reading{{Point: "AHU-1.SAT", At: at(1), Value: 13, Quality: Good}}, emit)
	if a.Stats().Late != 1 {
		t.Errorf("late = %d, want 1", a.Stats().Late)
	}
	if a.Stats().ForcedSteps == 0 {
		t.Error("no forced steps counted")
	}
}

func TestAssemblerRun(t *testing.T) {
	s := testSite(3)
	srcA := sliceSource{name: "a"}
	srcB := sliceSource{name: "b"}
	for m := 0; m < 30; m++ {
		var ba, bb []Reading
		for i := 0; i < 3; i++ {
			ba = append(ba, Reading{Point: fmt.Sprintf("VAV-%d.DAT", i), At: at(m), Value: float64(m), Quality: Good})
		}
		bb = append(bb, Reading{Point: "AHU-1.SAT", At: at(m), Value: 13, Quality: Good})
		srcA.batches = append(srcA.batches, ba)
		srcB.batches = append(srcB.batches, bb)
	}
	a, _ := NewAssembler(s, AssembleConfig{})
	out := make(chan []Sample, 100)
	if err := a.Run(context.Background(), []Source{srcA, srcB}, out); err != nil {
		t.Fatal(err)
	}
	close(out)
	k := 0
	for ss := range out {
		if len(ss) != 3 || !ss[0].At.Equal(at(k)) || ss[2].DischargeC != float64(k) || ss[2].SupplyC != 13 {
			t.Fatalf("step %d: %+v", k, ss)
		}
		k++
	}
	if k != 30 {
		t.Errorf("got %d steps, want 30", k)
	}
}

type sliceSource struct {
	name    string
	batches [][]Reading
}

func (s sliceSource) Name() string { return s.name }
func (s sliceSource) Run(ctx context.Context, out chan<- []Reading) error {
	for _, b := range s.batches {
		select {
		case out <- b:
		case <-ctx.Done():
			return ctx.Err()
		}
	}
	return nil
}

// BenchmarkAssemble2000 feeds a 2,000-terminal site (6 points each plus the
// AHU and loop points) one hour of 1-min readings per op.
func BenchmarkAssemble2000(b *testing.B) {
	const n = 2000
	s := testSite(n)
	a, err := NewAssembler(s, AssembleConfig{Sources: []string{"a", "b"}})
	if err != nil {
		b.Fatal(err)
	}
	names := make([]string, 0, 3*n)
	for i := 0; i < n; i++ {
		id := fmt.Sprintf("VAV-%d", i)
		names = append(names, id+".FLOW", id+".DAT", id+".VLV")
	}
	batch := make([]Reading, len(names))
	bb := make([]Reading, 3)
	var sum float64
	emit := func(ss []Sample) { sum += ss[0].DischargeC }
	b.ReportAllocs()
	m := 0
	for b.Loop() {
		for k := 0; k < 60; k++ {
			t := at(m)
			for i, nm := range names {
				batch[i] = Reading{Point: nm, At: t, Value: float64(i % 40), Quality: Good}
			}
			bb[0] = Reading{Point: "AHU-1.SAT", At: t, Value: 13}
			bb[1] = Reading{Point: "AHU-1.FAN", At: t, Value: 1}
			bb[2] = Reading{Point: "HW-1.EN", At: t, Value: 1}
			a.Add("a", batch, emit)
			a.Add("b", bb, emit)
			m++
		}
	}
	b.ReportMetric(float64(b.N*60)/b.Elapsed().Seconds(), "steps/s")
	if math.IsNaN(sum) {
		b.Log("nan")
	}
}

// heldSlots counts the ring slots holding step values and the spare ones.
func heldSlots(a *Assembler) (held, spare int) {
	for _, sl := range a.slots {
		if sl != nil {
			held++
		}
	}
	return held, len(a.spare)
}

// A source lagging by 40 minutes makes the ring hold a slot per buffered
// step; once it catches up the slots are released down to the few kept for
// reuse, and a live feed then holds only the steps just ahead of the
// emitted one. The emitted values are the same either way.
func TestAssemblerRingSlotsOnDemand(t *testing.T) {
	s := testSite(2)
	a, err := NewAssembler(s, AssembleConfig{Sources: []string{"a", "b"}})
	if err != nil {
		t.Fatal(err)
	}
	var steps [][]Sample
	emit := func(ss []Sample) { steps = append(steps, append([]Sample(nil), ss...)) }
	termReadings := func(m int) []Reading {
		var out []Reading
		for i := 0; i < 2; i++ {
			id := fmt.Sprintf("VAV-%d", i)
			out = append(out,
				Reading{Point: id + ".FLOW", At: at(m), Value: 0.2 + 0.001*float64(m), Quality: Good},
				Reading{Point: id + ".DAT", At: at(m), Value: 30 + float64(i) + 0.1*float64(m), Quality: Good},
				Reading{Point: id + ".VLV", At: at(m), Value: 0.5, Quality: Good})
		}
		return out
	}
	ahu := func(m int) []Reading {
		return []Reading{
			{Point: "AHU-1.SAT", At: at(m), Value: 13, Quality: Good},
			{Point: "AHU-1.FAN", At: at(m), Value: 1, Quality: Good},
			{Point: "HW-1.EN", At: at(m), Value: 1, Quality: Good},
		}
	}
	a.Add("b", ahu(0), emit)
	for m := 0; m <= 40; m++ {
		a.Add("a", termReadings(m), emit)
	}
	if len(steps) != 0 {
		t.Fatalf("emitted %d steps while source b lags", len(steps))
	}
	if held, _ := heldSlots(a); held < 38 {
		t.Fatalf("%d ring slots held for 40 buffered steps, want one per step", held)
	}
	for m := 1; m <= 40; m++ {
		a.Add("b", ahu(m), emit)
	}
	if len(steps) != 40 {
		t.Fatalf("emitted %d steps after b caught up, want 40", len(steps))
	}
	if held, spare := heldSlots(a); held > 2 || spare > keepSlots {
		t.Fatalf("after catching up: %d slots held, %d spare; want at most 2 and %d", held, spare, keepSlots)
	}
	for m := 41; m <= 100; m++ {
		a.Add("a", termReadings(m), emit)
		a.Add("b", ahu(m), emit)
		if held, spare := heldSlots(a); held > 2 || spare > keepSlots {
			t.Fatalf("live at minute %d: %d slots held, %d spare", m, held, spare)
		}
	}
	if len(steps) != 100 {
		t.Fatalf("emitted %d steps, want 100", len(steps))
	}
	for k, st := range steps {
		for i, smp := range st {
			if wantDAT := 30 + float64(i) + 0.1*float64(k); math.Abs(smp.DischargeC-wantDAT) > 1e-9 || smp.SupplyC != 13 || !smp.FanOn {
				t.Fatalf("step %d terminal %d: %+v, want DAT %.1f, SAT 13, fan on", k, i, smp, wantDAT)
			}
		}
	}
}
