package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"math"
	"os"
	"os/signal"
	"runtime/debug"
	"runtime/metrics"
	"sync/atomic"
	"syscall"
	"time"

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
	debugListen := fs.String("debug-listen", "", "serve Go runtime profiles (pprof) on this loopback address, e.g. 127.0.0.1:9471 (off by default)")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: risewatch run --config FILE [--data DIR] [--listen ADDR] [--shard NAME | --shard-from-hostname] [--debug-listen 127.0.0.1:PORT]")
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
	// Loading and checking the configuration (the YAML tree, the decoded
	// site and a throwaway build of every part) makes garbage in
	// proportion to the site before its memory limit is known: collect
	// early then, so that start-up does not set the resident high-water
	// mark at twice the running heap. A GOGC from the environment wins.
	gogc := -2
	if _, ok := os.LookupEnv("GOGC"); !ok {
		gogc = debug.SetGCPercent(startupGOGC)
	}
	d, first, err := daemon.New(daemon.Options{ConfigPath: *cfgPath, DataDir: *data, Listen: *listen, Shard: *shard,
		ShardFromHostname: *fromHost, Logger: log})
	if gogc != -2 {
		debug.SetGCPercent(gogc)
	}
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
	var autoLimit atomic.Bool
	autoLimit.Store(applyMemoryLimit(d, log))
	go guardMemoryLimit(ctx, &autoLimit, log)
	if *debugListen != "" {
		if _, err := startDebug(ctx, *debugListen, log); err != nil {
			return err
		}
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
				if d.Reload() == nil { // a rejected one is logged and changes nothing
					autoLimit.Store(applyMemoryLimit(d, log))
				}
			}
		}
	}()
	return d.Run(ctx, first)
}

// startupGOGC is the collector's GOGC while the configuration is loaded
// and checked at start: the heap goal is 1.25 × the live heap instead of
// 2 × (a second or two of start-up at 5,000 terminals).
const startupGOGC = 25

// applyMemoryLimit sets the Go runtime's soft memory limit to the one the
// configuration asks for (daemon.memory_limit), unless the GOMEMLIMIT
// environment variable set one when the process started. It returns
// whether the limit is the automatic one (which guardMemoryLimit may raise).
func applyMemoryLimit(d *daemon.Daemon, log *slog.Logger) bool {
	if v, ok := os.LookupEnv("GOMEMLIMIT"); ok {
		log.Info("memory limit from GOMEMLIMIT; daemon.memory_limit ignored", "limit", v)
		return false
	}
	limit, auto := d.MemoryLimit()
	if limit == 0 {
		debug.SetMemoryLimit(math.MaxInt64)
		log.Info("memory limit off")
		return false
	}
	debug.SetMemoryLimit(limit)
	log.Info("memory limit", "MiB", limit>>20, "auto", auto)
	return auto
}

// guardMemoryLimit keeps an automatic limit above the live heap: when the
// live heap passes 90 % of the limit (a site whose terminals hold more
// state than MemLimitPerTerminal allows for), the limit is raised to 1.25 ×
// the live heap, so the collector never runs back to back trying to stay
// under a limit the live data itself nearly fills.
func guardMemoryLimit(ctx context.Context, auto *atomic.Bool, log *slog.Logger) {
	sample := []metrics.Sample{{Name: "/gc/heap/live:bytes"}}
	tick := time.NewTicker(30 * time.Second)
	defer tick.Stop()
	for {
		select {
		case <-ctx.Done():
			return
		case <-tick.C:
		}
		if !auto.Load() {
			continue
		}
		metrics.Read(sample)
		if sample[0].Value.Kind() != metrics.KindUint64 {
			return
		}
		live, limit := int64(sample[0].Value.Uint64()), debug.SetMemoryLimit(-1)
		if live > limit/10*9 {
			raised := live / 4 * 5
			debug.SetMemoryLimit(raised)
			log.Warn("memory limit raised: the live heap is near the automatic limit (set daemon.memory_limit to choose one)",
				"live_MiB", live>>20, "from_MiB", limit>>20, "to_MiB", raised>>20)
		}
	}
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
