package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"time"

	"risewatch/sim"
)

// runSim is `risewatch sim`: simulate a campus scenario with its injected
// faults and write trend exports, ground truth and a site file.
func runSim(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("sim", flag.ContinueOnError)
	fs.SetOutput(stderr)
	scenario := fs.String("scenario", "demo", `scenario YAML file, or "demo" for the built-in campus`)
	out := fs.String("out", "", "output directory (required)")
	noFaults := fs.Bool("no-faults", false, "simulate the fault-free twin (same seed, weather and noise)")
	days := fs.Int("days", 0, "override the scenario's number of days")
	seed := fs.Uint64("seed", 0, "override the scenario's seed")
	printDemo := fs.Bool("print-demo", false, "print the built-in demo scenario YAML and exit")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: risewatch sim [--scenario FILE|demo] --out DIR [--no-faults] [--days N] [--seed N]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *printDemo {
		_, err := stdout.Write(sim.DemoYAML())
		return err
	}
	if *out == "" {
		fs.Usage()
		return errors.New("--out is required")
	}
	var sc *sim.Scenario
	var err error
	if *scenario == "" || *scenario == "demo" {
		sc, err = sim.DemoScenario()
	} else {
		sc, err = sim.LoadScenario(*scenario)
	}
	if err != nil {
		return err
	}
	if *days > 0 || *seed > 0 {
		if sc, err = sc.With(*days, *seed); err != nil {
			return err
		}
	}
	if *noFaults {
		sc = sc.WithoutFaults()
	}
	s, err := sim.New(sc)
	if err != nil {
		return err
	}
	t0 := time.Now()
	res, err := s.WriteOutputs(ctx, *out)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "simulated %s: %d terminals, %d days at %s, %d faults in %.1fs\n",
		sc.Name, s.Terminals(), sc.Days, sc.StepDuration(), res.Faults, time.Since(t0).Seconds())
	fmt.Fprintf(stdout, "wrote %d trend files (%d rows x %d columns), %s, %s, %s in %s\n",
		len(res.TrendFiles), res.Rows, res.Columns, sim.GroundTruthFile, sim.PeaksFile, sim.SiteFile, *out)
	return nil
}
