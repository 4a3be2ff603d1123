package assess

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"reflect"
	"strconv"
	"strings"
	"text/tabwriter"
)

// WriteTable writes the loop summaries and the ranked terminal table (worst
// shortfall first), then the options for each terminal that falls short.
func (a *Assessment) WriteTable(w io.Writer, ip bool) error {
	u := unitSys{ip}
	ew := &errWriter{w: w}
	ew.printf("%s: low-temperature hot-water readiness at %s %s supply", a.Site, u.temp(a.Conditions.SupplyC), u.tempUnit())
	if a.Conditions.DeltaK > 0 {
		ew.printf(", %s %s ΔT", u.delta(a.Conditions.DeltaK), u.deltaUnit())
	}
	if a.Conditions.BranchDPPa > 0 {
		ew.printf(", %s %s branch", u.waterDP(a.Conditions.BranchDPPa), u.waterDPUnit())
	}
	ew.printf("\nAdvisory only: ratings come from the coil model; confirm with the coil maker before buying equipment.\n\n")
	for _, l := range a.Loops {
		ew.printf("%s\n", a.loopLine(l, u))
	}
	ew.printf("\n")
	tw := tabwriter.NewWriter(ew, 2, 4, 2, ' ', 0)
	hdr := []string{"#", "terminal", "loop", "status", "load " + u.heatUnit(), "basis", "capacity " + u.heatUnit(), "margin",
		"flow " + u.waterUnit(), "needs " + u.waterUnit(), "LWT at need " + u.tempUnit(), "coil ΔP at need " + u.waterDPUnit(),
		"air ΔP " + u.airDPUnit(), "min supply " + u.tempUnit(), "first option that meets"}
	fmt.Fprintln(tw, strings.Join(hdr, "\t"))
	for i := range a.Results {
		r := &a.Results[i]
		if r.Error != "" {
			fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t\t\t\t\t\t\t\t\t\t\t%s\n", i+1, r.Terminal, r.Loop, r.Status, r.Error)
			continue
		}
		best := "—"
		if b := r.BestRemedy(); b != nil {
			best = b.Summary
		} else if r.Status == StatusShort && len(r.Remedies) > 0 {
			best = "none of the options alone"
		}
		need, lwt, dp := u.water(r.NeedFlowM3s), u.temp(r.NeedLeavingWaterC), u.waterDP(r.NeedWaterDropPa)
		if !r.NeedReachable {
			need = ">" + u.water(r.NeedFlowM3s)
		}
		fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", i+1, r.Terminal, r.Loop, r.Status,
			u.heat(r.LoadW), r.LoadBasis, u.heat(r.CapacityW), pct(r.MarginFrac), u.water(r.AvailFlowM3s), need, lwt, dp,
			u.airDP(r.AirDropPa), u.temp(r.MinSupplyC), best)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	for i := range a.Results {
		r := &a.Results[i]
		if len(r.Remedies) == 0 {
			continue
		}
		ew.printf("\n%s (%s): load %s %s, capacity %s %s (%s) at %s %s heating airflow\n", r.Terminal, r.Loop,
			u.heat(r.LoadW), u.heatUnit(), u.heat(r.CapacityW), u.heatUnit(), pct(r.MarginFrac), u.air(r.AirflowM3s), u.airUnit())
		tw := tabwriter.NewWriter(ew, 2, 4, 2, ' ', 0)
		fmt.Fprintf(tw, "  option\tcapacity %s\tmargin\tflow %s\tLWT %s\tcoil ΔP %s\tair ΔP %s\tmeets\tnote\n",
			u.heatUnit(), u.waterUnit(), u.tempUnit(), u.waterDPUnit(), u.airDPUnit())
		for _, m := range r.Remedies {
			if m.CapacityW == 0 && m.Note != "" {
				fmt.Fprintf(tw, "  %s\t\t\t\t\t\t\t\t%s\n", m.Summary, m.Note)
				continue
			}
			fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", m.Summary, u.heat(m.CapacityW), pct(m.MarginFrac),
				u.water(m.AvailFlowM3s), u.temp(m.LeavingWaterC), u.waterDP(m.WaterDropPa), u.airDP(m.AirDropPa), yesNo(m.Met), m.Note)
		}
		if err := tw.Flush(); err != nil {
			return err
		}
	}
	return ew.err
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

func (a *Assessment) loopLine(l LoopSummary, u unitSys) string {
	var b strings.Builder
	fmt.Fprintf(&b, "loop %s: %d terminals (%d assessed); meeting load at", l.Loop, l.Terminals, l.Assessed)
	for i, p := range l.Pass {
		if i > 0 {
			b.WriteString(",")
		}
		fmt.Fprintf(&b, " %s %s %d/%d", u.temp(p.SupplyC), u.tempUnit(), p.Pass, p.Total)
	}
	switch {
	case l.Assessed == 0:
		b.WriteString("; nothing to assess")
	case math.IsNaN(l.MinSupplyC):
		fmt.Fprintf(&b, "; %d terminal(s) never meet load up to %s %s (first: %s)", len(l.NeverMet), u.temp(maxSearchSupplyC), u.tempUnit(), l.Limiting)
	default:
		fmt.Fprintf(&b, "; lowest supply for every terminal today %s %s (set by %s)", u.temp(l.MinSupplyC), u.tempUnit(), l.Limiting)
	}
	return b.String()
}

type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) Write(p []byte) (int, error) {
	if e.err != nil {
		return 0, e.err
	}
	n, err := e.w.Write(p)
	e.err = err
	return n, err
}

func (e *errWriter) printf(format string, a ...any) { fmt.Fprintf(e, format, a...) }

// WriteCSV writes one row per terminal in ranked order, in IP or SI units
// (named in the header), with the first option that meets the load.
func (a *Assessment) WriteCSV(w io.Writer, ip bool) error {
	u := unitSys{ip}
	cw := csv.NewWriter(w)
	hdr := []string{"rank", "terminal", "loop", "building", "status", "supply_" + u.tempUnit(), "load_" + u.heatUnit(), "load_basis",
		"load_uncertainty_" + u.heatUnit(), "heating_airflow_" + u.airUnit(), "entering_air_" + u.tempUnit(),
		"capacity_" + u.heatUnit(), "margin_pct", "flow_" + u.waterUnit(), "leaving_air_" + u.tempUnit(),
		"leaving_water_" + u.tempUnit(), "needed_flow_" + u.waterUnit(), "needed_flow_reachable", "needed_lwt_" + u.tempUnit(),
		"needed_coil_dp_" + u.waterDPUnit(), "needed_branch_dp_" + u.waterDPUnit(), "plan_flow_" + u.waterUnit(),
		"air_dp_" + u.airDPUnit(), "min_supply_" + u.tempUnit(), "first_option", "error"}
	if err := cw.Write(hdr); err != nil {
		return err
	}
	num := func(s string) string {
		if s == "—" {
			return ""
		}
		return s
	}
	for i := range a.Results {
		r := &a.Results[i]
		best := ""
		if b := r.BestRemedy(); b != nil {
			best = b.Summary
		}
		margin := ""
		if r.LoadW > 0 && r.Error == "" {
			margin = strconv.FormatFloat(100*r.MarginFrac, 'f', 1, 64)
		}
		rec := []string{strconv.Itoa(i + 1), r.Terminal, r.Loop, r.Building, r.Status, num(u.temp(r.SupplyC)), num(u.heat(r.LoadW)), r.LoadBasis,
			num(u.heat(r.LoadUncW)), u.air(r.AirflowM3s), num(u.temp(r.EnteringAirC)), num(u.heat(r.CapacityW)), margin,
			num(u.water(r.AvailFlowM3s)), num(u.temp(r.LeavingAirC)), num(u.temp(r.LeavingWaterC)), num(u.water(r.NeedFlowM3s)),
			strconv.FormatBool(r.NeedReachable), num(u.temp(r.NeedLeavingWaterC)), num(u.waterDP(r.NeedWaterDropPa)),
			num(u.waterDP(r.NeedBranchDPPa)), num(u.water(r.PlanFlowM3s)), u.airDP(r.AirDropPa), num(u.temp(r.MinSupplyC)), best, r.Error}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteJSON writes the assessment as indented JSON, SI units (field names
// carry them); NaN and infinite values are written as null.
func (a *Assessment) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(jsonSafe(reflect.ValueOf(a)))
}

// jsonSafe converts v to plain maps, slices and scalars with NaN and ±Inf
// replaced by nil (encoding/json rejects them). Struct fields tagged
// `json:"-"` are skipped; embedded structs are flattened; TextMarshalers
// become their text.
func jsonSafe(v reflect.Value) any {
	if !v.IsValid() {
		return nil
	}
	if v.Kind() != reflect.Pointer && v.Kind() != reflect.Interface {
		if tm, ok := v.Interface().(interface{ MarshalText() ([]byte, error) }); ok && v.Kind() != reflect.Struct {
			if b, err := tm.MarshalText(); err == nil {
				return string(b)
			}
		}
	}
	switch v.Kind() {
	case reflect.Pointer, reflect.Interface:
		if v.IsNil() {
			return nil
		}
		return jsonSafe(v.Elem())
	case reflect.Float32, reflect.Float64:
		f := v.Float()
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return nil
		}
		return f
	case reflect.Slice, reflect.Array:
		if v.Kind() == reflect.Slice && v.IsNil() {
			return []any{}
		}
		out := make([]any, v.Len())
		for i := range out {
			out[i] = jsonSafe(v.Index(i))
		}
		return out
	case reflect.Struct:
		m := map[string]any{}
		flattenStruct(v, m)
		return m
	case reflect.Map:
		m := map[string]any{}
		for _, k := range v.MapKeys() {
			m[fmt.Sprint(k.Interface())] = jsonSafe(v.MapIndex(k))
		}
		return m
	}
	return v.Interface()
}

func flattenStruct(v reflect.Value, m map[string]any) {
	t := v.Type()
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		if !f.IsExported() {
			continue
		}
		tag := f.Tag.Get("json")
		if tag == "-" {
			continue
		}
		if f.Anonymous && f.Type.Kind() == reflect.Struct {
			flattenStruct(v.Field(i), m)
			continue
		}
		name := f.Name
		if n, _, _ := strings.Cut(tag, ","); n != "" {
			name = n
		}
		fv := v.Field(i)
		if strings.Contains(tag, "omitempty") && fv.IsZero() {
			continue
		}
		m[name] = jsonSafe(fv)
	}
}
