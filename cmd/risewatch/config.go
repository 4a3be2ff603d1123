package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"

	"risewatch/site"
	"risewatch/units"
)

// runConfig implements `risewatch config check FILE`.
func runConfig(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 || args[0] != "check" {
		fmt.Fprintln(stderr, "usage: risewatch config check [-si] FILE")
		return errors.New("expected the subcommand check")
	}
	fs := flag.NewFlagSet("config check", flag.ContinueOnError)
	fs.SetOutput(stderr)
	si := fs.Bool("si", false, "show the summary in SI units")
	if err := fs.Parse(args[1:]); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		fmt.Fprintln(stderr, "usage: risewatch config check [-si] FILE")
		return errors.New("expected one FILE")
	}
	s, err := site.Load(fs.Arg(0))
	var list site.ErrorList
	if errors.As(err, &list) {
		for _, e := range list {
			fmt.Fprintln(stdout, e.Error())
		}
		return fmt.Errorf("%s: %d error(s)", fs.Arg(0), len(list))
	}
	if err != nil {
		return err
	}
	summarize(stdout, s, !*si)
	return nil
}

// summarize prints what the file describes.
func summarize(w io.Writer, s *site.Site, ip bool) {
	fmt.Fprintf(w, "OK %s: %q, time zone %s\n", s.File, s.Name, s.Location)
	kinds := map[string]int{}
	for _, src := range s.Sources {
		kinds[src.Kind]++
	}
	fmt.Fprintf(w, "  sources:   %d (trendfile %d, bacnet %d, influx %d)\n", len(s.Sources), kinds["trendfile"], kinds["bacnet"], kinds["influx"])
	for _, l := range s.Loops {
		sup := "design " + units.FormatTemp(l.DesignSupplyC, ip)
		if l.SupplyTemp.Defined() {
			sup = "point " + l.SupplyTemp.Name
		}
		fmt.Fprintf(w, "  loop %-10s supply %s, design ΔT %s, branch ΔP %s\n", l.ID, sup, units.FormatTempDiff(l.DesignDeltaK, ip), units.FormatWaterDP(l.BranchDPPa, ip))
	}
	perAHU := map[string]int{}
	rated := 0
	for _, t := range s.Terminals {
		perAHU[t.AHU]++
		if t.Rated != nil {
			rated++
		}
	}
	for _, a := range s.AHUs {
		fmt.Fprintf(w, "  AHU  %-10s %d terminals, duct gain %s\n", a.ID, perAHU[a.ID], units.FormatTempDiff(a.DuctGainK, ip))
	}
	byKind := map[site.PointKind]int{}
	fixed := 0
	pts := s.Points()
	for _, p := range pts {
		if p.Ref.Fixed != nil {
			fixed++
		} else {
			byKind[p.Ref.Kind]++
		}
	}
	fmt.Fprintf(w, "  terminals: %d (%d calibrated to a rated point)\n", len(s.Terminals), rated)
	fmt.Fprintf(w, "  points:    %d (bacnet %d, trend column %d, influx %d, fixed %d)\n", len(pts), byKind[site.PointBACnet], byKind[site.PointTrendColumn], byKind[site.PointInflux], fixed)
}
