package main

import (
	"context"
	"flag"
	"fmt"
	"io"

	"risewatch/daemon"
)

// runDemo implements `risewatch demo`: the simulated demo campus with the
// daemon and every output, one command, no external services.
func runDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	fs.SetOutput(stderr)
	data := fs.String("data", "", "data directory (default: a fresh directory under the OS temp dir)")
	listen := fs.String("listen", "127.0.0.1:9470", "dashboard and /metrics address")
	days := fs.Int("days", 7, "days of history simulated at once into the trend logs before running forward")
	speed := fs.Float64("speed", 60, "simulated seconds per second after the history (60: one simulated minute per second)")
	level := fs.String("log-level", "warn", "log level: debug, info, warn, error")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: risewatch demo [--data DIR] [--listen 127.0.0.1:9470] [--days N] [--speed X]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *days < 1 || *days > 28 {
		return fmt.Errorf("--days %d: want 1 to 28", *days)
	}
	log, err := newLogger(stderr, *level, false)
	if err != nil {
		return err
	}
	return daemon.RunDemo(ctx, daemon.DemoOptions{DataDir: *data, Listen: *listen, Days: *days, Speed: *speed, Logger: log,
		Ready: func(in daemon.DemoInfo) {
			fmt.Fprintf(stdout, "risewatch demo: %d simulated terminals, history %s to %s, then %gx real time\n",
				in.Terminals, in.HistoryFrom.Format("2006-01-02"), in.HistoryTo.Format("2006-01-02"), *speed)
			fmt.Fprintf(stdout, "  bacnet     %d simulated BACnet/IP devices (terminals behind each air handler's router), polled every %s:\n",
				in.DeviceCount, in.Poll)
			for _, g := range in.Devices {
				fmt.Fprintf(stdout, "               %s\n", g)
			}
			fmt.Fprintf(stdout, "  dashboard  %s\n  metrics    %smetrics\n", in.URL, in.URL)
			fmt.Fprintf(stdout, "  mail       %s (one .eml file per message)\n  reports    %s\n", in.MailSpool, in.Reports)
			fmt.Fprintf(stdout, "  data       %s (site file %s)\n", in.DataDir, in.SiteFile)
			fmt.Fprintln(stdout, "Faults appear within seconds as the history is analysed. Stop with Ctrl-C.")
		}})
}
