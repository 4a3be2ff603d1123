package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"os"
	"time"

	"risewatch/assess"
	"risewatch/collector"
	"risewatch/collector/trendfile"
	"risewatch/site"
	"risewatch/units"
)

// runAssess implements `risewatch assess`: low-temperature hot-water
// readiness of every coil at a candidate supply temperature, from the site
// file's design loads and/or loads estimated from trend-file history.
func runAssess(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("assess", flag.ContinueOnError)
	fs.SetOutput(stderr)
	cfgPath := fs.String("config", "", "site configuration file (YAML)")
	supplyS := fs.String("supply", "", "candidate hot-water supply temperature, e.g. 120F or 49C")
	deltaS := fs.String("delta-t", "", "loop supply-return difference the plant plans for, e.g. 20F (default: each loop's design)")
	dpS := fs.String("branch-dp", "", "differential pressure available across valve and coil, e.g. 5psi (default: each loop's design)")
	histDir := fs.String("history", "", "directory (or file) of trend exports to estimate loads from, read with the site's trend-file source format")
	srcName := fs.String("source", "", "trend-file source whose format --history uses (default: the first trend-file source)")
	fromS := fs.String("from", "", "start of the history period (RFC 3339, or YYYY-MM-DD[THH:MM] in site time)")
	toS := fs.String("to", "", "end of the history period (exclusive)")
	designS := fs.String("design-outdoor", "", "heating design outdoor temperature, e.g. -4F (default: the site file's)")
	loadS := fs.String("load", "auto", "load checked: auto (design load if given, else history), design, history, larger")
	csvPath := fs.String("csv", "", "write the ranked table as CSV to this file")
	plotPath := fs.String("plot", "", "write the plot of terminals meeting load against supply temperature (.png or .svg)")
	si := fs.Bool("si", false, "SI units (default IP)")
	asJSON := fs.Bool("json", false, "print the assessment as JSON (SI) instead of a table")
	noOptions := fs.Bool("no-options", false, "skip rating the options for coils that fall short")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: risewatch assess --config FILE --supply 120F [--history DIR] [--csv FILE] [--plot FILE.png|.svg] [--si] [--json]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *cfgPath == "" || *supplyS == "" {
		fs.Usage()
		return errors.New("--config and --supply are required")
	}
	s, err := site.Load(*cfgPath)
	if err != nil {
		return err
	}
	cond, err := assessConditions(*supplyS, *deltaS, *dpS)
	if err != nil {
		return err
	}
	basis, err := assess.ParseLoadBasis(*loadS)
	if err != nil {
		return fmt.Errorf("--load: %w", err)
	}
	hopt := assess.HistoryOptions{}
	if *designS != "" {
		v, err := units.Parse(*designS, units.Temperature)
		if err != nil {
			return fmt.Errorf("--design-outdoor: %w", err)
		}
		hopt.DesignOutdoorC = &v
	}
	var est []*assess.LoadEstimate
	if *histDir != "" {
		log := slog.New(slog.NewTextHandler(stderr, &slog.HandlerOptions{Level: slog.LevelWarn}))
		est, err = assessHistory(ctx, s, *histDir, *srcName, *fromS, *toS, hopt, log)
		if err != nil {
			return err
		}
	} else if basis == assess.LoadHistory {
		return errors.New("--load history needs --history DIR")
	}
	opt := assess.Options{Load: basis, NoRemedies: *noOptions}
	us := assess.Prepare(s, est, opt)
	a, err := assess.Assess(ctx, s, us, cond, opt)
	if err != nil {
		return err
	}
	if *csvPath != "" {
		if err := writeFileWith(*csvPath, func(w io.Writer) error { return a.WriteCSV(w, !*si) }); err != nil {
			return err
		}
	}
	if *plotPath != "" {
		if err := writeFileWith(*plotPath, func(w io.Writer) error { return a.WritePlot(w, *plotPath, !*si) }); err != nil {
			return err
		}
	}
	if *asJSON {
		return a.WriteJSON(stdout)
	}
	return a.WriteTable(stdout, !*si)
}

func assessConditions(supplyS, deltaS, dpS string) (assess.Conditions, error) {
	var c assess.Conditions
	var err error
	if c.SupplyC, err = units.Parse(supplyS, units.Temperature); err != nil {
		return c, fmt.Errorf("--supply: %w", err)
	}
	if c.SupplyC < 25 || c.SupplyC > 110 {
		return c, fmt.Errorf("--supply %s: must be 77 to 230 °F (25 to 110 °C)", supplyS)
	}
	if deltaS != "" {
		if c.DeltaK, err = units.Parse(deltaS, units.TempDiff); err != nil {
			return c, fmt.Errorf("--delta-t: %w", err)
		}
		if c.DeltaK <= 0 || c.DeltaK > 60 {
			return c, fmt.Errorf("--delta-t %s: must be above 0 and at most 60 K (108 °F)", deltaS)
		}
	}
	if dpS != "" {
		if c.BranchDPPa, err = units.Parse(dpS, units.Pressure); err != nil {
			return c, fmt.Errorf("--branch-dp: %w", err)
		}
		if c.BranchDPPa <= 0 || c.BranchDPPa > 1e6 {
			return c, fmt.Errorf("--branch-dp %s: must be above 0 and at most 1000 kPa", dpS)
		}
	}
	return c, nil
}

// assessHistory reads the trend exports in dir with the format of the
// site's trend-file source and returns the load estimates.
func assessHistory(ctx context.Context, s *site.Site, dir, name, fromS, toS string, opt assess.HistoryOptions, log *slog.Logger) ([]*assess.LoadEstimate, error) {
	var sc *site.SourceConfig
	for i := range s.Sources {
		if s.Sources[i].Trendfile != nil && (name == "" || s.Sources[i].Name == name) {
			sc = &s.Sources[i]
			break
		}
	}
	if sc == nil {
		if name != "" {
			return nil, fmt.Errorf("--source: site %s has no trend-file source %q", s.Name, name)
		}
		return nil, fmt.Errorf("--history: site %s has no trend-file source to take the export format from", s.Name)
	}
	if _, err := os.Stat(dir); err != nil {
		return nil, fmt.Errorf("--history: %w", err)
	}
	loc := s.Location
	if loc == nil {
		loc = time.UTC
	}
	var from, to time.Time
	var err error
	if fromS != "" {
		if from, err = parseWhen(fromS, loc); err != nil {
			return nil, fmt.Errorf("--from: %w", err)
		}
	}
	if toS != "" {
		if to, err = parseWhen(toS, loc); err != nil {
			return nil, fmt.Errorf("--to: %w", err)
		}
	}
	file := *sc.Trendfile
	file.Path, file.Watch = dir, false
	src, err := trendfile.New(trendfile.Config{Name: sc.Name, Site: s, File: file, Logger: log})
	if err != nil {
		return nil, err
	}
	if !s.OutdoorAir.Defined() {
		log.Warn("the site has no outdoor_air point: loads are the largest sustained hours, not extrapolated to the design temperature")
	}
	h, err := assess.ReadHistory(ctx, s, []collector.Source{src}, from, to, opt)
	if err != nil {
		return nil, err
	}
	return h.Estimates(), nil
}

func writeFileWith(path string, fn func(io.Writer) error) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := fn(f); err != nil {
		f.Close()
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}
