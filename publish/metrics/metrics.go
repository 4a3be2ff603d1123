package metrics

import (
	"errors"
	"net/http"
	"runtime"
	"runtime/debug"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"

	"risewatch/site"
)

const namespace = "risewatch"

// Options configure New.
type Options struct {
	Version  string // release version for risewatch_build_info ("" = from the module build info)
	Revision string // VCS revision ("" = from the build info)
	// NoRuntime leaves out the Go runtime and process collectors (tests).
	NoRuntime bool
}

// Metrics holds every collector on one registry. Its methods are safe for
// concurrent use; the per-step methods do no map lookups or allocations.
type Metrics struct {
	reg  *prometheus.Registry
	site *site.Site

	term    *terminalCollector // by terminal index
	loops   []loopGauges       // by loop index
	faults  *faultCollector
	trans   *prometheus.CounterVec
	unknown prometheus.Counter

	src    *sourceVecs
	bacnet *bacnetVecs
	daemonMetrics
}

// New builds the metrics for a site on a fresh registry.
func New(s *site.Site, opt Options) (*Metrics, error) {
	if s == nil {
		return nil, errors.New("metrics: nil site")
	}
	m := &Metrics{reg: prometheus.NewRegistry(), site: s}
	if !opt.NoRuntime {
		m.reg.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	}
	m.newTerminalMetrics()
	m.newFaultMetrics()
	m.src = newSourceVecs(m.reg)
	m.bacnet = newBACnetVecs(m.reg)
	m.newDaemonMetrics(buildLabels(opt))
	return m, nil
}

// Registry returns the registry (to add collectors or to gather in tests).
func (m *Metrics) Registry() *prometheus.Registry { return m.reg }

// Handler serves the registry in the Prometheus exposition formats.
func (m *Metrics) Handler() http.Handler {
	return promhttp.HandlerFor(m.reg, promhttp.HandlerOpts{
		Registry:          m.reg, // exposes promhttp_metric_handler_errors_total
		EnableOpenMetrics: true,
		ErrorHandling:     promhttp.ContinueOnError,
	})
}

func buildLabels(opt Options) prometheus.Labels {
	version, revision := opt.Version, opt.Revision
	if bi, ok := debug.ReadBuildInfo(); ok {
		if version == "" {
			version = bi.Main.Version
		}
		for _, s := range bi.Settings {
			if s.Key == "vcs.revision" && revision == "" {
				revision = s.Value
			}
		}
	}
	if version == "" {
		version = "unknown"
	}
	if revision == "" {
		revision = "unknown"
	}
	return prometheus.Labels{"version": version, "revision": revision, "goversion": runtime.Version()}
}
