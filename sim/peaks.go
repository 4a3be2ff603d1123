package sim

import (
	"fmt"
	"os"
	"time"
)

// SteadyAfterOccupied is how long after the start of an occupied period the
// steady-hour peaks of true_peaks.csv begin: the morning warm-up leaves the
// zone mass cold, and recovering it dominates the coil load for about the
// first hour of occupancy (common practice for excluding pick-up load from
// a sustained-load estimate).
const SteadyAfterOccupied = time.Hour

// PeaksHeader is the header of true_peaks.csv. Columns are only ever
// appended. Loads are W, times RFC 3339 in the site time zone (empty when
// never reached), temperatures °C:
//   - design_load_w: the design heating load the terminal was sized for;
//   - peak_coil_load_w, peak_coil_load_at: the largest true coil load
//     (TerminalTruth.CoilLoadW, one step) over all hours, morning warm-up
//     included;
//   - peak_heat_delivered_w: the largest heat the coil delivered (one step);
//   - rated_capacity_w: the submittal rated capacity;
//   - peak_occupied_coil_load_w, peak_occupied_coil_load_at,
//     peak_occupied_heat_delivered_w: the same over the occupied steps only
//     (TerminalTruth.Occupied); still dominated by the recovery at the
//     first occupied minutes;
//   - steady_peak_coil_load_w, steady_peak_at, steady_peak_outdoor_c,
//     steady_peak_heat_delivered_w: the largest clock-hour MEAN coil load
//     over steady occupied hours (every step of the hour occupied and at
//     least SteadyAfterOccupied after the occupied period began), the hour
//     it starts, that hour's mean outdoor temperature, and the largest
//     steady-hour mean heat delivered: the sustained load a heating
//     capacity assessment compares with the design load.
const PeaksHeader = "terminal,loop,design_load_w,peak_coil_load_w,peak_coil_load_at,peak_heat_delivered_w,rated_capacity_w," +
	"peak_occupied_coil_load_w,peak_occupied_coil_load_at,peak_occupied_heat_delivered_w," +
	"steady_peak_coil_load_w,steady_peak_at,steady_peak_outdoor_c,steady_peak_heat_delivered_w"

// peak tracks one terminal's largest true values over the run.
type peak struct {
	coilLoadW, heatW       float64
	coilLoadAt             time.Time
	occCoilLoadW, occHeatW float64
	occCoilLoadAt          time.Time

	// Steady occupied hours.
	occSince                    time.Time // start of the current occupied period (zero: unoccupied)
	hourStart                   time.Time
	hourN                       int
	hourSteady                  bool
	hourLoad, hourHeat, hourOAT float64
	steadyLoadW, steadyHeatW    float64
	steadyAt                    time.Time
	steadyOAT                   float64
	steadyHours                 int
}

// add accounts for one step of the terminal.
func (p *peak) add(st *Step, tr *TerminalTruth, step time.Duration) {
	at := st.At
	if tr.CoilLoadW > p.coilLoadW {
		p.coilLoadW, p.coilLoadAt = tr.CoilLoadW, at
	}
	p.heatW = max(p.heatW, tr.HeatW)
	if tr.Occupied {
		if p.occSince.IsZero() {
			p.occSince = at
		}
		if tr.CoilLoadW > p.occCoilLoadW {
			p.occCoilLoadW, p.occCoilLoadAt = tr.CoilLoadW, at
		}
		p.occHeatW = max(p.occHeatW, tr.HeatW)
	} else {
		p.occSince = time.Time{}
	}
	// Clock hours in the site's zone: a new hour starts when the local
	// hour-of-day changes (works for any zone offset).
	if p.hourN == 0 || at.Hour() != p.hourStart.Hour() || at.Sub(p.hourStart) >= time.Hour {
		p.closeHour(step)
		p.hourStart, p.hourN, p.hourSteady = at, 0, true
		p.hourLoad, p.hourHeat, p.hourOAT = 0, 0, 0
	}
	p.hourN++
	p.hourLoad += tr.CoilLoadW
	p.hourHeat += tr.HeatW
	p.hourOAT += st.OutdoorC
	if !tr.Occupied || at.Sub(p.occSince) < SteadyAfterOccupied {
		p.hourSteady = false
	}
}

// closeHour ends the current clock hour: a complete steady hour is a
// candidate for the steady peaks.
func (p *peak) closeHour(step time.Duration) {
	if p.hourN == 0 || !p.hourSteady || time.Duration(p.hourN)*step < time.Hour ||
		p.hourStart.Minute() != 0 || p.hourStart.Second() != 0 {
		p.hourN = 0
		return
	}
	n := float64(p.hourN)
	p.steadyHours++
	if load := p.hourLoad / n; load > p.steadyLoadW || p.steadyAt.IsZero() {
		p.steadyLoadW, p.steadyAt, p.steadyOAT = load, p.hourStart, p.hourOAT/n
	}
	p.steadyHeatW = max(p.steadyHeatW, p.hourHeat/n)
	p.hourN = 0
}

func (s *Simulator) writePeaks(path string, peaks []peak) error {
	stamp := func(t time.Time) string {
		if t.IsZero() {
			return ""
		}
		return t.Format(time.RFC3339)
	}
	b := []byte(PeaksHeader + "\n")
	for i, p := range peaks {
		t := &s.terms[i]
		b = fmt.Appendf(b, "%s,%s,%.0f,%.0f,%s,%.0f,%.0f,%.0f,%s,%.0f,", t.spec.ID, s.sc.Loops[t.loop].ID, t.design.designLoadW,
			p.coilLoadW, stamp(p.coilLoadAt), p.heatW, t.design.rated.CapacityW,
			p.occCoilLoadW, stamp(p.occCoilLoadAt), p.occHeatW)
		if p.steadyHours > 0 {
			b = fmt.Appendf(b, "%.0f,%s,%.1f,%.0f\n", p.steadyLoadW, stamp(p.steadyAt), p.steadyOAT, p.steadyHeatW)
		} else {
			b = append(b, ",,,\n"...)
		}
	}
	if err := os.WriteFile(path, b, 0o644); err != nil {
		return fmt.Errorf("true peaks: %w", err)
	}
	return nil
}
