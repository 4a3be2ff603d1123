package web

import (
	"io"
	"math"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"
	"time"

	"risewatch/fdd"
	"risewatch/rules"
)

// get fetches path from ts and returns the status and body.
func get(t *testing.T, c *http.Client, u string) (int, string) {
	t.Helper()
	resp, err := c.Get(u)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	body, _ := io.ReadAll(resp.Body)
	return resp.StatusCode, string(body)
}

// TestPagesShowBothUnits: every figure on the pages carries both units,
// the page's first (ip_units) and the other in brackets, as the e-mail and
// the weekly report write them. 180 °F = 82.2 °C; 13 °C = 55.4 °F; 150 cfm
// = 70.8 L/s (1 cfm = 0.4719 L/s); 15 in = 381 mm.
func TestPagesShowBothUnits(t *testing.T) {
	for _, c := range []struct {
		ip   bool
		want []string
	}{
		{true, []string{"180.0 °F (82.2 °C)", "55.4 °F (13.0 °C)", "150 cfm (70.8 L/s)", "15.0 in × 12.5 in (381 mm × 318 mm)"}},
		{false, []string{"82.2 °C (180.0 °F)", "13.0 °C (55.4 °F)", "70.8 L/s (150 cfm)", "381 mm × 318 mm (15.0 in × 12.5 in)"}},
	} {
		s, _ := New(Config{IP: c.ip}, newTestBackend(), quiet())
		ts := httptest.NewServer(s.Handler())
		_, ov := get(t, ts.Client(), ts.URL+"/")
		_, tp := get(t, ts.Client(), ts.URL+"/terminals/VAV-1-07")
		ts.Close()
		for _, w := range c.want {
			if !strings.Contains(ov+tp, w) {
				t.Errorf("ip=%v: pages lack %q", c.ip, w)
			}
		}
	}
}

// TestTerminalChartsOneQuantityEach: the valve command (0-100 %) has its
// own chart, not the airflow's axis of hundreds of cfm where it lies flat
// on the floor; the rise and airflow charts label the other unit on the
// right; the time zone of the time axis is named.
func TestTerminalChartsOneQuantityEach(t *testing.T) {
	s, _ := New(Config{IP: true}, newTestBackend(), quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	_, body := get(t, ts.Client(), ts.URL+"/terminals/VAV-1-07")
	for _, w := range []string{`aria-label="Valve command (%, times CST)"`, `aria-label="Airflow (cfm and L/s, times CST)"`,
		`aria-label="Air temperature rise, observed and expected (°F and K, times CST)"`} {
		if !strings.Contains(body, w) {
			t.Errorf("terminal page lacks chart %s", w)
		}
	}
	if strings.Contains(body, "Valve command (%) and airflow") {
		t.Error("valve command and airflow still share one axis")
	}
}

// TestChartValveAxisAndAltUnit: a valve held at 0 % is drawn on a 0-100 %
// axis (not -1 to 1), and a chart with a second unit labels its own round
// values on the right: -3.1 to 29.8 °F is -1.7 to 16.6 K, labelled 0, 5,
// 10 and 15 K.
func TestChartValveAxisAndAltUnit(t *testing.T) {
	t0 := time.Date(2025, 1, 13, 0, 0, 0, 0, time.UTC)
	xs := []time.Time{t0, t0.Add(24 * time.Hour), t0.Add(48 * time.Hour)}
	v := string(lineChart("valve", axis{Unit: "%", Lo: 0, Hi: 100, Fixed: true}, 600, 200, []Series{{Name: "valve", X: xs, Y: []float64{0, 0, 0}}}))
	if !strings.Contains(v, ">100<") || strings.Contains(v, ">-1<") {
		t.Errorf("valve at 0 %% not on a 0-100 axis:\n%s", v)
	}
	r := string(lineChart("rise", axis{Unit: "°F", Alt: "K", AltScale: 5.0 / 9}, 600, 200, []Series{{Name: "observed", X: xs, Y: []float64{-3.1, 29.8, 12}}}))
	for _, w := range []string{`fill="#555">0<`, `fill="#555">5<`, `fill="#555">15<`, `>K</text>`} {
		if !strings.Contains(r, w) {
			t.Errorf("rise chart lacks right-hand label %s", w)
		}
	}
}

// TestEvidenceUnknownIsADash: an unknown factor reads "–", never "NaN".
func TestEvidenceUnknownIsADash(t *testing.T) {
	b := newTestBackend()
	b.evidence = func(int) (fdd.Evidence, bool) {
		return fdd.Evidence{At: b.now, SupplyC: 13, DischargeC: 40, HotWaterC: 80, ObservedRiseK: 27, ExpectedRiseK: math.NaN(), SigmaK: math.NaN(),
			ValveFrac: 0, AirflowM3s: math.NaN(), UAFactor: math.NaN(), FlowFactor: math.NaN(), LeakRiseK: math.NaN()}, true
	}
	s, _ := New(Config{IP: true}, b, quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	_, body := get(t, ts.Client(), ts.URL+"/terminals/VAV-1-03")
	if strings.Contains(body, "NaN") {
		t.Error("terminal page shows NaN")
	}
	if !strings.Contains(body, "<th>Apparent UA / water flow factor</th><td>– / –</td>") {
		t.Error("unknown factors not shown as dashes")
	}
}

// TestTerminalPageFaultChecks: an open fault lists its likely causes and
// the checks to make, with the hot-water safety warning before the checks,
// and an acknowledged fault says by whom.
func TestTerminalPageFaultChecks(t *testing.T) {
	b := newTestBackend()
	b.faults[0].To, b.faults[0].AckedBy, b.faults[0].AckedAt = rules.StateAcked, "Dana Okafor", b.now.Add(-time.Hour)
	s, _ := New(Config{IP: true}, b, quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	_, body := get(t, ts.Client(), ts.URL+"/terminals/VAV-1-03")
	warn := strings.Index(body, "hot water scalds and is under pressure")
	check := strings.Index(body, "stroke the valve closed and feel the coil&#39;s return pipe")
	if !strings.Contains(body, "valve seat worn or debris under the seat") || check < 0 {
		t.Error("terminal page lacks the fault's causes or checks")
	}
	if warn < 0 || warn > check {
		t.Error("no hot-water safety warning before the checks")
	}
	if !strings.Contains(body, "Acknowledged by Dana Okafor, Wed 14 Jan 09:00.") {
		t.Error("acknowledged fault does not say by whom")
	}
}

// TestEmptyHistory: a terminal that never had a fault says so.
func TestEmptyHistory(t *testing.T) {
	s, _ := New(Config{}, newTestBackend(), quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	_, body := get(t, ts.Client(), ts.URL+"/terminals/VAV-1-07")
	if !strings.Contains(body, "No fault history.") {
		t.Error("empty history table has no text")
	}
}

// TestRefusedActionKeepsInput: an acknowledgement without a name, or a
// snooze to a past date or not a date, comes back as the form with the
// reason and what was typed; nothing is recorded. A fault that is not
// current (cleared since the e-mail, or never raised) gets a page with a
// way back, not a bare text line.
func TestRefusedActionKeepsInput(t *testing.T) {
	b := newTestBackend()
	s, _ := New(Config{IP: true}, b, quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	jar, _ := cookiejar.New(nil)
	c := &http.Client{Jar: jar}
	action := ts.URL + "/faults/" + url.PathEscape("VAV-1-03/leaking-valve") + "/ack"
	_, form := get(t, c, action)
	m := csrfRe.FindStringSubmatch(form)
	if m == nil {
		t.Fatal("no CSRF field")
	}
	post := func(u string, v url.Values) (int, string) {
		v.Set("csrf", m[1])
		resp, err := c.PostForm(u, v)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		body, _ := io.ReadAll(resp.Body)
		return resp.StatusCode, string(body)
	}
	code, body := post(action, url.Values{"by": {"  "}, "note": {"valve on order"}})
	if code != http.StatusBadRequest || !strings.Contains(body, "a name is required") || !strings.Contains(body, `value="valve on order"`) ||
		!strings.Contains(body, "<header>") {
		t.Errorf("ack without a name: %d\n%s", code, body)
	}
	snooze := strings.Replace(action, "/ack", "/snooze", 1)
	code, body = post(snooze, url.Values{"by": {"Dana Okafor"}, "until": {"2026-01-10"}, "note": {"parts Friday"}})
	if code != http.StatusBadRequest || !strings.Contains(body, "Sat 10 Jan 2026 is not in the future; pick Thu 15 Jan 2026 or later") ||
		!strings.Contains(body, `value="Dana Okafor"`) || !strings.Contains(body, `value="parts Friday"`) || !strings.Contains(body, `value="2026-01-10"`) {
		t.Errorf("snooze into the past: %d\n%s", code, body)
	}
	code, body = post(snooze, url.Values{"by": {"Dana Okafor"}, "until": {"next week"}})
	if code != http.StatusBadRequest || !strings.Contains(body, "&#34;next week&#34; is not a date") {
		t.Errorf("snooze to a non-date: %d\n%s", code, body)
	}
	if len(b.acks) != 0 {
		t.Errorf("refused input recorded: %v", b.acks)
	}
	gone := ts.URL + "/faults/" + url.PathEscape("VAV-1-07/fouled-coil") + "/ack"
	code, body = post(gone, url.Values{"by": {"Dana Okafor"}})
	if code != http.StatusNotFound || !strings.Contains(body, "may have cleared") || !strings.Contains(body, `href="/terminals/VAV-1-07"`) {
		t.Errorf("ack of a fault not current: %d\n%s", code, body)
	}
	code, body = get(t, c, gone)
	if code != http.StatusNotFound || !strings.Contains(body, "<header>") {
		t.Errorf("form of a fault not current: %d\n%s", code, body)
	}
}

// TestPlainHTTP: unknown paths get the site's 404 page; HEAD answers
// without a body; other methods are refused with Allow.
func TestPlainHTTP(t *testing.T) {
	s, _ := New(Config{}, newTestBackend(), quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	c := ts.Client()
	for _, p := range []string{"/nope", "/terminals/NOPE"} {
		code, body := get(t, c, ts.URL+p)
		if code != http.StatusNotFound || !strings.Contains(body, `<a href="/">Overview</a>`) {
			t.Errorf("GET %s: %d\n%s", p, code, body)
		}
	}
	for _, c := range []struct {
		method, path string
		code         int
	}{
		{"HEAD", "/", 200}, {"HEAD", "/terminals/VAV-1-03", 200}, {"HEAD", "/nope", 404},
		{"POST", "/", 405}, {"POST", "/nope", 405}, {"DELETE", "/terminals/VAV-1-03", 405}, {"PUT", "/faults/x/ack", 405},
	} {
		req, _ := http.NewRequest(c.method, ts.URL+c.path, nil)
		resp, err := ts.Client().Do(req)
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		if resp.StatusCode != c.code {
			t.Errorf("%s %s: %d, want %d", c.method, c.path, resp.StatusCode, c.code)
		}
		if c.method == "HEAD" && len(body) != 0 {
			t.Errorf("HEAD %s has a body", c.path)
		}
		if c.code == 405 && resp.Header.Get("Allow") == "" {
			t.Errorf("%s %s: 405 without Allow", c.method, c.path)
		}
	}
}

// TestCollectorAgeOnTheWallClock: a collector's last success is measured
// against the wall clock, also when the backend's Now is a data clock
// (the demo's simulated January): one minute ago, not "-16380h5m6s ago".
func TestCollectorAgeOnTheWallClock(t *testing.T) {
	b := newTestBackend()
	wall := time.Date(2026, 12, 3, 13, 16, 5, 0, time.UTC)
	b.sources = []SourceHealth{{Name: "bas", Kind: "bacnet", LastSuccess: wall.Add(-70 * time.Second), Reads: 9}}
	s, _ := New(Config{Wall: func() time.Time { return wall }}, b, quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	_, body := get(t, ts.Client(), ts.URL+"/sources")
	if !strings.Contains(body, `<td data-l="Last success" class="ok">Thu 3 Dec 07:14:55 (1 min ago)</td>`) {
		t.Errorf("collector age:\n%s", body)
	}
	for d, want := range map[time.Duration]string{-time.Hour: "just now", 45 * time.Second: "45 s ago", 3*time.Hour + 5*time.Minute: "3 h 5 min ago",
		52*time.Hour + 10*time.Minute: "2 d 4 h ago"} {
		if got := ago(d); got != want {
			t.Errorf("ago(%v) = %q, want %q", d, got, want)
		}
	}
}

// TestNamesFromTheSiteFileEscaped: names from the site file are text on
// the pages, never markup.
func TestNamesFromTheSiteFileEscaped(t *testing.T) {
	b := newTestBackend()
	b.site.Name = `North <script>alert(1)</script> & Co`
	b.site.Terminals[1].Zone = `<img src=x onerror=alert(2)>`
	s, _ := New(Config{}, b, quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	for _, p := range []string{"/", "/terminals/VAV-1-07", "/sources", "/nope"} {
		_, body := get(t, ts.Client(), ts.URL+p)
		if strings.Contains(body, "<script>") || strings.Contains(body, "<img") {
			t.Errorf("%s: site-file text rendered as markup", p)
		}
		if !strings.Contains(body, "North &lt;script&gt;alert(1)&lt;/script&gt; &amp; Co") {
			t.Errorf("%s: escaped site name missing", p)
		}
	}
}

// TestWeeklyCostInCents: the overview's total reads as the rows, the
// e-mail and the report write money ("USD 12.40"): 5.93 + 6.47 = 12.40,
// not "USD 12".
func TestWeeklyCostInCents(t *testing.T) {
	b := newTestBackend()
	f := b.faults[0]
	f.FaultID, f.Entity, f.Kind, f.Impact.WeeklyCost = "VAV-1-07/fouled-coil", "VAV-1-07", fdd.KindFouledCoil, 6.47
	b.faults = append(b.faults, f)
	s, _ := New(Config{}, b, quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	_, body := get(t, ts.Client(), ts.URL+"/")
	if !strings.Contains(body, `<div class="n">USD 12.40</div>estimated cost / week`) {
		t.Error("weekly total not in the USD 12.40 form")
	}
	if strings.Index(body, "USD 6.47") > strings.Index(body, "USD 5.93") {
		t.Error("faults not ranked by weekly cost")
	}
}

// TestTerminalWithoutData: a terminal nothing was read for yet says so in
// its charts and its evidence, not with empty tables.
func TestTerminalWithoutData(t *testing.T) {
	b := newTestBackend()
	b.evidence = func(int) (fdd.Evidence, bool) { return fdd.Evidence{}, false }
	b.noSeries = true
	s, _ := New(Config{}, b, quiet())
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	code, body := get(t, ts.Client(), ts.URL+"/terminals/VAV-1-07")
	if code != http.StatusOK || strings.Count(body, "no data yet") < 3 || !strings.Contains(body, "No sample analysed yet for this terminal") {
		t.Errorf("terminal without data: %d\n%s", code, body)
	}
	_, ov := get(t, ts.Client(), ts.URL+"/")
	if !strings.Contains(ov, `<div class="n warn">1</div>without usable data`) {
		t.Error("overview does not count the terminal without data")
	}
}
