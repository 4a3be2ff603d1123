package metrics

import "github.com/prometheus/client_golang/prometheus"

// FrameReason says why the BACnet client dropped a received frame. The set
// is closed so that it can be a label.
type FrameReason string

// Frame reasons.
const (
	FrameMalformed FrameReason = "malformed" // could not be decoded (BVLC, NPDU or APDU)
	FrameUnmatched FrameReason = "unmatched" // late or duplicated answer with no open transaction
)

var frameReasons = []FrameReason{FrameMalformed, FrameUnmatched}

type bacnetVecs struct {
	dropped   *prometheus.CounterVec
	retries   *prometheus.CounterVec
	trendLost *prometheus.CounterVec
}

func newBACnetVecs(reg registerer) *bacnetVecs {
	v := &bacnetVecs{
		dropped: prometheus.NewCounterVec(prometheus.CounterOpts{Namespace: namespace, Subsystem: "bacnet", Name: "frames_dropped_total",
			Help: "Frames received by a BACnet source's client and dropped, by reason."}, []string{"source", "reason"}),
		retries: prometheus.NewCounterVec(prometheus.CounterOpts{Namespace: namespace, Subsystem: "bacnet", Name: "retries_total",
			Help: "Confirmed requests a BACnet source's client resent after a timeout."}, []string{"source"}),
		trendLost: prometheus.NewCounterVec(prometheus.CounterOpts{Namespace: namespace, Subsystem: "bacnet", Name: "trend_records_lost_total",
			Help: "Trend-log records a BACnet device overwrote (buffer wrapped) or cleared before a sweep could read them: a counted gap in the history."}, []string{"source"}),
	}
	reg.MustRegister(v.dropped, v.retries, v.trendLost)
	return v
}

// BACnetTraffic records one BACnet source's client traffic anomalies.
type BACnetTraffic struct {
	dropped   map[FrameReason]prometheus.Counter
	retries   prometheus.Counter
	trendLost prometheus.Counter
}

// BACnet returns the traffic recorder for a configured BACnet source; every
// reason starts at zero.
func (m *Metrics) BACnet(source string) *BACnetTraffic {
	t := &BACnetTraffic{dropped: make(map[FrameReason]prometheus.Counter, len(frameReasons)),
		retries: m.bacnet.retries.WithLabelValues(source), trendLost: m.bacnet.trendLost.WithLabelValues(source)}
	for _, r := range frameReasons {
		t.dropped[r] = m.bacnet.dropped.WithLabelValues(source, string(r))
	}
	return t
}

// Dropped adds n dropped frames of reason (an unknown reason is ignored).
func (t *BACnetTraffic) Dropped(reason FrameReason, n uint64) {
	if c, ok := t.dropped[reason]; ok && n > 0 {
		c.Add(float64(n))
	}
}

// Retried adds n resent requests.
func (t *BACnetTraffic) Retried(n uint64) {
	if n > 0 {
		t.retries.Add(float64(n))
	}
}

// TrendLost adds n trend-log records lost before they could be read.
func (t *BACnetTraffic) TrendLost(n uint64) {
	if n > 0 {
		t.trendLost.Add(float64(n))
	}
}
