// Package report writes the weekly contractor report: a PDF with the open
// faults ranked by weekly cost, what opened and cleared during the week, per
// fault the evidence, the likely cause, the checks to make and a plot of
// observed against expected air temperature rise and valve command over the
// week, and a terminal list with the coil data a technician needs on the
// ladder; plus a CSV work list with one row per open fault.
package report

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"risewatch/rules"
	"risewatch/site"
	"risewatch/units"
)

// Point is one sample of a terminal's evidence series for the week plot.
type Point struct {
	At            time.Time
	ObservedRiseK float64
	ExpectedRiseK float64
	ValveFrac     float64
}

// Section is an extra section (for example the low-temperature hot-water
// readiness summary) appended after the fault pages.
type Section struct {
	Title  string
	Intro  []string
	Header []string
	Rows   [][]string
}

// Input is everything one weekly report shows.
type Input struct {
	Site      *site.Site
	WeekStart time.Time // inclusive, site time
	WeekEnd   time.Time // exclusive
	Open      []rules.Transition
	Opened    []rules.Transition // opened during the week
	Cleared   []rules.Transition // cleared during the week
	// Series holds each terminal's week of evidence, keyed by terminal ID.
	Series map[string][]Point
	IP     bool // IP units first (SI in brackets); false: SI first
	// Paper is the PDF's page size: PaperLetter or PaperA4; "" gives
	// Letter with IP units and A4 with SI units.
	Paper    string
	Sections []Section
	// Generated is when the report was made (printed on it).
	Generated time.Time
}

// Page sizes for Input.Paper.
const (
	PaperLetter = "letter"
	PaperA4     = "a4"
)

// Advisory is printed on the first page and in every row of the CSV.
const Advisory = "Advisory only: risewatch reads the building automation system and never writes to it. " +
	"Confirm each finding on site and follow local codes, the equipment makers' instructions and licensed practice. " +
	"Hot-water systems can scald and are under pressure: isolate, cool and depressurise a circuit and follow " +
	"lock-out/tag-out before opening, venting or replacing valves, coils, strainers or air vents."

// CheckWarning stands above the checks on every fault page: a page taken
// to site on its own still warns before work on the hot-water circuit.
const CheckWarning = "Before any check that opens, vents or replaces a valve, coil, strainer or air vent: hot water scalds and is " +
	"under pressure. Isolate the circuit, let it cool, relieve the pressure and follow lock-out/tag-out."

// ranked returns the open faults, highest weekly cost first.
func ranked(ts []rules.Transition) []rules.Transition {
	out := append([]rules.Transition(nil), ts...)
	sort.SliceStable(out, func(i, j int) bool {
		if out[i].Impact.WeeklyCost != out[j].Impact.WeeklyCost {
			return out[i].Impact.WeeklyCost > out[j].Impact.WeeklyCost
		}
		if out[i].Severity != out[j].Severity {
			return out[i].Severity < out[j].Severity
		}
		return out[i].FaultID < out[j].FaultID
	})
	return out
}

func (in *Input) currency() string {
	if in.Site != nil && in.Site.Energy.Currency != "" {
		return in.Site.Energy.Currency
	}
	return "USD"
}

func (in *Input) loc() *time.Location {
	if in.Site != nil && in.Site.Location != nil {
		return in.Site.Location
	}
	return time.UTC
}

func (in *Input) terminal(id string) *site.Terminal {
	if in.Site == nil {
		return nil
	}
	if i, ok := in.Site.TerminalIndex[id]; ok && i < len(in.Site.Terminals) {
		return &in.Site.Terminals[i]
	}
	for i := range in.Site.Terminals {
		if in.Site.Terminals[i].ID == id {
			return &in.Site.Terminals[i]
		}
	}
	return nil
}

func dual(ip bool, f func(float64, bool) string, v float64) string {
	return units.FormatPair(f, v, ip, "n/a")
}

// evidenceLines describes a fault's evidence with numbers and units.
func (in *Input) evidenceLines(t rules.Transition) []string {
	ev := t.Evidence
	ok := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	var l []string
	if ok(ev.ObservedRiseK) {
		s := "Observed air temperature rise " + dual(in.IP, units.FormatTempDiff, ev.ObservedRiseK)
		if ok(ev.ExpectedRiseK) {
			s += ", expected " + dual(in.IP, units.FormatTempDiff, ev.ExpectedRiseK)
			if ok(ev.SigmaK) && ev.SigmaK > 0 {
				s += " ± " + dual(in.IP, units.FormatTempDiff, 2*ev.SigmaK) + " (2 sigma)"
			}
		}
		l = append(l, s)
	}
	if ok(ev.ValveFrac) {
		l = append(l, "Valve command "+units.FormatPercent(ev.ValveFrac))
	}
	if ok(ev.AirflowM3s) && ev.AirflowM3s > 0 {
		l = append(l, "Airflow "+dual(in.IP, units.FormatAirflow, ev.AirflowM3s))
	}
	// An apparent factor past maxFactor is a fit that left the coil
	// model's range (a coil with almost no rise at full command gives
	// millions of percent), not a measurement: it is named as such.
	factor := func(name, of string, f float64) {
		switch {
		case !ok(f) || f <= 0:
		case f > maxFactor:
			l = append(l, fmt.Sprintf("%s: no estimate (the fit gave over %.0f %% of %s, outside the coil model's range)", name, maxFactor*100, of))
		default:
			l = append(l, fmt.Sprintf("%s %.0f %% of %s", name, f*100, of))
		}
	}
	factor("Apparent coil UA", "baseline", ev.UAFactor)
	factor("Apparent water flow", "expected", ev.FlowFactor)
	if ok(ev.LeakFlowFrac) && ev.LeakFlowFrac > 0 {
		l = append(l, fmt.Sprintf("Estimated leak flow %s of design", units.FormatPercent(ev.LeakFlowFrac)))
	}
	im := t.Impact
	if im.WastedHeatW > 0 {
		l = append(l, "Unwanted heat "+dual(in.IP, units.FormatPower, im.WastedHeatW)+", extra cooling "+dual(in.IP, units.FormatPower, im.AddedCoolingW))
	}
	if im.ShortfallW > 0 {
		l = append(l, "Heating shortfall "+dual(in.IP, units.FormatPower, im.ShortfallW))
	}
	var impact []string
	if im.WeeklyHeatKWh > 0 {
		impact = append(impact, dual(in.IP, units.FormatHeatEnergy, im.WeeklyHeatKWh)+" heat")
	}
	if im.WeeklyCoolKWh > 0 {
		impact = append(impact, dual(in.IP, units.FormatCoolingEnergy, im.WeeklyCoolKWh)+" cooling")
	}
	if im.WeeklyShortfallKWh > 0 {
		impact = append(impact, dual(in.IP, units.FormatHeatEnergy, im.WeeklyShortfallKWh)+" heat short of the zone (comfort, not costed)")
	}
	impact = append(impact, fmt.Sprintf("%s %.2f", in.currency(), im.WeeklyCost))
	s := fmt.Sprintf("Weekly impact: %s; confidence %.0f %%", strings.Join(impact, ", "), t.Confidence*100)
	if ok(im.OperatingHoursPerWeek) && im.OperatingHoursPerWeek > 0 {
		s += fmt.Sprintf(" (weekly figures at %.0f h of heating operation a week)", im.OperatingHoursPerWeek)
	}
	return append(l, s)
}

// maxFactor is the largest apparent UA or water-flow factor the report
// prints as a number (500 %): a coil does not carry five times its rated
// heat transfer or flow, so a larger fitted factor says the fit failed
// (common practice, not a published limit).
const maxFactor = 5.0

// statusLine says since when a fault's condition holds and when it was
// raised, its state (acknowledged by whom, snoozed until when) and when
// the evidence on its page was recorded, so a week without new records
// does not pass old numbers off as this week's.
func (in *Input) statusLine(t rules.Transition) string {
	loc := in.loc()
	at := func(x time.Time) string { return x.In(loc).Format("Mon 2 Jan 2006 15:04") }
	since := t.Since
	if since.IsZero() {
		since = t.At
	}
	s := "Condition since " + at(since)
	if !t.OpenedAt.IsZero() {
		s += ", fault raised " + at(t.OpenedAt)
	}
	switch t.To {
	case rules.StateAcked:
		s += "; acknowledged"
		if t.AckedBy != "" {
			s += " by " + t.AckedBy
		}
		if !t.AckedAt.IsZero() {
			s += " " + at(t.AckedAt)
		}
	case rules.StateSuppressed:
		s += "; snoozed"
		if !t.SuppressedUntil.IsZero() {
			s += " until " + at(t.SuppressedUntil)
		}
	default:
		s += "; open"
	}
	return s + ". Evidence as recorded " + at(t.At) + "."
}

// placeLine says where a fault's page sends the technician: for a
// terminal its box, coil, zone and location; for a hot-water loop or an
// air handler (a fault of the whole system, which has no box or coil of
// its own) its design temperatures and the terminals it serves.
func (in *Input) placeLine(t rules.Transition) string {
	served := func(match func(*site.Terminal) bool) int {
		n := 0
		if in.Site != nil {
			for i := range in.Site.Terminals {
				if match(&in.Site.Terminals[i]) {
					n++
				}
			}
		}
		return n
	}
	switch {
	case t.EntityKind == rules.EntityLoop:
		s := "Hot-water loop " + t.Entity
		if in.Site != nil {
			if i, ok := in.Site.LoopIndex[t.Entity]; ok && i < len(in.Site.Loops) {
				l := &in.Site.Loops[i]
				if l.DesignSupplyC > 0 {
					s += ", design supply " + dual(in.IP, units.FormatTemp, l.DesignSupplyC)
				}
				if l.DesignDeltaK > 0 {
					s += ", design ΔT " + dual(in.IP, units.FormatTempDiff, l.DesignDeltaK)
				}
			}
		}
		return fmt.Sprintf("%s; it serves %d terminal(s). The fault is the loop's, not one box's.",
			s, served(func(tm *site.Terminal) bool { return tm.Loop == t.Entity }))
	case t.EntityKind == rules.EntityAHU:
		return fmt.Sprintf("Air handler %s; it serves %d terminal(s). The fault is the air handler's, not one box's.",
			t.Entity, served(func(tm *site.Terminal) bool { return tm.AHU == t.Entity }))
	}
	cl := in.coilLine(t.Entity)
	return fmt.Sprintf("Box inlet %s, %s row(s), %s FPI, coil face %s. Zone %s. Location: %s. AHU %s, loop %s.",
		orDash(cl[1]), orDash(cl[2]), orDash(cl[3]), orDash(cl[4]), orDash(cl[5]), orDash(cl[6]), orDash(t.AHU), orDash(t.Loop))
}

// coilLine is the ladder data of a terminal: box, inlet, rows, FPI, face, location.
func (in *Input) coilLine(id string) []string {
	tm := in.terminal(id)
	if tm == nil {
		return []string{id, "", "", "", "", "", ""}
	}
	c := tm.Coil
	face := ""
	if c.FaceWidthM > 0 {
		if in.IP {
			face = fmt.Sprintf("%.1f x %.1f in", units.MToIn(c.FaceWidthM), units.MToIn(c.FaceHeightM))
		} else {
			face = fmt.Sprintf("%.0f x %.0f mm", c.FaceWidthM*1000, c.FaceHeightM*1000)
		}
	}
	inlet := ""
	if tm.InletIn > 0 {
		inlet = strconv.FormatFloat(tm.InletIn, 'f', -1, 64) + " in"
		if tm.Oversized {
			inlet += " (oversized coil)"
		}
	}
	loc := tm.Location
	if tm.Building != "" {
		loc = strings.TrimSpace(tm.Building + " " + loc)
	}
	return []string{tm.ID, inlet, strconv.Itoa(c.Rows), fmt.Sprintf("%.0f", units.PerMToFPI(c.Fin.PerM)), face, tm.Zone, loc}
}

// csvBOM starts the CSV: a spreadsheet opening the file by double-click
// reads it as UTF-8 only with it (without, "°F" shows as "Â°F"). An
// encoding/csv reader gets it at the start of the first column name
// ("\ufeffrank") and should trim it.
const csvBOM = "\ufeff"

// csvHeader names the work list's columns, SI first in each SI/IP pair:
// every quantity's unit is in its name, and every number cell holds a bare
// number.
func csvHeader(cur string) []string {
	return []string{"rank", "terminal", "fault", "state", "severity", "since", "weekly_cost_" + strings.ToLower(cur),
		"weekly_heat_kwh", "weekly_heat_therm", "weekly_cooling_kwh", "weekly_cooling_ton_h", "confidence_pct",
		"observed_rise_k", "observed_rise_f", "expected_rise_k", "expected_rise_f", "valve_pct", "message", "likely_causes", "checks",
		"inlet_in", "oversized_coil", "rows", "fpi", "face_mm", "face_in", "zone", "location", "ahu", "loop", "advisory"}
}

// csvPairs are the columns of csvHeader that give one quantity in SI then
// IP units.
var csvPairs = [][2]string{{"weekly_heat_kwh", "weekly_heat_therm"}, {"weekly_cooling_kwh", "weekly_cooling_ton_h"},
	{"observed_rise_k", "observed_rise_f"}, {"expected_rise_k", "expected_rise_f"}, {"face_mm", "face_in"}}

// ipFirst swaps each SI/IP pair of columns (by the canonical header) so the
// IP one comes first, as the report's ip_units setting asks.
func ipFirst(header, cells []string) {
	at := make(map[string]int, len(header))
	for i, h := range header {
		at[h] = i
	}
	for _, p := range csvPairs {
		i, j := at[p[0]], at[p[1]]
		cells[i], cells[j] = cells[j], cells[i]
	}
}

// numbered joins items as "1. first; 2. second": an item may hold a
// semicolon of its own ("check the end stop; re-stroke it"), so the numbers
// tell where each starts.
func numbered(items []string) string {
	out := make([]string, len(items))
	for i, s := range items {
		out[i] = strconv.Itoa(i+1) + ". " + s
	}
	return strings.Join(out, "; ")
}

// WriteCSV writes the work list: a header row, then one row per open fault,
// highest cost first; each quantity in SI and IP columns side by side, the
// IP one first when the report is in IP units. It opens in a spreadsheet as it is: UTF-8 with a byte
// order mark, the header on the first line, numbers without units (the
// units are in the column names) and the advisory, with its hot-water
// safety warning, in the last column of every row, so it stays with a row
// that is sorted, filtered or copied.
func WriteCSV(w io.Writer, in Input) error {
	if _, err := io.WriteString(w, csvBOM); err != nil {
		return fmt.Errorf("report: csv: %w", err)
	}
	cw := csv.NewWriter(w)
	canon := csvHeader(in.currency())
	header := append([]string(nil), canon...)
	if in.IP {
		ipFirst(canon, header)
	}
	if err := cw.Write(header); err != nil {
		return fmt.Errorf("report: csv: %w", err)
	}
	loc := in.loc()
	num := func(v float64, prec int) string {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return ""
		}
		return strconv.FormatFloat(v, 'f', prec, 64)
	}
	for i, t := range ranked(in.Open) {
		var inlet, oversized, rows, fpi, faceIn, faceMM string
		if tm := in.terminal(t.Entity); tm != nil {
			c := tm.Coil
			if tm.InletIn > 0 {
				inlet = strconv.FormatFloat(tm.InletIn, 'f', -1, 64)
			}
			oversized = "no"
			if tm.Oversized {
				oversized = "yes"
			}
			rows, fpi = strconv.Itoa(c.Rows), num(units.PerMToFPI(c.Fin.PerM), 0)
			if c.FaceWidthM > 0 {
				faceIn = fmt.Sprintf("%.1f x %.1f", units.MToIn(c.FaceWidthM), units.MToIn(c.FaceHeightM))
				faceMM = fmt.Sprintf("%.0f x %.0f", c.FaceWidthM*1000, c.FaceHeightM*1000)
			}
		}
		cl := in.coilLine(t.Entity)
		since := t.Since
		if since.IsZero() {
			since = t.At
		}
		im, ev := &t.Impact, &t.Evidence
		// 1 therm = 100,000 Btu; 1 ton of refrigeration = 12,000 Btu/h
		// (NIST SP 811, B.8); a temperature difference of 1 K is 1.8 °F.
		row := []string{strconv.Itoa(i + 1), t.Entity, t.Kind.String(), t.To.String(), strconv.Itoa(int(t.Severity)),
			since.In(loc).Format("2006-01-02 15:04"), num(im.WeeklyCost, 2),
			num(im.WeeklyHeatKWh, 1), num(im.WeeklyHeatKWh/units.KWhPerTherm, 2),
			num(im.WeeklyCoolKWh, 1), num(im.WeeklyCoolKWh/units.KWhPerTonHour, 2), num(t.Confidence*100, 0),
			num(ev.ObservedRiseK, 2), num(units.DeltaKToF(ev.ObservedRiseK), 2),
			num(ev.ExpectedRiseK, 2), num(units.DeltaKToF(ev.ExpectedRiseK), 2), num(ev.ValveFrac*100, 0), t.MessageIn(in.IP),
			numbered(t.Causes), numbered(t.Checks), inlet, oversized, rows, fpi, faceMM, faceIn, cl[5], cl[6], t.AHU, t.Loop, Advisory}
		if in.IP {
			ipFirst(canon, row)
		}
		if err := cw.Write(row); err != nil {
			return fmt.Errorf("report: csv: %w", err)
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("report: csv: %w", err)
	}
	return nil
}
