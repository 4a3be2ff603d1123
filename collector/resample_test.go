package collector

import (
	"math"
	"testing"
	"time"
)

var t0 = time.Date(2024, 1, 15, 8, 0, 0, 0, time.UTC)

func rd(min, sec float64, v float64, q Quality) Reading {
	return Reading{Point: "p", At: t0.Add(time.Duration((min*60 + sec) * float64(time.Second))), Value: v, Quality: q}
}

func TestResampleTimeWeightedMean(t *testing.T) {
	// Zero-order hold: 10 for 0:00–0:15, 20 for 0:15–0:45, 30 for 0:45–1:30.
	in := []Reading{rd(0, 0, 10, Good), rd(0, 15, 20, Good), rd(0, 45, 30, Good), rd(1, 30, 40, Good)}
	bins, dropped := Resample(in, false, ResampleConfig{})
	if dropped != 0 {
		t.Fatalf("dropped %d", dropped)
	}
	if len(bins) != 2 {
		t.Fatalf("got %d bins, want 2: %+v", len(bins), bins)
	}
	// Hand calculation from the definition ∑vΔt/∑Δt: (10·15 + 20·30 + 30·15)/60 = 20.
	if got := bins[0].Value; math.Abs(got-20) > 1e-12 || bins[0].Quality != Good {
		t.Errorf("step 0 = %v %v, want 20 good", got, bins[0].Quality)
	}
	// Step 1: 30 for 0:30 then 40 for 0:30 (held to the end of its step) → 35.
	if got := bins[1].Value; math.Abs(got-35) > 1e-12 {
		t.Errorf("step 1 = %v, want 35", got)
	}
	if !bins[0].Start.Equal(t0) || !bins[1].Start.Equal(t0.Add(time.Minute)) {
		t.Errorf("starts %v %v", bins[0].Start, bins[1].Start)
	}
}

func TestResampleGapIsMarkedNotBridged(t *testing.T) {
	cfg := ResampleConfig{MaxGap: 5 * time.Minute}
	in := []Reading{rd(0, 0, 10, Good), rd(20, 0, 50, Good)}
	bins, _ := Resample(in, false, cfg)
	if len(bins) != 21 {
		t.Fatalf("got %d bins, want 21 (0..20)", len(bins))
	}
	for i, b := range bins {
		want := Good
		if i >= 5 && i < 20 {
			want = Missing // beyond the 5-min hold
		}
		if b.Quality != want {
			t.Errorf("step %d quality %v, want %v", i, b.Quality, want)
		}
		if want == Good && i < 5 && b.Value != 10 {
			t.Errorf("step %d value %v, want held 10", i, b.Value)
		}
	}
	if bins[20].Value != 50 {
		t.Errorf("step 20 = %v, want 50", bins[20].Value)
	}
}

func TestResampleCoverageAndBad(t *testing.T) {
	// Good for 20 s then a Bad reading: coverage 1/3 < 0.5 → Bad step.
	in := []Reading{rd(0, 0, 10, Good), rd(0, 20, 0, Bad), rd(1, 0, 12, Good)}
	bins, _ := Resample(in, false, ResampleConfig{})
	if bins[0].Quality != Bad {
		t.Errorf("step 0 quality %v, want bad", bins[0].Quality)
	}
	if math.Abs(bins[0].Coverage-1.0/3) > 1e-12 {
		t.Errorf("coverage %v, want 1/3", bins[0].Coverage)
	}
	// Good for 40 s then Missing: coverage 2/3 ≥ 0.5 → the mean of the good part.
	in = []Reading{rd(0, 0, 10, Good), rd(0, 40, math.NaN(), Good), rd(1, 0, 12, Good)}
	bins, _ = Resample(in, false, ResampleConfig{})
	if bins[0].Quality != Good || bins[0].Value != 10 {
		t.Errorf("step 0 = %v %v, want 10 good", bins[0].Value, bins[0].Quality)
	}
}

func TestResampleBinaryLastValue(t *testing.T) {
	in := []Reading{rd(0, 0, 0, Good), rd(0, 10, 1, Good), rd(0, 50, 0, Good), rd(1, 5, 1, Good), rd(2, 30, 1, Good)}
	bins, _ := Resample(in, true, ResampleConfig{})
	want := []float64{0, 1, 1} // state at the end of each step
	if len(bins) != len(want) {
		t.Fatalf("got %d bins", len(bins))
	}
	for i, w := range want {
		if bins[i].Value != w || bins[i].Quality != Good {
			t.Errorf("step %d = %v %v, want %v", i, bins[i].Value, bins[i].Quality, w)
		}
	}
}

func TestResampleOutOfOrderDropped(t *testing.T) {
	in := []Reading{rd(0, 0, 10, Good), rd(2, 0, 10, Good), rd(1, 0, 99, Good), rd(3, 0, 10, Good)}
	bins, dropped := Resample(in, false, ResampleConfig{})
	if dropped != 1 {
		t.Errorf("dropped %d, want 1", dropped)
	}
	for _, b := range bins {
		if b.Value != 10 {
			t.Errorf("step %v = %v, the out-of-order 99 leaked", b.Start, b.Value)
		}
	}
}

func TestResamplerStreamingMatchesBatch(t *testing.T) {
	var in []Reading
	for i := 0; i < 500; i++ {
		in = append(in, rd(0, float64(i*17), math.Sin(float64(i)), Good))
	}
	batch, _ := Resample(in, false, ResampleConfig{})
	r := NewResampler(ResampleConfig{}, false)
	var got []Bin
	for _, x := range in {
		r.Add(x, func(b Bin) { got = append(got, b) })
		r.Advance(x.At, func(b Bin) { got = append(got, b) })
	}
	r.Advance(in[len(in)-1].At.Truncate(time.Minute).Add(time.Minute), func(b Bin) { got = append(got, b) })
	if len(got) != len(batch) {
		t.Fatalf("streaming %d bins, batch %d", len(got), len(batch))
	}
	for i := range got {
		if got[i] != batch[i] && !(math.IsNaN(got[i].Value) && math.IsNaN(batch[i].Value)) {
			t.Fatalf("bin %d: %+v vs %+v", i, got[i], batch[i])
		}
	}
}

func BenchmarkResamplerAdd(b *testing.B) {
	r := NewResampler(ResampleConfig{}, false)
	var n int
	emit := func(int64, float64, Quality, float64) { n++ }
	at := t0.UnixNano()
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		r.s.add(&r.g, at+int64(i)*int64(15*time.Second), float64(i%7), Good, emit)
	}
	_ = n
}
