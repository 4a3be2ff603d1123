package metrics

import (
	"context"
	"errors"
	"net"
	"os"
	"time"

	"github.com/prometheus/client_golang/prometheus"
)

// ErrorKind classifies a source read error. The set is closed so that it can
// be a label.
type ErrorKind string

// Error kinds.
const (
	ErrTimeout  ErrorKind = "timeout"  // no answer in time
	ErrRefused  ErrorKind = "refused"  // connection refused / unreachable
	ErrProtocol ErrorKind = "protocol" // rejected message not covered below (HTTP 4xx/5xx)
	ErrParse    ErrorKind = "parse"    // file or payload could not be decoded
	ErrAuth     ErrorKind = "auth"     // credentials refused
	ErrNotFound ErrorKind = "notfound" // object, series or file not there
	ErrCanceled ErrorKind = "canceled" // context cancelled (shutdown)
	ErrOther    ErrorKind = "other"    // anything else

	ErrBACnetError ErrorKind = "bacnet-error" // BACnet Error PDU or property error (class/code)
	ErrReject      ErrorKind = "reject"       // BACnet Reject PDU
	ErrAbort       ErrorKind = "abort"        // BACnet Abort PDU
	ErrMalformed   ErrorKind = "malformed"    // answer that could not be decoded or used
)

var errorKinds = []ErrorKind{ErrTimeout, ErrRefused, ErrProtocol, ErrParse, ErrAuth, ErrNotFound, ErrCanceled, ErrOther,
	ErrBACnetError, ErrReject, ErrAbort, ErrMalformed}

func validKind(k ErrorKind) ErrorKind {
	for _, e := range errorKinds {
		if e == k {
			return k
		}
	}
	return ErrOther
}

// ClassifyError maps common Go errors to an ErrorKind; sources with better
// knowledge (BACnet error classes, HTTP status) pass their own kind.
func ClassifyError(err error) ErrorKind {
	var ne net.Error
	var oe *net.OpError
	switch {
	case err == nil:
		return ErrOther
	case errors.Is(err, context.Canceled):
		return ErrCanceled
	case errors.Is(err, context.DeadlineExceeded), errors.Is(err, os.ErrDeadlineExceeded):
		return ErrTimeout
	case errors.Is(err, os.ErrNotExist):
		return ErrNotFound
	case errors.Is(err, os.ErrPermission):
		return ErrAuth
	case errors.As(err, &ne) && ne.Timeout():
		return ErrTimeout
	case errors.As(err, &oe) && oe.Op == "dial":
		return ErrRefused
	}
	return ErrOther
}

type sourceVecs struct {
	reads, readings *prometheus.CounterVec
	errs            *prometheus.CounterVec
	latency         *prometheus.HistogramVec
	last, stale     *prometheus.GaugeVec
}

func newSourceVecs(reg registerer) *sourceVecs {
	l := []string{"source"}
	v := &sourceVecs{
		reads: prometheus.NewCounterVec(prometheus.CounterOpts{Namespace: namespace, Subsystem: "source", Name: "reads_total",
			Help: "Read operations (requests, file reads, queries) attempted by the source."}, l),
		readings: prometheus.NewCounterVec(prometheus.CounterOpts{Namespace: namespace, Subsystem: "source", Name: "readings_total",
			Help: "Point readings delivered by the source."}, l),
		errs: prometheus.NewCounterVec(prometheus.CounterOpts{Namespace: namespace, Subsystem: "source", Name: "read_errors_total",
			Help: "Failed read operations by error kind."}, []string{"source", "error_kind"}),
		latency: prometheus.NewHistogramVec(prometheus.HistogramOpts{Namespace: namespace, Subsystem: "source", Name: "read_duration_seconds",
			Help:    "Duration of read operations, successful or not.",
			Buckets: []float64{0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30}}, l),
		last: prometheus.NewGaugeVec(prometheus.GaugeOpts{Namespace: namespace, Subsystem: "source", Name: "last_success_timestamp_seconds",
			Help: "Unix time of the source's last successful read."}, l),
		stale: prometheus.NewGaugeVec(prometheus.GaugeOpts{Namespace: namespace, Subsystem: "source", Name: "stale_points",
			Help: "Points of the source whose value is currently stale or missing."}, l),
	}
	reg.MustRegister(v.reads, v.readings, v.errs, v.latency, v.last, v.stale)
	return v
}

// SourceHealth records one source's health. Get it once per source with
// Metrics.Source and call it from the source's read loop.
type SourceHealth struct {
	reads, readings prometheus.Counter
	errs            map[ErrorKind]prometheus.Counter
	latency         prometheus.Observer
	last, stale     prometheus.Gauge
}

// Source returns the health recorder for a configured source; every error
// kind starts at zero so rate() works from the first error.
func (m *Metrics) Source(name string) *SourceHealth {
	h := &SourceHealth{
		reads: m.src.reads.WithLabelValues(name), readings: m.src.readings.WithLabelValues(name),
		errs:    make(map[ErrorKind]prometheus.Counter, len(errorKinds)),
		latency: m.src.latency.WithLabelValues(name),
		last:    m.src.last.WithLabelValues(name), stale: m.src.stale.WithLabelValues(name),
	}
	for _, k := range errorKinds {
		h.errs[k] = m.src.errs.WithLabelValues(name, string(k))
	}
	return h
}

// ReadOK records a successful read that took d, finished at at and delivered
// n readings.
func (h *SourceHealth) ReadOK(d time.Duration, at time.Time, n int) {
	h.reads.Inc()
	h.latency.Observe(d.Seconds())
	h.readings.Add(float64(n))
	h.last.Set(float64(at.UnixNano()) / 1e9)
}

// ReadFailed records a failed read of kind that took d.
func (h *SourceHealth) ReadFailed(kind ErrorKind, d time.Duration) {
	h.reads.Inc()
	h.latency.Observe(d.Seconds())
	h.errs[validKind(kind)].Inc()
}

// SetStale sets the number of the source's points that are stale or missing.
func (h *SourceHealth) SetStale(n int) { h.stale.Set(float64(n)) }
