package daemon

import (
	"context"
	"encoding/binary"
	"math"
	"testing"
	"time"

	"risewatch/store"
)

// TestSeriesRingWindow: closed hours keep their means to the fixed-point
// step, hours older than the eight-day window disappear as new ones
// arrive, a gap leaves no stale hours, and older evidence is dropped.
func TestSeriesRingWindow(t *testing.T) {
	r := newSeriesRing(1)
	t0 := time.Date(2025, 1, 13, 0, 0, 0, 0, time.UTC)
	at := func(h int) time.Time { return t0.Add(time.Duration(h) * time.Hour) }
	for h := 0; h < 10; h++ {
		ev := evidenceAt(0, at(h), 10+float64(h)/1000) // 0.001 K steps: below the 0.01 K resolution
		ev[0].ValveFrac = 0.12345
		r.add(ev)
	}
	pts := ringPoints(t, r, 0, at(0), at(10))
	if len(pts) != 10 {
		t.Fatalf("%d hours, want 10", len(pts))
	}
	for h, p := range pts[:9] { // closed hours: rounded to 0.01 K and 0.0001
		if want := math.Round((10+float64(h)/1000)*100) / 100; p.ObservedRiseK != want {
			t.Errorf("hour %d: rise %v, want %v", h, p.ObservedRiseK, want)
		}
		if p.ValveFrac != 0.1235 || !math.IsNaN(p.AirflowM3s) {
			t.Errorf("hour %d: valve %v airflow %v, want 0.1235 and NaN", h, p.ValveFrac, p.AirflowM3s)
		}
	}
	if d := pts[9].ObservedRiseK - 10.009; math.Abs(d) > 1e-5 { // the open hour: float32 mean so far
		t.Errorf("open hour mean %v, want 10.009", pts[9].ObservedRiseK)
	}
	r.add(evidenceAt(0, at(3), 99)) // older than the open hour: dropped
	if p := ringPoints(t, r, 0, at(3), at(4)); len(p) != 1 || p[0].ObservedRiseK != 10 {
		t.Errorf("older evidence changed hour 3: %+v", p)
	}
	// A gap of 190 hours: hours 0..8 fall out of the window, nothing stale
	// is left inside it; later hours push out the rest.
	r.add(evidenceAt(0, at(200), 5))
	r.add(evidenceAt(0, at(201), 6))
	// Hour 200 closed: the window is hours 9..200, and 201 is open.
	if got := ringPoints(t, r, 0, at(0), at(10)); len(got) != 1 || !got[0].At.Equal(at(9)) {
		t.Fatalf("after the gap, hours 0..9: %+v, want hour 9 only", got)
	}
	if got := ringPoints(t, r, 0, at(10), at(202)); len(got) != 2 || !got[0].At.Equal(at(200)) || got[1].ObservedRiseK != 6 {
		t.Fatalf("after the gap, hours 10..201: %+v, want 200 and 201 (no stale hours)", got)
	}
	r.add(evidenceAt(0, at(230), 7))
	if got := ringPoints(t, r, 0, at(0), at(231)); len(got) != 3 || !got[0].At.Equal(at(200)) {
		t.Fatalf("after 230: %+v", got)
	}
}

// TestSeriesBlobVersion1: a blob written by the first layout (28-octet hours
// of sums and counts) restores, its newest hour going on as the open one.
func TestSeriesBlobVersion1(t *testing.T) {
	t0 := time.Date(2025, 1, 13, 0, 0, 0, 0, time.UTC)
	h0 := unixHour(t0)
	b := []byte{seriesBlobV1}
	for k, sum := range []float32{120, 60} { // hour 0: 60 steps of 2 K, hour 1: 30 steps of 2 K
		n := uint16(60 / (k + 1))
		b = binary.LittleEndian.AppendUint32(b, uint32(h0+int32(k)))
		for range 4 {
			b = binary.LittleEndian.AppendUint16(b, n)
		}
		for range 4 {
			b = binary.LittleEndian.AppendUint32(b, math.Float32bits(sum))
		}
	}
	r := newSeriesRing(1)
	if err := r.unmarshal(0, b); err != nil {
		t.Fatal(err)
	}
	r.add(evidenceAt(0, t0.Add(90*time.Minute), 5)) // one more step in hour 1: (60 + 5) / 31
	pts := ringPoints(t, r, 0, t0, t0.Add(2*time.Hour))
	if len(pts) != 2 || pts[0].ObservedRiseK != 2 || math.Abs(pts[1].ObservedRiseK-65.0/31) > 1e-5 {
		t.Fatalf("restored %+v", pts)
	}
	r2 := newSeriesRing(1)
	if err := r2.unmarshal(0, r.marshal(0)); err != nil {
		t.Fatal(err)
	}
	if got := ringPoints(t, r2, 0, t0, t0.Add(2*time.Hour)); len(got) != 2 || got[0] != pts[0] || math.Abs(got[1].ObservedRiseK-pts[1].ObservedRiseK) > 1e-9 {
		t.Errorf("version 2 round trip: %+v, want %+v", got, pts)
	}
	if err := r2.unmarshal(0, []byte{seriesBlobV2, 1, 2}); err == nil {
		t.Error("truncated blob accepted")
	}
}

// ringPoints is seriesRing.points, failing the test on a store error.
func ringPoints(t testing.TB, r *seriesRing, ti int, from, to time.Time) []SeriesPoint {
	t.Helper()
	pts, err := r.points(context.Background(), ti, from, to)
	if err != nil {
		t.Fatal(err)
	}
	return pts
}

// TestSeriesRingStored: with a store behind it the ring keeps only the
// hours closed since the last save; the dashboard's points, a restart
// (a fresh ring restored from the store) and an unbacked ring agree hour
// for hour across saves, and hours leave the window in the store too.
func TestSeriesRingStored(t *testing.T) {
	ctx := context.Background()
	st, err := store.Open(ctx, t.TempDir(), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	ids := func(ti int) string { return []string{"VAV-A", "VAV-B"}[ti] }
	backed, plain := newSeriesRing(2), newSeriesRing(2)
	backed.load = storedSeries(st, ids)
	t0 := time.Date(2025, 1, 13, 0, 0, 0, 0, time.UTC)
	at := func(m int) time.Time { return t0.Add(time.Duration(m) * 10 * time.Minute) }
	compare := func(what string, r *seriesRing, to time.Time) {
		t.Helper()
		for ti := range 2 {
			got, want := ringPoints(t, r, ti, t0, to), ringPoints(t, plain, ti, t0, to)
			if len(got) != len(want) || len(want) == 0 {
				t.Fatalf("%s, terminal %d: %d hours, want %d", what, ti, len(got), len(want))
			}
			for i := range want {
				if got[i].At != want[i].At || got[i].ObservedRiseK != want[i].ObservedRiseK {
					t.Fatalf("%s, terminal %d, hour %d: %+v, want %+v", what, ti, i, got[i], want[i])
				}
			}
		}
	}
	step := 0
	run := func(steps int) {
		for ; steps > 0; steps-- {
			for ti := range 2 {
				ev := evidenceAt(ti, at(step), float64(step%17)+float64(ti)/4)
				backed.add(ev)
				plain.add(ev)
			}
			step++
		}
	}
	run(6 * 30) // 30 hours
	if err := saveSeries(ctx, st, backed, ids, nil); err != nil {
		t.Fatal(err)
	}
	for ti := range 2 {
		if n := len(backed.pend[ti]); n != 0 {
			t.Errorf("terminal %d: %d closed hours still in memory after the save", ti, n)
		}
	}
	compare("after the first save", backed, at(step))
	run(6 * 5) // five hours more, not saved: store + memory
	compare("five hours after the save", backed, at(step))
	if err := saveSeries(ctx, st, backed, ids, nil); err != nil {
		t.Fatal(err)
	}
	restored := newSeriesRing(2)
	restored.load = storedSeries(st, ids)
	if err := loadSeries(ctx, st, restored, map[string]int{"VAV-A": 0, "VAV-B": 1}); err != nil {
		t.Fatal(err)
	}
	compare("restored", restored, at(step))
	run(6 * 200) // past the eight-day window, saved on the way
	for range 3 {
		if err := saveSeries(ctx, st, backed, ids, nil); err != nil {
			t.Fatal(err)
		}
		run(6 * 20)
	}
	compare("past the window", backed, at(step))
	// Asked for more than the window: the newest SeriesHours hours, the
	// open one (294) and 191 closed ones.
	if got := ringPoints(t, backed, 0, t0, at(step)); len(got) != SeriesHours || !got[0].At.Equal(t0.Add(103*time.Hour)) {
		t.Errorf("%d hours from %v after 295, want %d from hour 103", len(got), got[0].At, SeriesHours)
	}
	raw, _, _, err := st.TerminalBlob(ctx, "VAV-A", BlobSeries)
	if err != nil {
		t.Fatal(err)
	}
	closed, _, err := decodeSeries(raw)
	if err != nil || len(closed) == 0 {
		t.Fatalf("stored blob: %v, %d hours", err, len(closed))
	}
	if first, last := closed[0].hour, closed[len(closed)-1].hour; last-first >= SeriesHours {
		t.Errorf("stored blob holds hours %d to %d: more than the window", first-unixHour(t0), last-unixHour(t0))
	}
}
