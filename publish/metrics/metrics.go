package metrics

import (
	"errors"
	"net/http"
	"regexp"
	"runtime"
	"runtime/debug"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

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
	// reg has every collector (Registry, and /metrics in formats the
	// streamer does not write); small has all but the per-terminal
	// families, which the streamer writes itself (stream.go).
	reg, small *prometheus.Registry
	site       *site.Site
	stream     *streamer

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
	m := &Metrics{reg: prometheus.NewRegistry(), small: prometheus.NewRegistry(), site: s}
	if !opt.NoRuntime {
		// The runtime's live heap (go_gc_heap_live_bytes) besides the
		// default set: what daemon.memory_limit is sized against.
		live := collectors.GoRuntimeMetricsRule{Matcher: regexp.MustCompile(`^/gc/heap/live:bytes$`)}
		m.both().MustRegister(collectors.NewGoCollector(collectors.WithGoCollectorRuntimeMetrics(live)),
			collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	}
	m.newTerminalMetrics()
	m.newFaultMetrics()
	m.src = newSourceVecs(m.both())
	m.bacnet = newBACnetVecs(m.both())
	m.newDaemonMetrics(buildLabels(opt))
	m.stream = m.newStreamer()
	return m, nil
}

// Registry returns the registry (to add collectors or to gather in tests).
func (m *Metrics) Registry() *prometheus.Registry { return m.reg }

// registerer registers collectors on one or more registries.
type registerer interface{ MustRegister(...prometheus.Collector) }

type bothRegistries [2]*prometheus.Registry

func (b bothRegistries) MustRegister(cs ...prometheus.Collector) {
	b[0].MustRegister(cs...)
	b[1].MustRegister(cs...)
}

// both registers on the full and the small registry.
func (m *Metrics) both() registerer { return bothRegistries{m.reg, m.small} }

// Handler serves every metric in the Prometheus exposition formats, the
// per-terminal families streamed (stream.go).
func (m *Metrics) Handler() http.Handler { return m.stream }

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
