// Command risewatch finds failing hot-water reheat coils on VAV terminal
// units. It is advisory and read-only toward the building automation system.
//
// Each subcommand lives in its own file; this file only dispatches.
package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"os/signal"
	"sort"
	"syscall"
)

// command is one subcommand: it parses its own flags from args and writes to stdout/stderr.
type command struct {
	summary string
	run     func(ctx context.Context, args []string, stdout, stderr io.Writer) error
}

func commands() map[string]command {
	return map[string]command{
		"coil":     {"rate a coil or compare what-if variants", runCoil},
		"config":   {"check a site configuration file", runConfig},
		"sim":      {"simulate a campus with injected faults and write trend exports", runSim},
		"analyze":  {"analyse history (trend files) and print a ranked fault table", runAnalyze},
		"run":      {"run the daemon: poll sources, analyse, publish", runDaemon},
		"demo":     {"run the simulated demo campus with the daemon and all outputs", runDemo},
		"discover": {"discover BACnet/IP devices and write a config skeleton", runDiscover},
		"report":   {"write the weekly contractor report", runReport},
		"assess":   {"low-temperature hot-water readiness of every coil on a loop", runAssess},
		"ack":      {"acknowledge or snooze a fault so its notifications stop", runAck},
		"relearn":  {"learn a terminal's baseline again after its coil or valve was replaced or repaired", runRelearn},
	}
}

func main() {
	os.Exit(mainWithArgs(os.Args[1:], os.Stdout, os.Stderr))
}

func mainWithArgs(args []string, stdout, stderr io.Writer) int {
	cmds := commands()
	if len(args) == 0 || args[0] == "-h" || args[0] == "--help" || args[0] == "help" {
		usage(stderr, cmds)
		if len(args) == 0 {
			return 2
		}
		return 0
	}
	c, ok := cmds[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "risewatch: unknown command %q\n\n", args[0])
		usage(stderr, cmds)
		return 2
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if err := c.run(ctx, args[1:], stdout, stderr); err != nil {
		fmt.Fprintf(stderr, "risewatch %s: %v\n", args[0], err)
		return 1
	}
	return 0
}

func usage(w io.Writer, cmds map[string]command) {
	fmt.Fprintln(w, "usage: risewatch COMMAND [options]")
	fmt.Fprintln(w, "\nrisewatch is advisory only and never writes to the building automation system.")
	fmt.Fprintln(w, "\ncommands:")
	names := make([]string, 0, len(cmds))
	for n := range cmds {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-9s %s\n", n, cmds[n].summary)
	}
}
