package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"net/netip"
	"os"
	"strings"
	"time"

	"risewatch/collector/bacnet"
)

type addrList []string

func (a *addrList) String() string     { return strings.Join(*a, ",") }
func (a *addrList) Set(s string) error { *a = append(*a, s); return nil }

// runDiscover implements `risewatch discover`: Who-Is, a survey of each
// device's objects, and a site-file skeleton with guessed point roles.
func runDiscover(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("discover", flag.ContinueOnError)
	fs.SetOutput(stderr)
	bind := fs.String("bind", "0.0.0.0:47808", "local UDP address to send from and receive I-Am on")
	var targets addrList
	fs.Var(&targets, "target", "address for Who-Is (repeatable; a broadcast address or one device, ip[:port]); default 255.255.255.255:47808")
	out := fs.String("out", "", "write a site-file skeleton here")
	source := fs.String("source", "bas", "source name in the skeleton")
	wait := fs.Duration("wait", 3*time.Second, "how long to collect I-Am answers")
	timeout := fs.Duration("timeout", 3*time.Second, "APDU timeout per request")
	bbmd := fs.String("bbmd", "", "register as a foreign device with this BBMD (ip[:port]) and broadcast through it")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if len(targets) == 0 {
		targets = addrList{"255.255.255.255:47808"}
	}
	var to []netip.AddrPort
	for _, t := range targets {
		a, err := bacnet.ParseAddress(t)
		if err != nil || a.Routed() {
			return fmt.Errorf("--target %q: want ip[:port]", t)
		}
		to = append(to, a.IP)
	}
	g, err := bacnet.NewRoleGuesser(nil)
	if err != nil {
		return err
	}
	c, err := bacnet.Dial(ctx, bacnet.Options{Bind: *bind, Timeout: *timeout, BBMD: *bbmd})
	if err != nil {
		return err
	}
	defer c.Close()
	devs, err := c.Discover(ctx, to, -1, -1, *wait)
	if err != nil {
		return err
	}
	if len(devs) == 0 {
		return fmt.Errorf("no device answered Who-Is to %s within %s", targets.String(), *wait)
	}
	var survey []bacnet.SurveyDevice
	for _, d := range devs {
		survey = append(survey, bacnet.Survey(ctx, c, d, g))
	}
	bacnet.WriteTable(stdout, survey)
	if *out == "" {
		return nil
	}
	f, err := os.Create(*out)
	if err != nil {
		return err
	}
	if err := bacnet.WriteSkeleton(f, *source, *bind, survey, time.Now()); err != nil {
		f.Close()
		return fmt.Errorf("%s: %w", *out, err)
	}
	if err := f.Close(); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "wrote %s (%d devices); check every guessed role before use\n", *out, len(survey))
	return nil
}
