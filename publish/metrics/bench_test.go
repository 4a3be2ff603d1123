package metrics

import (
	"fmt"
	"net/http"
	"net/http/httptest"
	"testing"
	"time"

	"risewatch/fdd"
	"risewatch/site"
)

// BenchmarkObserveEvidence is the per-terminal, per-step publishing cost.
func BenchmarkObserveEvidence(b *testing.B) {
	s := &site.Site{Name: "bench", TerminalIndex: map[string]int{}, LoopIndex: map[string]int{}, AHUIndex: map[string]int{}}
	for i := range 1000 {
		id := "VAV-" + string(rune('A'+i%26)) + "-" + time.Duration(i).String()
		s.Terminals = append(s.Terminals, site.Terminal{ID: id, AHU: "AHU-1", Loop: "HW-1"})
		s.TerminalIndex[id] = i
	}
	m, err := New(s, Options{NoRuntime: true})
	if err != nil {
		b.Fatal(err)
	}
	ev := fdd.Evidence{Usable: true, At: time.Now(), ObservedRiseK: 8, ExpectedRiseK: 10, PerfIndex: 0.8}
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		ev.Terminal = i % 1000
		m.ObserveEvidence(&ev)
	}
}

// BenchmarkGather is one scrape's gathering of 1,000 terminals' series
// (12 terminal gauges and the fault kinds each).
func BenchmarkGather(b *testing.B) {
	s := &site.Site{Name: "bench", TerminalIndex: map[string]int{}, LoopIndex: map[string]int{}, AHUIndex: map[string]int{}}
	for i := range 1000 {
		id := fmt.Sprintf("VAV-%04d", i)
		s.Terminals = append(s.Terminals, site.Terminal{ID: id, AHU: "AHU-1", Loop: "HW-1"})
		s.TerminalIndex[id] = i
	}
	m, err := New(s, Options{NoRuntime: true})
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := m.Registry().Gather(); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkScrape5000 is one /metrics scrape of 5,000 terminals through the
// handler, gzip as Prometheus asks for it: the per-terminal families are
// streamed from the flat arrays (compare BenchmarkGather, the registry's
// path, per terminal).
func BenchmarkScrape5000(b *testing.B) {
	s := &site.Site{Name: "bench", TerminalIndex: map[string]int{}, LoopIndex: map[string]int{}, AHUIndex: map[string]int{}}
	for i := range 5000 {
		id := fmt.Sprintf("VAV-%05d", i)
		s.Terminals = append(s.Terminals, site.Terminal{ID: id, AHU: fmt.Sprintf("AHU-%03d", i/100), Loop: "HW-1"})
		s.TerminalIndex[id] = i
	}
	m, err := New(s, Options{NoRuntime: true})
	if err != nil {
		b.Fatal(err)
	}
	for i := range 5000 {
		m.ObserveEvidence(&fdd.Evidence{Terminal: i, Usable: true, At: time.Now(), ObservedRiseK: 8 + float64(i%10)/7, ExpectedRiseK: 10, PerfIndex: 0.8})
	}
	h := m.Handler()
	req := httptest.NewRequest(http.MethodGet, "/metrics", nil)
	req.Header.Set("Accept-Encoding", "gzip")
	var size int
	b.ReportAllocs()
	for b.Loop() {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		size = rec.Body.Len()
	}
	b.ReportMetric(float64(size)/(1<<20), "MiB-gzip/scrape")
}
