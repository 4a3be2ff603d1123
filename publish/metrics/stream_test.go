package metrics

import (
	"bytes"
	"compress/gzip"
	"fmt"
	"io"
	"math"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	dto "github.com/prometheus/client_model/go"
	"github.com/prometheus/common/expfmt"

	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/site"
)

// streamSite has terminals out of label order, a terminal without AHU or
// loop, and a site name that needs escaping, so the streamer's order and
// escaping are both exercised.
func streamSite() *site.Site {
	s := &site.Site{
		Name:  `Quarry "East" \ Annex`,
		Loops: []site.Loop{{ID: "HW-2"}, {ID: "HW-1"}},
		AHUs:  []site.AHU{{ID: "AHU-9"}, {ID: "AHU-10"}},
		Terminals: []site.Terminal{
			{ID: "VAV-9-02", AHU: "AHU-9", Loop: "HW-1"},
			{ID: "VAV-9-01", AHU: "AHU-9", Loop: "HW-2"},
			{ID: "VAV-10-01", AHU: "AHU-10", Loop: "HW-1"},
			{ID: "VAV-LONE"},
			{ID: "VAV-9-03", AHU: "AHU-9", Loop: "HW-1"},
		},
	}
	s.Index()
	return s
}

// referenceText is what expfmt writes for the full registry in format:
// the text the streamer must reproduce.
func referenceText(t *testing.T, m *Metrics, format expfmt.Format) string {
	t.Helper()
	mfs, err := m.Registry().Gather()
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	enc := expfmt.NewEncoder(&b, format)
	for _, mf := range mfs {
		if err := enc.Encode(mf); err != nil {
			t.Fatal(err)
		}
	}
	if c, ok := enc.(expfmt.Closer); ok {
		if err := c.Close(); err != nil {
			t.Fatal(err)
		}
	}
	return b.String()
}

func scrapeWith(t *testing.T, h http.Handler, accept, encoding string) (body, contentType string) {
	t.Helper()
	req := httptest.NewRequest(http.MethodGet, "/metrics", nil)
	if accept != "" {
		req.Header.Set("Accept", accept)
	}
	if encoding != "" {
		req.Header.Set("Accept-Encoding", encoding)
	}
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, req)
	if rec.Code != http.StatusOK {
		t.Fatalf("scrape: %d %s", rec.Code, rec.Body.String())
	}
	var r io.Reader = rec.Body
	if rec.Header().Get("Content-Encoding") == "gzip" {
		zr, err := gzip.NewReader(rec.Body)
		if err != nil {
			t.Fatal(err)
		}
		r = zr
	} else if strings.Contains(encoding, "gzip") {
		t.Errorf("Accept-Encoding %q: response not compressed", encoding)
	}
	raw, err := io.ReadAll(r)
	if err != nil {
		t.Fatal(err)
	}
	return string(raw), rec.Header().Get("Content-Type")
}

// TestStreamMatchesGather: the streamed /metrics is byte for byte the
// expfmt encoding of the full registry, in the text format and in
// OpenMetrics, compressed or not, with values that need care (NaN, ±Inf,
// −0, integers, large and small numbers) and faults on a terminal, a loop
// and an AHU.
func TestStreamMatchesGather(t *testing.T) {
	// Without the runtime collectors, whose values change between two
	// gathers (expfmt encodes them on both paths alike).
	m, err := New(streamSite(), Options{Version: "v0.0.0-test", Revision: "abc123", NoRuntime: true})
	if err != nil {
		t.Fatal(err)
	}
	at := time.Date(2025, 1, 14, 7, 0, 0, 0, time.UTC)
	// Invented values: the test checks formatting, not physics.
	m.ObserveEvidence(&fdd.Evidence{Terminal: 0, At: at, Usable: true, ObservedRiseK: 8.5, ExpectedRiseK: 11.25, SigmaK: math.NaN(),
		ResidualK: -2.75, PerfIndex: math.Inf(1), UAFactor: math.Inf(-1), FlowFactor: math.Copysign(0, -1), WastedHeatW: 1e21,
		AddedCoolingW: 1.5e-7, ShortfallW: 410})
	m.ObserveEvidence(&fdd.Evidence{Terminal: 3, At: at.Add(time.Minute), ObservedRiseK: -1, ExpectedRiseK: 1})
	m.ObserveTransition(&rules.Transition{Entity: "VAV-9-01", EntityKind: rules.EntityTerminal, Kind: fdd.KindLeakingValve,
		From: rules.StatePending, To: rules.StateOpen, At: at})
	m.ObserveTransition(&rules.Transition{Entity: "HW-2", EntityKind: rules.EntityLoop, Kind: fdd.KindColdLoop, To: rules.StateOpen, At: at})
	m.ObserveTransition(&rules.Transition{Entity: "AHU-10", EntityKind: rules.EntityAHU, Kind: fdd.KindDataQuality, To: rules.StateOpen, At: at})
	m.Source("bas").ReadOK(time.Millisecond, at, 30)
	m.BACnet("bas").Retried(2)
	m.StepDone(40 * time.Millisecond)
	m.SetOutboxPending("email", 1)

	cases := []struct {
		accept string
		format expfmt.Format
	}{
		{"", expfmt.NewFormat(expfmt.TypeTextPlain)},
		{"text/plain;version=0.0.4", expfmt.NewFormat(expfmt.TypeTextPlain)},
		{"application/openmetrics-text;version=1.0.0,text/plain;version=0.0.4;q=0.5", expfmt.NewFormat(expfmt.TypeOpenMetrics)},
	}
	for _, c := range cases {
		for _, enc := range []string{"", "gzip"} {
			body, ct := scrapeWith(t, m.Handler(), c.accept, enc)
			if got := expfmt.Format(ct).FormatType(); got != c.format.FormatType() {
				t.Errorf("Accept %q: Content-Type %q", c.accept, ct)
			}
			want := referenceText(t, m, expfmt.Format(ct))
			if body != want {
				t.Errorf("Accept %q, Accept-Encoding %q: streamed text differs from the gathered one\n%s", c.accept, enc, firstDiff(body, want))
			}
			if !strings.Contains(body, `risewatch_terminal_observed_rise_celsius{ahu="AHU-9",loop="HW-1",site="Quarry \"East\" \\ Annex",terminal="VAV-9-02"} 8.5`) {
				t.Errorf("Accept %q: terminal series missing or mis-escaped", c.accept)
			}
		}
	}
}

// TestStreamRuntime: the runtime families, with the live heap, are in the
// streamed text.
func TestStreamRuntime(t *testing.T) {
	m, err := New(testSite(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	body, _ := scrapeWith(t, m.Handler(), "", "gzip")
	for _, name := range []string{"go_gc_heap_live_bytes", "go_memstats_heap_inuse_bytes", "process_resident_memory_bytes", "risewatch_terminal_usable"} {
		if !strings.Contains(body, "\n"+name+" ") && !strings.Contains(body, "\n"+name+"{") {
			t.Errorf("streamed /metrics has no %s", name)
		}
	}
}

// TestStreamFallback: protobuf, which the streamer does not write, is
// served by promhttp with every family, the terminal ones included.
func TestStreamFallback(t *testing.T) {
	m := newTest(t)
	m.ObserveEvidence(&fdd.Evidence{Terminal: 1, ObservedRiseK: 3})
	req := httptest.NewRequest(http.MethodGet, "/metrics", nil)
	req.Header.Set("Accept", string(expfmt.NewFormat(expfmt.TypeProtoDelim)))
	rec := httptest.NewRecorder()
	m.Handler().ServeHTTP(rec, req)
	dec := expfmt.NewDecoder(rec.Body, expfmt.Format(rec.Header().Get("Content-Type")))
	names := map[string]int{}
	for {
		mf := new(dto.MetricFamily)
		if err := dec.Decode(mf); err != nil {
			if err != io.EOF {
				t.Fatal(err)
			}
			break
		}
		names[mf.GetName()] = len(mf.GetMetric())
	}
	if names["risewatch_terminal_observed_rise_celsius"] != 2 || names["risewatch_fault_active"] == 0 || names["risewatch_analysis_steps_total"] != 1 {
		t.Errorf("protobuf scrape families: %v", names)
	}
}

// firstDiff shows the first differing line of two texts.
func firstDiff(a, b string) string {
	al, bl := strings.Split(a, "\n"), strings.Split(b, "\n")
	for i := 0; i < max(len(al), len(bl)); i++ {
		var x, y string
		if i < len(al) {
			x = al[i]
		}
		if i < len(bl) {
			y = bl[i]
		}
		if x != y {
			return fmt.Sprintf("line %d:\n  streamed: %s\n  gathered: %s", i+1, x, y)
		}
	}
	return "(same lines)"
}
