package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"strings"
	"text/tabwriter"

	"risewatch/coilmodel"
	"risewatch/units"
)

const coilUsage = `usage:
  risewatch coil rate    [geometry] [operating point] [--rated CAPACITY] [--si] [--json]
  risewatch coil compare [geometry] [operating point] [--vary ewt,rows,fpi,face] [--si] [--json]

Quantities take a unit ("450cfm", "212 L/s", "55F", "12.8C", "2gpm", "15in");
a bare number is read in IP units (cfm, °F, gpm, in), or SI (L/s, °C, L/s, mm)
with --si. Geometry is a common-practice preset by inlet size, optionally
overridden by explicit flags. Advisory only: verify against the submittal.

`

// coilFlags holds the raw flag text of a coil subcommand.
type coilFlags struct {
	si, asJSON, oversized      bool
	inlet                      float64
	rows, circuits, tubesPerRw int
	fpi                        string
	width, height              string
	tubeOD, tubeWall, finThick string
	pt, pl, layout, finMat     string
	waterFouling, uaMult       float64
	airflow, eat, water, ewt   string
	rated, vary, altEWT        string
}

func runCoil(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 || args[0] == "-h" || args[0] == "--help" || args[0] == "help" {
		fmt.Fprint(stderr, coilUsage)
		if len(args) == 0 {
			return errors.New("missing subcommand (rate or compare)")
		}
		return nil
	}
	sub := args[0]
	if sub != "rate" && sub != "compare" {
		fmt.Fprint(stderr, coilUsage)
		return fmt.Errorf("unknown subcommand %q (rate or compare)", sub)
	}
	fs := flag.NewFlagSet("coil "+sub, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() { fmt.Fprint(stderr, coilUsage); fs.PrintDefaults() }
	var f coilFlags
	fs.BoolVar(&f.si, "si", false, "show SI units (default IP); bare numbers are read as SI")
	fs.BoolVar(&f.asJSON, "json", false, "write JSON (SI values) instead of a table")
	fs.Float64Var(&f.inlet, "inlet", 12, "box inlet diameter, in, for the common-practice preset (6-16)")
	fs.IntVar(&f.rows, "rows", 1, "coil rows (1-4)")
	fs.StringVar(&f.fpi, "fpi", "10", "fin density (fins per inch, or e.g. 394/m)")
	fs.BoolVar(&f.oversized, "oversized", false, "use the oversized cabinet face of the preset")
	fs.IntVar(&f.circuits, "circuits", 0, "water circuits (0: preset)")
	fs.IntVar(&f.tubesPerRw, "tubes-per-row", 0, "tubes per row (0: preset, or face height / pitch)")
	fs.StringVar(&f.width, "width", "", "finned length (face width), e.g. 15in")
	fs.StringVar(&f.height, "height", "", "face height, e.g. 15in")
	fs.StringVar(&f.tubeOD, "tube-od", "", "tube outside diameter, e.g. 0.5in")
	fs.StringVar(&f.tubeWall, "tube-wall", "", "tube wall, e.g. 0.016in")
	fs.StringVar(&f.finThick, "fin-thickness", "", "fin thickness, e.g. 0.0045in")
	fs.StringVar(&f.pt, "pitch-transverse", "", "transverse tube pitch, e.g. 1.25in")
	fs.StringVar(&f.pl, "pitch-rows", "", "longitudinal (row) tube pitch, e.g. 1.083in")
	fs.StringVar(&f.layout, "layout", "", "tube layout: staggered or inline")
	fs.StringVar(&f.finMat, "fin-material", "", "fin material: aluminum or copper")
	fs.Float64Var(&f.waterFouling, "water-fouling", 0, "water-side fouling resistance, m²·K/W (0.0005 h·ft²·°F/Btu = 8.8e-5)")
	fs.Float64Var(&f.uaMult, "ua-multiplier", 0, "UA multiplier (0: 1, or fitted with --rated)")
	fs.StringVar(&f.airflow, "airflow", "", "airflow, standard air (required), e.g. 450cfm")
	fs.StringVar(&f.eat, "eat", "55F", "entering air temperature")
	fs.StringVar(&f.water, "gpm", "", "water flow (required), e.g. 2 or 2gpm or 0.13L/s")
	fs.StringVar(&f.ewt, "ewt", "180F", "entering water temperature")
	fs.StringVar(&f.rated, "rated", "", "rate: submittal capacity at this operating point, e.g. 38MBH; fits the UA multiplier")
	fs.StringVar(&f.vary, "vary", "ewt,rows,fpi,face", "compare: variants to show")
	fs.StringVar(&f.altEWT, "alt-ewt", "", "compare: entering water of the EWT variant (default 120 F, or 180 F if the base is below 150 F)")
	if err := fs.Parse(args[1:]); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return nil
		}
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("%s: unexpected argument %q", sub, fs.Arg(0))
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	c, desc, err := f.coil(f.rows, f.fpi, f.oversized)
	if err != nil {
		return fmt.Errorf("%s: %w", sub, err)
	}
	op, err := f.operating()
	if err != nil {
		return fmt.Errorf("%s: %w", sub, err)
	}
	if sub == "rate" {
		return f.runRate(stdout, c, desc, op)
	}
	return f.runCompare(stdout, c, desc, op)
}

// quantity parses a flag value with the default unit of the chosen system.
func (f *coilFlags) quantity(name, s string, d units.Dimension, ipUnit, siUnit string) (float64, error) {
	def := ipUnit
	if f.si {
		def = siUnit
	}
	v, err := units.ParseDefault(strings.TrimSpace(s), d, def)
	if err != nil {
		return 0, fmt.Errorf("--%s: %w", name, err)
	}
	return v, nil
}

// coil builds the coil: the preset, then each explicit flag over it.
func (f *coilFlags) coil(rows int, fpiText string, oversized bool) (coilmodel.Coil, string, error) {
	fpi, err := f.quantity("fpi", fpiText, units.FinDensity, "fpi", "fpi")
	if err != nil {
		return coilmodel.Coil{}, "", err
	}
	c, err := coilmodel.Preset(f.inlet, rows, units.PerMToFPI(fpi), oversized)
	if err != nil {
		return coilmodel.Coil{}, "", err
	}
	desc := fmt.Sprintf("%g in inlet preset%s (common practice)", f.inlet, map[bool]string{true: ", oversized cabinet"}[oversized])
	explicit := false
	for _, l := range []struct {
		name, text string
		dst        *float64
	}{
		{"width", f.width, &c.FaceWidthM}, {"height", f.height, &c.FaceHeightM},
		{"tube-od", f.tubeOD, &c.Tube.OuterDiaM}, {"tube-wall", f.tubeWall, &c.Tube.WallM},
		{"fin-thickness", f.finThick, &c.Fin.ThicknessM},
		{"pitch-transverse", f.pt, &c.TransversePitchM}, {"pitch-rows", f.pl, &c.LongitudinalPitchM},
	} {
		if l.text == "" {
			continue
		}
		v, err := f.quantity(l.name, l.text, units.Length, "in", "mm")
		if err != nil {
			return coilmodel.Coil{}, "", err
		}
		*l.dst = v
		explicit = true
	}
	if f.height != "" || f.pt != "" {
		c.TubesPerRow = 0 // follow the new height / pitch
	}
	if f.tubesPerRw > 0 {
		c.TubesPerRow, explicit = f.tubesPerRw, true
	}
	if f.circuits > 0 {
		c.Circuits, explicit = f.circuits, true
	}
	switch f.layout {
	case "":
	case "staggered":
		c.Layout, explicit = coilmodel.Staggered, true
	case "inline":
		c.Layout, explicit = coilmodel.Inline, true
	default:
		return coilmodel.Coil{}, "", fmt.Errorf("--layout %q: want staggered or inline", f.layout)
	}
	switch f.finMat {
	case "":
	case "aluminum", "aluminium":
		c.Fin.Material, c.Fin.ConductivityWmK, explicit = "aluminum", coilmodel.DefaultAluminiumFinConductivity, true
	case "copper":
		c.Fin.Material, c.Fin.ConductivityWmK, explicit = "copper", coilmodel.DefaultCopperFinConductivity, true
	default:
		return coilmodel.Coil{}, "", fmt.Errorf("--fin-material %q: want aluminum or copper", f.finMat)
	}
	c.FoulingWaterM2KW = f.waterFouling
	c.UAMultiplier = f.uaMult
	if explicit {
		desc += " with explicit geometry"
	}
	if err := c.Validate(); err != nil {
		return coilmodel.Coil{}, "", err
	}
	return c, desc, nil
}

func (f *coilFlags) operating() (coilmodel.Operating, error) {
	if f.airflow == "" || f.water == "" {
		return coilmodel.Operating{}, errors.New("--airflow and --gpm are required")
	}
	var op coilmodel.Operating
	var err error
	if op.AirflowM3s, err = f.quantity("airflow", f.airflow, units.VolumeFlow, "cfm", "L/s"); err != nil {
		return op, err
	}
	if op.WaterFlowM3s, err = f.quantity("gpm", f.water, units.VolumeFlow, "gpm", "L/s"); err != nil {
		return op, err
	}
	if op.EnteringAirC, err = f.quantity("eat", f.eat, units.Temperature, "F", "C"); err != nil {
		return op, err
	}
	if op.EnteringWaterC, err = f.quantity("ewt", f.ewt, units.Temperature, "F", "C"); err != nil {
		return op, err
	}
	op.AirDensityKgM3 = coilmodel.StandardAirDensity
	if err := op.Validate(); err != nil {
		return op, err
	}
	return op, nil
}

// coilResult is one rated case, for the table and for JSON (SI values).
type coilResult struct {
	Name        string                       `json:"name"`
	Description string                       `json:"description"`
	Coil        coilmodel.Coil               `json:"coil"`
	Operating   coilmodel.Operating          `json:"operating"`
	Rating      coilmodel.Rating             `json:"rating"`
	Calibration *coilmodel.CalibrationReport `json:"calibration,omitempty"`
	EqualCapM3s *float64                     `json:"water_for_base_capacity_m3s,omitempty"`
	EqualCapErr string                       `json:"water_for_base_capacity_error,omitempty"`
}

func (f *coilFlags) runRate(w io.Writer, c coilmodel.Coil, desc string, op coilmodel.Operating) error {
	res := coilResult{Name: "rated", Description: desc, Coil: c, Operating: op}
	if f.rated != "" {
		capW, err := f.quantity("rated", f.rated, units.Power, "MBH", "W")
		if err != nil {
			return err
		}
		rp := coilmodel.RatedPoint{CapacityW: capW, AirflowM3s: op.AirflowM3s, EnteringAirC: op.EnteringAirC,
			WaterFlowM3s: op.WaterFlowM3s, EnteringWaterC: op.EnteringWaterC}
		cal, rep, err := coilmodel.Calibrate(c, rp)
		if err != nil {
			return fmt.Errorf("rate: --rated: %w", err)
		}
		res.Coil, res.Calibration = cal, &rep
	}
	r, err := coilmodel.Rate(res.Coil, op)
	if err != nil {
		return fmt.Errorf("rate: %w", err)
	}
	res.Rating = r
	if f.asJSON {
		return coilWriteJSON(w, res)
	}
	ip := !f.si
	fmt.Fprintf(w, "Coil: %s\n", coilGeometryLine(res.Coil, ip))
	fmt.Fprintf(w, "      %s\n", desc)
	fmt.Fprintf(w, "At:   %s air at %s, %s water at %s\n\n",
		units.FormatAirflow(op.AirflowM3s, ip), units.FormatTemp(op.EnteringAirC, ip),
		units.FormatWaterFlow(op.WaterFlowM3s, ip), units.FormatTemp(op.EnteringWaterC, ip))
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	for _, row := range coilRows([]coilResult{res}, ip, false) {
		fmt.Fprintf(tw, "%s\t%s\n", row[0], row[1])
	}
	if cr := res.Calibration; cr != nil {
		fmt.Fprintf(tw, "geometry model at rating\t%s (%+.1f %% from rated %s)\n", units.FormatPower(cr.ModelCapacityW, ip),
			100*cr.DeviationFrac, units.FormatPower(cr.RatedCapacityW, ip))
		fmt.Fprintf(tw, "fitted UA multiplier\t%.3f\n", cr.UAMultiplier)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	return coilNotes(w, []coilResult{res})
}

func (f *coilFlags) runCompare(w io.Writer, base coilmodel.Coil, desc string, op coilmodel.Operating) error {
	type variant struct {
		name string
		c    coilmodel.Coil
		op   coilmodel.Operating
		desc string
	}
	vs := []variant{{"base", base, op, desc}}
	ip := !f.si
	for _, v := range strings.Split(f.vary, ",") {
		switch strings.TrimSpace(v) {
		case "":
		case "ewt":
			alt := op
			txt := f.altEWT
			if txt == "" {
				txt = "120F"
				if units.CToF(op.EnteringWaterC) < 150 {
					txt = "180F"
				}
			}
			t, err := f.quantity("alt-ewt", txt, units.Temperature, "F", "C")
			if err != nil {
				return err
			}
			alt.EnteringWaterC = t
			vs = append(vs, variant{"EWT " + units.FormatTemp(t, ip), base, alt, "entering water changed"})
		case "rows":
			rows := 2
			if base.Rows >= 2 {
				rows = base.Rows - 1
			}
			c := base
			c.Rows = rows
			vs = append(vs, variant{fmt.Sprintf("%d row%s", rows, map[bool]string{true: "s"}[rows > 1]), c, op, "row count changed"})
		case "fpi":
			fpi := 12.0
			if r := units.PerMToFPI(base.Fin.PerM); r > 11.5 && r < 12.5 {
				fpi = 10
			}
			c := base
			c.Fin.PerM = units.FPIToPerM(fpi)
			vs = append(vs, variant{fmt.Sprintf("%g FPI", fpi), c, op, "fin density changed"})
		case "face":
			c, d, err := f.coil(base.Rows, fmt.Sprintf("%g", units.PerMToFPI(base.Fin.PerM)), !f.oversized)
			if err != nil {
				return err
			}
			c.UAMultiplier = base.UAMultiplier
			name := "oversized face"
			if f.oversized {
				name = "standard face"
			}
			vs = append(vs, variant{name, c, op, d})
		default:
			return fmt.Errorf("--vary %q: variants are ewt, rows, fpi, face", v)
		}
	}
	results := make([]coilResult, 0, len(vs))
	for i, v := range vs {
		r, err := coilmodel.Rate(v.c, v.op)
		if err != nil {
			return fmt.Errorf("compare: %s: %w", v.name, err)
		}
		res := coilResult{Name: v.name, Description: v.desc, Coil: v.c, Operating: v.op, Rating: r}
		if i > 0 {
			// same airflow and entering air, so equal capacity is the base leaving air
			q, err := coilmodel.InvertWaterFlow(v.c, v.op, results[0].Rating.LeavingAirC)
			if err != nil {
				res.EqualCapErr = "not reachable"
			} else {
				res.EqualCapM3s = &q
			}
		}
		results = append(results, res)
	}
	if f.asJSON {
		return coilWriteJSON(w, results)
	}
	fmt.Fprintf(w, "Base: %s\n      %s\n", coilGeometryLine(base, ip), desc)
	fmt.Fprintf(w, "At:   %s air at %s, %s water at %s\n\n",
		units.FormatAirflow(op.AirflowM3s, ip), units.FormatTemp(op.EnteringAirC, ip),
		units.FormatWaterFlow(op.WaterFlowM3s, ip), units.FormatTemp(op.EnteringWaterC, ip))
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	for _, row := range coilRows(results, ip, true) {
		fmt.Fprintln(tw, strings.Join(row, "\t")+"\t")
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	return coilNotes(w, results)
}

// coilRows lays out the table: first column the quantity, then one column per result.
func coilRows(rs []coilResult, ip, compare bool) [][]string {
	var rows [][]string
	add := func(label string, cell func(coilResult) string) {
		row := []string{fmt.Sprintf("%-24s", label)}
		for _, r := range rs {
			row = append(row, cell(r))
		}
		rows = append(rows, row)
	}
	if compare {
		add("", func(r coilResult) string { return r.Name })
		add("capacity vs base", func(r coilResult) string {
			return fmt.Sprintf("%.0f %%", 100*r.Rating.CapacityW/rs[0].Rating.CapacityW)
		})
	}
	add("capacity", func(r coilResult) string { return units.FormatPower(r.Rating.CapacityW, ip) })
	add("leaving air", func(r coilResult) string { return units.FormatTemp(r.Rating.LeavingAirC, ip) })
	add("air rise", func(r coilResult) string {
		return units.FormatTempDiff(r.Rating.LeavingAirC-r.Operating.EnteringAirC, ip)
	})
	add("leaving water", func(r coilResult) string { return units.FormatTemp(r.Rating.LeavingWaterC, ip) })
	add("water drop (ΔT)", func(r coilResult) string {
		return units.FormatTempDiff(r.Operating.EnteringWaterC-r.Rating.LeavingWaterC, ip)
	})
	add("air pressure drop", func(r coilResult) string { return units.FormatAirDP(r.Rating.AirDropPa, ip) })
	add("water pressure drop", func(r coilResult) string { return units.FormatWaterDP(r.Rating.WaterDropPa, ip) })
	add("face velocity", func(r coilResult) string {
		if ip {
			return fmt.Sprintf("%.0f fpm", units.MsToFPM(r.Rating.FaceVelMs))
		}
		return fmt.Sprintf("%.2f m/s", r.Rating.FaceVelMs)
	})
	add("tube water velocity", func(r coilResult) string {
		if ip {
			return fmt.Sprintf("%.1f ft/s", units.MToFt(r.Rating.WaterVelMs))
		}
		return fmt.Sprintf("%.2f m/s", r.Rating.WaterVelMs)
	})
	add("water flow regime", func(r coilResult) string {
		return fmt.Sprintf("%s (Re %.0f)", r.Rating.Regime, r.Rating.ReWater)
	})
	add("UA", func(r coilResult) string {
		if ip {
			return fmt.Sprintf("%.0f Btu/h·°F", units.WToBtuh(r.Rating.UAWK)*units.KelvinPerRankine)
		}
		return fmt.Sprintf("%.0f W/K", r.Rating.UAWK)
	})
	add("NTU / R / P", func(r coilResult) string {
		return fmt.Sprintf("%.2f / %.2f / %.3f", r.Rating.NTUAir, r.Rating.RAir, r.Rating.Effectiveness)
	})
	add("fin efficiency", func(r coilResult) string { return units.FormatPercent(r.Rating.FinEfficiency) })
	if compare {
		add("water for base capacity", func(r coilResult) string {
			switch {
			case r.Name == "base":
				return units.FormatWaterFlow(r.Operating.WaterFlowM3s, ip)
			case r.EqualCapM3s != nil:
				return units.FormatWaterFlow(*r.EqualCapM3s, ip)
			}
			return r.EqualCapErr
		})
	}
	return rows
}

func coilGeometryLine(c coilmodel.Coil, ip bool) string {
	return fmt.Sprintf("%s × %s face, %d row%s, %d circuit%s, %d tubes/row, %.0f FPI %s fins, %s tubes, %s",
		units.FormatLength(c.FaceWidthM, ip), units.FormatLength(c.FaceHeightM, ip),
		c.Rows, map[bool]string{true: "s"}[c.Rows > 1], c.Circuits, map[bool]string{true: "s"}[c.Circuits > 1],
		c.TubesPerRowEff(), units.PerMToFPI(c.Fin.PerM), c.Fin.Material,
		units.FormatLength(c.Tube.OuterDiaM, ip), c.Layout)
}

func coilNotes(w io.Writer, rs []coilResult) error {
	for _, r := range rs {
		if r.Rating.Extrapolated != 0 {
			if _, err := fmt.Fprintf(w, "note: %s: correlations extrapolated (%s)\n", r.Name, r.Rating.Extrapolated); err != nil {
				return err
			}
		}
	}
	_, err := fmt.Fprintln(w, "\nAdvisory estimate from coil geometry (Wang-Chi-Chang air side, Gnielinski water side, effectiveness-NTU);\nair pressure drop excludes entrance/exit losses, water pressure drop excludes headers and valve.")
	return err
}

func coilWriteJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}
