package metrics

import (
	"time"

	"github.com/prometheus/client_golang/prometheus"
)

type daemonMetrics struct {
	steps        prometheus.Counter
	stepDuration prometheus.Histogram
	bufItems     prometheus.Gauge
	bufBytes     prometheus.Gauge
	outbox       *prometheus.GaugeVec
}

func (m *Metrics) newDaemonMetrics(build prometheus.Labels) {
	info := prometheus.NewGauge(prometheus.GaugeOpts{Namespace: namespace, Name: "build_info",
		Help: "Build of the running risewatch (always 1).", ConstLabels: build})
	info.Set(1)
	m.steps = prometheus.NewCounter(prometheus.CounterOpts{Namespace: namespace, Subsystem: "analysis", Name: "steps_total",
		Help: "Analysis steps completed (one per grid interval, all terminals)."})
	m.stepDuration = prometheus.NewHistogram(prometheus.HistogramOpts{Namespace: namespace, Subsystem: "analysis", Name: "step_duration_seconds",
		Help:    "Wall time of one analysis step over all terminals.",
		Buckets: prometheus.ExponentialBuckets(0.0005, 2.5, 12)})
	m.bufItems = prometheus.NewGauge(prometheus.GaugeOpts{Namespace: namespace, Subsystem: "influx", Name: "buffer_items",
		Help: "Batches waiting in the durable InfluxDB buffer (outbox)."})
	m.bufBytes = prometheus.NewGauge(prometheus.GaugeOpts{Namespace: namespace, Subsystem: "influx", Name: "buffer_bytes",
		Help: "Line-protocol bytes waiting in the durable InfluxDB buffer."})
	m.outbox = prometheus.NewGaugeVec(prometheus.GaugeOpts{Namespace: namespace, Subsystem: "outbox", Name: "pending_items",
		Help: "Side effects waiting in the outbox, by channel."}, []string{"channel"})
	m.both().MustRegister(info, m.steps, m.stepDuration, m.bufItems, m.bufBytes, m.outbox)
}

// StepDone records one completed analysis step that took d.
func (m *Metrics) StepDone(d time.Duration) {
	m.steps.Inc()
	m.stepDuration.Observe(d.Seconds())
}

// SetInfluxBuffer sets the size of the InfluxDB sink's durable buffer. It
// matches the influx sink's BufferObserver signature.
func (m *Metrics) SetInfluxBuffer(items int, bytes int64) {
	m.bufItems.Set(float64(items))
	m.bufBytes.Set(float64(bytes))
}

// SetOutboxPending sets the number of pending outbox items of a channel.
func (m *Metrics) SetOutboxPending(channel string, items int) {
	m.outbox.WithLabelValues(channel).Set(float64(items))
}
