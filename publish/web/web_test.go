package web

import (
	"context"
	"io"
	"log/slog"
	"math"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/coilmodel"
	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/site"
	"risewatch/units"
)

// testBackend is a small in-memory backend with a two-terminal site.
type testBackend struct {
	mu     sync.Mutex
	site   *site.Site
	faults []rules.Transition
	acks   []string
	now    time.Time
	// evidence, when set, replaces Latest's fixed record.
	evidence func(i int) (fdd.Evidence, bool)
	// sources, when set, replaces Sources' fixed list.
	sources []SourceHealth
	// noSeries makes Series return no points.
	noSeries bool
}

func newTestBackend() *testBackend {
	loc, _ := time.LoadLocation("America/Chicago")
	s := &site.Site{Name: "Larkspur Commons", Location: loc, Energy: site.EnergyPrices{Currency: "USD"},
		Loops: []site.Loop{{ID: "HW-1", DesignSupplyC: units.FToC(180)}},
		AHUs:  []site.AHU{{ID: "AHU-1"}}}
	for _, id := range []string{"VAV-1-03", "VAV-1-07"} {
		s.Terminals = append(s.Terminals, site.Terminal{ID: id, AHU: "AHU-1", Loop: "HW-1", Zone: "Z" + id[6:], InletIn: 10,
			Coil:          coilmodel.Coil{Rows: 2, Circuits: 1, FaceWidthM: units.InToM(15), FaceHeightM: units.InToM(12.5), Fin: coilmodel.Fin{PerM: units.FPIToPerM(10)}},
			MinAirflowM3s: units.CFMToM3s(150), HeatingAirflowM3s: units.CFMToM3s(400)})
	}
	s.TerminalIndex = map[string]int{"VAV-1-03": 0, "VAV-1-07": 1}
	now := time.Date(2026, 1, 14, 10, 0, 0, 0, loc)
	return &testBackend{site: s, now: now, faults: []rules.Transition{{
		FaultID: "VAV-1-03/leaking-valve", Entity: "VAV-1-03", Kind: fdd.KindLeakingValve, To: rules.StateOpen, At: now.Add(-3 * time.Hour),
		Since: now.Add(-4 * time.Hour), Confidence: 0.9, AHU: "AHU-1", Loop: "HW-1", Message: "Valve closed, discharge 4.1 K (7.4 °F) above supply.",
		MessageIP: "Valve closed, discharge 7.4 °F (4.1 K) above supply.",
		Evidence:  rules.Evidence{ObservedRiseK: 4.1, ValveFrac: 0, LeakRiseK: 4.1, LeakFlowFrac: 0.05, ExpectedRiseK: math.NaN()},
		Impact:    rules.Impact{WeeklyCost: 5.93},
		Causes:    []string{"valve seat worn or debris under the seat"},
		Checks:    []string{"stroke the valve closed and feel the coil's return pipe"}}}}
}

func (b *testBackend) Site() *site.Site { return b.site }
func (b *testBackend) Faults(context.Context) ([]rules.Transition, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return append([]rules.Transition(nil), b.faults...), nil
}
func (b *testBackend) History(_ context.Context, e string, _ int) ([]rules.Transition, error) {
	var out []rules.Transition
	for _, f := range b.faults {
		if f.Entity == e {
			out = append(out, f)
		}
	}
	return out, nil
}
func (b *testBackend) Latest(i int) (fdd.Evidence, bool) {
	if b.evidence != nil {
		return b.evidence(i)
	}
	return fdd.Evidence{At: b.now, Usable: true, Steady: true, SupplyC: 13, DischargeC: 15.3, HotWaterC: 80, ObservedRiseK: 2.3 + float64(i), ExpectedRiseK: 0.1, SigmaK: 0.4, UAFactor: 1, FlowFactor: 1, LeakRiseK: 2.2}, true
}
func (b *testBackend) Baseline(i int) (fdd.Baseline, bool) {
	if i == 0 {
		from := time.Date(2026, 1, 5, 7, 0, 0, 0, b.site.Location)
		return fdd.Baseline{Terminal: "VAV-1-03", Source: "learned", UAFactor: 1.08, UAFactorSigma: 0.01, FlowFactor: 0.9, FlowFactorSigma: 0.02,
			ResidualSigmaK: 0.2, Points: 48, From: from, To: from.Add(24 * time.Hour), PerfHighRef: 1.03, PerfHighRefN: 17}, false
	}
	return fdd.Baseline{Terminal: "VAV-1-07", Source: "rated", UAFactor: 1, FlowFactor: 1}, true
}
func (b *testBackend) Series(_ context.Context, _ int, from, to time.Time) ([]Point, error) {
	if b.noSeries {
		return nil, nil
	}
	var out []Point
	for t := from; t.Before(to); t = t.Add(time.Hour) {
		h := float64(t.Sub(from) / time.Hour)
		v := 0.5 + 0.5*math.Sin(h/5)
		out = append(out, Point{At: t, ValveFrac: v, ExpectedRiseK: 14 * v, ObservedRiseK: 13 * v, AirflowM3s: 0.1 + 0.05*v})
	}
	return out, nil
}
func (b *testBackend) Sources() []SourceHealth {
	if b.sources != nil {
		return b.sources
	}
	return []SourceHealth{{Name: "exports", Kind: "trendfile", LastSuccess: b.now.Add(-time.Minute), Reads: 1200, Errors: map[string]uint64{"bad-row": 2}, Points: 40}}
}
func (b *testBackend) Ack(_ context.Context, id, by, note string) error {
	b.mu.Lock()
	defer b.mu.Unlock()
	b.acks = append(b.acks, id+" by "+by)
	for i := range b.faults {
		if b.faults[i].FaultID == id {
			b.faults[i].To = rules.StateAcked
		}
	}
	return nil
}
func (b *testBackend) Snooze(_ context.Context, id, by string, until time.Time, _ string) error {
	b.mu.Lock()
	defer b.mu.Unlock()
	b.acks = append(b.acks, id+" snoozed by "+by+" until "+until.Format("2006-01-02"))
	return nil
}
func (b *testBackend) Now() time.Time { return b.now }

func quiet() *slog.Logger { return slog.New(slog.NewTextHandler(io.Discard, nil)) }

func TestRefusesNonLoopbackWithoutAuth(t *testing.T) {
	b := newTestBackend()
	if _, err := New(Config{Listen: "0.0.0.0:9470"}, b, quiet()); err == nil {
		t.Fatal("started on 0.0.0.0 without credentials")
	}
	if _, err := New(Config{Listen: "0.0.0.0:9470", Token: "t0k"}, b, quiet()); err != nil {
		t.Fatal(err)
	}
	if _, err := New(Config{}, b, quiet()); err != nil {
		t.Fatalf("loopback default refused: %v", err)
	}
	if _, err := New(Config{Listen: "127.0.0.1:1", TLSCert: "x.pem"}, b, quiet()); err == nil {
		t.Fatal("TLS cert without key accepted")
	}
}

func TestTokenAuth(t *testing.T) {
	s, _ := New(Config{Listen: "0.0.0.0:0", Token: "s3cr3t"}, newTestBackend(), quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	resp, _ := http.Get(ts.URL + "/")
	if resp.StatusCode != http.StatusUnauthorized {
		t.Fatalf("no token: %d", resp.StatusCode)
	}
	req, _ := http.NewRequest("GET", ts.URL+"/", nil)
	req.Header.Set("Authorization", "Bearer s3cr3t")
	resp, _ = http.DefaultClient.Do(req)
	if resp.StatusCode != http.StatusOK {
		t.Fatalf("bearer token: %d", resp.StatusCode)
	}
	jar, _ := cookiejar.New(nil)
	c := &http.Client{Jar: jar}
	resp, _ = c.Get(ts.URL + "/sources?token=s3cr3t")
	if resp.StatusCode != http.StatusOK || resp.Request.URL.Query().Get("token") != "" {
		t.Fatalf("?token login: %d at %s", resp.StatusCode, resp.Request.URL)
	}
	resp, _ = c.Get(ts.URL + "/")
	if resp.StatusCode != http.StatusOK {
		t.Fatalf("session cookie: %d", resp.StatusCode)
	}
	if resp, _ := http.Get(ts.URL + "/healthz"); resp.StatusCode != http.StatusOK {
		t.Fatalf("healthz needs no auth: %d", resp.StatusCode)
	}
}

var csrfRe = regexp.MustCompile(`name="csrf" value="([0-9a-f]+)"`)

func TestAckPostNeedsCSRF(t *testing.T) {
	b := newTestBackend()
	s, _ := New(Config{}, b, quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	jar, _ := cookiejar.New(nil)
	c := &http.Client{Jar: jar}
	action := ts.URL + "/faults/" + url.PathEscape("VAV-1-03/leaking-valve") + "/ack"
	// Without the form's token: refused, nothing changes.
	resp, _ := c.PostForm(action, url.Values{"by": {"Mallory"}})
	if resp.StatusCode != http.StatusForbidden || len(b.acks) != 0 {
		t.Fatalf("POST without CSRF token: %d, acks %v", resp.StatusCode, b.acks)
	}
	// The e-mail link opens a form; submitting it acknowledges.
	resp, _ = c.Get(action)
	body, _ := io.ReadAll(resp.Body)
	m := csrfRe.FindStringSubmatch(string(body))
	if m == nil {
		t.Fatalf("no CSRF field on the form page:\n%s", body)
	}
	// A cross-origin POST with a valid token is still refused.
	req, _ := http.NewRequest("POST", action, strings.NewReader(url.Values{"by": {"Mallory"}, "csrf": {m[1]}}.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.Header.Set("Origin", "http://evil.example")
	if resp, _ := c.Do(req); resp.StatusCode != http.StatusForbidden {
		t.Fatalf("cross-origin POST: %d", resp.StatusCode)
	}
	resp, _ = c.PostForm(action, url.Values{"by": {"Dana Okafor"}, "note": {"valve on order"}, "csrf": {m[1]}})
	if resp.StatusCode != http.StatusOK || len(b.acks) != 1 || b.acks[0] != "VAV-1-03/leaking-valve by Dana Okafor" {
		t.Fatalf("ack: %d, %v", resp.StatusCode, b.acks)
	}
	// Snooze needs a future date.
	snooze := strings.Replace(action, "/ack", "/snooze", 1)
	resp, _ = c.PostForm(snooze, url.Values{"by": {"Dana"}, "until": {"2025-01-01"}, "csrf": {m[1]}})
	if resp.StatusCode != http.StatusBadRequest {
		t.Fatalf("snooze into the past: %d", resp.StatusCode)
	}
	resp, _ = c.PostForm(snooze, url.Values{"by": {"Dana"}, "until": {"2026-01-21"}, "csrf": {m[1]}})
	if resp.StatusCode != http.StatusOK || !strings.Contains(b.acks[1], "until 2026-01-21") {
		t.Fatalf("snooze: %d %v", resp.StatusCode, b.acks)
	}
}

func TestPagesRender(t *testing.T) {
	s, _ := New(Config{IP: true}, newTestBackend(), quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	for path, wants := range map[string][]string{
		// The fault's evidence digest, IP first as the page is: 4.1 K × 1.8 = 7.4 °F.
		"/": {"Larkspur Commons", "VAV-1-03", "leaking-valve", "USD 5.93", "HW-1", "180.0 °F", "advisory only", "leak rise 7.4 °F (4.1 K), leak 5 % of design flow"},
		"/terminals/VAV-1-07": {"<svg", "Air temperature rise, observed and expected (°F and K", "12.5 in", "10 FPI", "No open faults.",
			"rated (submittal data) while the baseline is learned", "not seen healthy yet", "risewatch relearn --config FILE --by NAME VAV-1-07"},
		// 95 % intervals: 1.08 ± 1.96·0.01, 0.90 ± 1.96·0.02; 0.2 K = 0.36 °F.
		"/terminals/VAV-1-03": {"Acknowledge", "Snooze", "discharge 7.4 °F (4.1 K) above supply", "Leak rise with valve closed", "learned from this coil&#39;s own history",
			"48 steady heating points, 5 Jan 2026 07:00 – 6 Jan 2026 07:00", "1.08 (1.06–1.10) / 0.90 (0.86–0.94)", "1.03 of the model&#39;s rise (17 values)"},
		"/sources": {"exports", "trendfile", "bad-row 2"},
	} {
		resp, err := http.Get(ts.URL + path)
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(resp.Body)
		if resp.StatusCode != http.StatusOK {
			t.Errorf("%s: %d", path, resp.StatusCode)
		}
		for _, w := range wants {
			if !strings.Contains(string(body), w) {
				t.Errorf("%s lacks %q", path, w)
			}
		}
	}
	if resp, _ := http.Get(ts.URL + "/terminals/NOPE"); resp.StatusCode != http.StatusNotFound {
		t.Errorf("unknown terminal: %d", resp.StatusCode)
	}
}

// TestMessagesInThePagesUnitOrder: a page set to SI shows the SI-first
// message, one set to IP the IP-first one.
func TestMessagesInThePagesUnitOrder(t *testing.T) {
	for _, ip := range []bool{false, true} {
		s, _ := New(Config{IP: ip}, newTestBackend(), quiet())
		ts := httptest.NewServer(s.Handler())
		resp, err := http.Get(ts.URL + "/terminals/VAV-1-03")
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		ts.Close()
		want, not := "discharge 4.1 K (7.4 °F) above", "discharge 7.4 °F (4.1 K) above"
		if ip {
			want, not = not, want
		}
		if !strings.Contains(string(body), want) || strings.Contains(string(body), not) {
			t.Errorf("ip=%v: terminal page lacks %q or has %q", ip, want, not)
		}
	}
}
