package trendfile

import (
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// samplesFrom runs a trend source through the assembler.
func samplesFrom(t *testing.T, s *site.Site, c site.TrendfileConfig) []collector.Sample {
	t.Helper()
	src := newSource(t, s, c)
	a, err := collector.NewAssembler(s, collector.AssembleConfig{Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	out := make(chan []collector.Sample, 1024)
	if err := a.Run(t.Context(), []collector.Source{src}, out); err != nil {
		t.Fatal(err)
	}
	close(out)
	var all []collector.Sample
	for ss := range out {
		all = append(all, ss...)
	}
	return all
}

func sameFloat(a, b float64) bool { return a == b || (math.IsNaN(a) && math.IsNaN(b)) }

// TestGoldenWideEqualsLong: the same data in wide and long layout gives
// identical samples (same values, flags and times, bit for bit).
func TestGoldenWideEqualsLong(t *testing.T) {
	s := genSite(4)
	dir := t.TempDir()
	wide, long := filepath.Join(dir, "wide.csv"), filepath.Join(dir, "long.csv")
	step := 40 * time.Second // off the 1-min grid, so the time-weighted mean matters
	for _, x := range []struct {
		path string
		w    func(*os.File) error
	}{
		{wide, func(f *os.File) error { return writeWide(f, s, start, step, 300) }},
		{long, func(f *os.File) error { return writeLong(f, s, start, step, 300) }},
	} {
		f, err := os.Create(x.path)
		if err != nil {
			t.Fatal(err)
		}
		if err := x.w(f); err != nil {
			t.Fatal(err)
		}
		f.Close()
	}
	sw := samplesFrom(t, s, site.TrendfileConfig{Path: wide})
	sl := samplesFrom(t, s, site.TrendfileConfig{Path: long, Layout: LayoutLong})
	// 300 rows × 40 s = 200 min of data → 200 steps × 4 terminals.
	if len(sw) != 200*4 {
		t.Fatalf("wide gave %d samples, want 800", len(sw))
	}
	if len(sw) != len(sl) {
		t.Fatalf("wide %d samples, long %d", len(sw), len(sl))
	}
	for i := range sw {
		a, b := sw[i], sl[i]
		if a.Terminal != b.Terminal || !a.At.Equal(b.At) || a.Flags != b.Flags || a.PlantOn != b.PlantOn || a.FanOn != b.FanOn ||
			!sameFloat(a.AirflowM3s, b.AirflowM3s) || !sameFloat(a.DischargeC, b.DischargeC) || !sameFloat(a.SupplyC, b.SupplyC) ||
			!sameFloat(a.ValveFrac, b.ValveFrac) || !sameFloat(a.HotWaterC, b.HotWaterC) || !sameFloat(a.ZoneC, b.ZoneC) {
			t.Fatalf("sample %d differs:\nwide %+v\nlong %+v", i, a, b)
		}
	}
	// The samples carry real data: the first terminal's first step has
	// every configured field.
	have := collector.FlagAirflow | collector.FlagDischarge | collector.FlagSupply | collector.FlagValve |
		collector.FlagHotWater | collector.FlagPlant | collector.FlagFan | collector.FlagZone
	if f := sw[0].Flags & have; f != 0 {
		t.Errorf("first sample flags %b", sw[0].Flags)
	}
}
