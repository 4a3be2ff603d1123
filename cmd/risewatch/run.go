package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"os"
	"os/signal"
	"syscall"

	"risewatch/daemon"
	"risewatch/site"
)

// runDaemon implements `risewatch run`: the daemon on a site file's
// configuration, until SIGTERM/SIGINT; SIGHUP reloads the configuration
// (a bad one is rejected and the running one stays).
func runDaemon(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	fs.SetOutput(stderr)
	cfgPath := fs.String("config", "", "site configuration file with its daemon: section (YAML)")
	data := fs.String("data", "", "data directory (overrides daemon.data_dir)")
	listen := fs.String("listen", "", "dashboard and /metrics address (overrides daemon.listen; default 127.0.0.1:9470)")
	shard := fs.String("shard", "", "analyse only this shard of the site (daemon.shards)")
	fromHost := fs.Bool("shard-from-hostname", false, "pick the shard from the StatefulSet ordinal N of POD_NAME or the hostname (risewatch-N)")
	level := fs.String("log-level", "info", "log level: debug, info, warn, error")
	jsonLog := fs.Bool("log-json", false, "log as JSON lines instead of text")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: risewatch run --config FILE [--data DIR] [--listen ADDR] [--shard NAME | --shard-from-hostname]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *cfgPath == "" {
		fs.Usage()
		return errors.New("--config is required")
	}
	log, err := newLogger(stderr, *level, *jsonLog)
	if err != nil {
		return err
	}
	d, first, err := daemon.New(daemon.Options{ConfigPath: *cfgPath, DataDir: *data, Listen: *listen, Shard: *shard,
		ShardFromHostname: *fromHost, Logger: log})
	if err != nil {
		var list site.ErrorList
		if errors.As(err, &list) {
			for _, e := range list {
				fmt.Fprintln(stderr, e.Error())
			}
			return fmt.Errorf("%s: %d error(s)", *cfgPath, len(list))
		}
		return err
	}
	hup := make(chan os.Signal, 1)
	signal.Notify(hup, syscall.SIGHUP)
	defer signal.Stop(hup)
	go func() {
		for {
			select {
			case <-ctx.Done():
				return
			case <-hup:
				_ = d.Reload() // logs why a bad configuration was rejected
			}
		}
	}()
	return d.Run(ctx, first)
}

func newLogger(w io.Writer, level string, asJSON bool) (*slog.Logger, error) {
	var lv slog.Level
	if err := lv.UnmarshalText([]byte(level)); err != nil {
		return nil, fmt.Errorf("--log-level %q: want debug, info, warn or error", level)
	}
	opt := &slog.HandlerOptions{Level: lv}
	if asJSON {
		return slog.New(slog.NewJSONHandler(w, opt)), nil
	}
	return slog.New(slog.NewTextHandler(w, opt)), nil
}
