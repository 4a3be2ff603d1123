package sim

import (
	"context"
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// TestTruePeaks: true_peaks.csv keeps its original columns first (other
// tools read them by position), and its occupied and steady-hour peaks
// agree with an independent recomputation from Step.True: hourly means of
// the coil load over hours wholly occupied and at least SteadyAfterOccupied
// into the occupied period, grouped here by the local date and hour.
func TestTruePeaks(t *testing.T) {
	sc := loadTest(t, testScenario).WithoutFaults()
	dir := t.TempDir()
	s, err := New(sc)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.WriteOutputs(context.Background(), dir); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(filepath.Join(dir, PeaksFile))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	// The header the file had before the occupied and steady columns.
	const original = "terminal,loop,design_load_w,peak_coil_load_w,peak_coil_load_at,peak_heat_delivered_w,rated_capacity_w"
	if got := strings.Join(recs[0][:7], ","); got != original {
		t.Fatalf("leading columns changed:\n got %s\nwant %s", got, original)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}

	// Independent recomputation from the steps.
	type hourKey struct {
		term int
		at   time.Time
	}
	type acc struct {
		n          int
		load, heat float64
		steady     bool
	}
	hours := map[hourKey]*acc{}
	occPeak := make([]float64, s.Terminals())
	occSince := make([]time.Time, s.Terminals())
	s2, err := New(sc)
	if err != nil {
		t.Fatal(err)
	}
	err = s2.Run(context.Background(), func(st *Step) error {
		for i := range st.Terminals {
			tr := &st.Terminals[i].True
			ahuOcc := false
			for ai := range sc.AHUs {
				for _, ts := range sc.AHUs[ai].Terminals {
					if ts.ID == st.Terminals[i].ID {
						ahuOcc = st.AHUs[ai].Occupied
					}
				}
			}
			if tr.Occupied != ahuOcc {
				t.Fatalf("%s at %s: Step.True.Occupied %v, its AHU %v", st.Terminals[i].ID, st.At, tr.Occupied, ahuOcc)
			}
			if !tr.Occupied {
				occSince[i] = time.Time{}
			} else if occSince[i].IsZero() {
				occSince[i] = st.At
			}
			if tr.Occupied {
				occPeak[i] = math.Max(occPeak[i], tr.CoilLoadW)
			}
			y, m, d := st.At.Date()
			k := hourKey{i, time.Date(y, m, d, st.At.Hour(), 0, 0, 0, st.At.Location())}
			a := hours[k]
			if a == nil {
				a = &acc{steady: true}
				hours[k] = a
			}
			a.n++
			a.load += tr.CoilLoadW
			a.heat += tr.HeatW
			if !tr.Occupied || st.At.Sub(occSince[i]) < SteadyAfterOccupied {
				a.steady = false
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	perHour := int(time.Hour / sc.StepDuration())
	for i, r := range recs[1:] {
		num := func(name string) float64 {
			v, err := strconv.ParseFloat(r[col[name]], 64)
			if err != nil {
				t.Fatalf("%s %s: %v", r[0], name, err)
			}
			return v
		}
		wantLoad, wantHeat := 0.0, 0.0
		var wantAt time.Time
		for k, a := range hours {
			if k.term != i || !a.steady || a.n != perHour {
				continue
			}
			if l := a.load / float64(a.n); l > wantLoad {
				wantLoad, wantAt = l, k.at
			}
			wantHeat = math.Max(wantHeat, a.heat/float64(a.n))
		}
		if wantAt.IsZero() {
			t.Fatalf("%s: no steady occupied hour in the scenario", r[0])
		}
		// The file rounds to whole watts.
		if got := num("steady_peak_coil_load_w"); math.Abs(got-wantLoad) > 0.5 {
			t.Errorf("%s: steady_peak_coil_load_w %.0f, recomputed %.1f", r[0], got, wantLoad)
		}
		if got := num("steady_peak_heat_delivered_w"); math.Abs(got-wantHeat) > 0.5 {
			t.Errorf("%s: steady_peak_heat_delivered_w %.0f, recomputed %.1f", r[0], got, wantHeat)
		}
		if got := r[col["steady_peak_at"]]; got != wantAt.Format(time.RFC3339) {
			t.Errorf("%s: steady_peak_at %s, recomputed %s", r[0], got, wantAt.Format(time.RFC3339))
		}
		if got := num("peak_occupied_coil_load_w"); math.Abs(got-occPeak[i]) > 0.5 {
			t.Errorf("%s: peak_occupied_coil_load_w %.0f, recomputed %.1f", r[0], got, occPeak[i])
		}
		// Ordering: an hourly mean cannot exceed the largest step of the
		// occupied hours, nor that the all-hours peak.
		steady, occ, all := num("steady_peak_coil_load_w"), num("peak_occupied_coil_load_w"), num("peak_coil_load_w")
		if steady > occ+0.5 || occ > all+0.5 {
			t.Errorf("%s: steady %.0f, occupied %.0f, all-hours %.0f W: want steady ≤ occupied ≤ all", r[0], steady, occ, all)
		}
	}
}
