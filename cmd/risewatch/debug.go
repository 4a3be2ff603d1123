package main

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"runtime"
	"runtime/pprof"
	"strconv"
	"time"
)

// startDebug starts the opt-in profiling listener of `risewatch run
// --debug-listen ADDR`: Go runtime profiles in the pprof format
// (`go tool pprof http://ADDR/debug/pprof/heap`). It binds loopback
// addresses only, because profiles show internals (terminal IDs in stacks,
// heap contents by type) that the dashboard's access control does not
// cover. It is off unless the flag is given.

// checkLoopback accepts "127.x.y.z:port", "[::1]:port" or "localhost:port".
func checkLoopback(addr string) error {
	host, _, err := net.SplitHostPort(addr)
	if err != nil {
		return fmt.Errorf("--debug-listen %q: %w", addr, err)
	}
	if host == "localhost" {
		return nil
	}
	if ip := net.ParseIP(host); ip != nil && ip.IsLoopback() {
		return nil
	}
	return fmt.Errorf("--debug-listen %q: the profiling listener binds loopback addresses only (127.0.0.1, [::1], localhost)", addr)
}

// It listens on addr (loopback only), serves the profiles until ctx ends
// and returns the bound address.
func startDebug(ctx context.Context, addr string, log *slog.Logger) (net.Addr, error) {
	if err := checkLoopback(addr); err != nil {
		return nil, err
	}
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		return nil, fmt.Errorf("--debug-listen: %w", err)
	}
	m := http.NewServeMux()
	// Named profiles (heap, allocs, goroutine, ...); ?gc=1 collects first,
	// so a heap profile shows what is live now.
	m.HandleFunc("GET /debug/pprof/{name}", func(w http.ResponseWriter, r *http.Request) {
		name := r.PathValue("name")
		if name == "profile" {
			cpuProfile(w, r)
			return
		}
		p := pprof.Lookup(name)
		if p == nil {
			http.Error(w, "unknown profile "+strconv.Quote(name), http.StatusNotFound)
			return
		}
		if r.FormValue("gc") == "1" {
			runtime.GC()
		}
		debug, _ := strconv.Atoi(r.FormValue("debug"))
		if debug == 0 {
			w.Header().Set("Content-Type", "application/octet-stream")
		} else {
			w.Header().Set("Content-Type", "text/plain; charset=utf-8")
		}
		if err := p.WriteTo(w, debug); err != nil {
			log.Warn("debug listener: profile not written", "profile", name, "err", err)
		}
	})
	srv := &http.Server{Handler: m, ReadHeaderTimeout: 10 * time.Second}
	go func() {
		if err := srv.Serve(ln); err != nil && !errors.Is(err, http.ErrServerClosed) {
			log.Warn("debug listener stopped", "err", err)
		}
	}()
	go func() {
		<-ctx.Done()
		_ = srv.Close()
	}()
	log.Info("debug listener (profiles) on loopback", "addr", ln.Addr().String())
	return ln.Addr(), nil
}

// cpuProfile records a CPU profile for ?seconds= (default 30, at most 300).
func cpuProfile(w http.ResponseWriter, r *http.Request) {
	sec, err := strconv.Atoi(r.FormValue("seconds"))
	if err != nil || sec <= 0 {
		sec = 30
	}
	sec = min(sec, 300)
	w.Header().Set("Content-Type", "application/octet-stream")
	if err := pprof.StartCPUProfile(w); err != nil {
		http.Error(w, "cpu profile: "+err.Error(), http.StatusConflict)
		return
	}
	select {
	case <-time.After(time.Duration(sec) * time.Second):
	case <-r.Context().Done():
	}
	pprof.StopCPUProfile()
}
