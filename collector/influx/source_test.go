package influx

import (
	"context"
	"fmt"
	"math"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/influx/influxtest"
	"risewatch/site"
	"risewatch/units"
)

// memCheckpoints is an in-memory Checkpoints for tests.
type memCheckpoints struct {
	mu sync.Mutex
	m  map[string][]byte
}

func (c *memCheckpoints) Get(k string) ([]byte, bool, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	v, ok := c.m[k]
	return v, ok, nil
}

func (c *memCheckpoints) Put(k string, v []byte) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.m == nil {
		c.m = map[string][]byte{}
	}
	c.m[k] = append([]byte(nil), v...)
	return nil
}

var t0 = time.Date(2025, 1, 14, 0, 0, 0, 0, time.UTC)

// influxSite is an invented one-terminal site whose points live in InfluxDB;
// the second terminal's series in the same measurement must not leak in.
func influxSite(url string) *site.Site {
	ref := func(field, term string) *site.InfluxRef {
		return &site.InfluxRef{Measurement: "vav", Field: field, Tags: map[string]string{"terminal": term}}
	}
	s := &site.Site{Name: "north-campus",
		Sources: []site.SourceConfig{{Name: "bms-influx", Kind: "influx", Influx: &site.InfluxConfig{URL: url, Bucket: influxtest.Bucket}}},
		Terminals: []site.Terminal{{ID: `VAV "2" ${x}`, Points: site.TerminalPoints{
			Discharge: site.PointRef{Name: "VAV-2.DAT", Kind: site.PointInflux, Source: "bms-influx", Influx: ref("dat", `VAV "2" ${x}`), Unit: "degF"},
			Airflow:   site.PointRef{Name: "VAV-2.FLOW", Kind: site.PointInflux, Source: "bms-influx", Influx: ref("flow", `VAV "2" ${x}`), Unit: "cfm"},
			Valve:     site.PointRef{Name: "VAV-2.VLV", Kind: site.PointInflux, Source: "bms-influx", Influx: ref("valve", `VAV "2" ${x}`), Unit: "%"},
			ZoneTemp:  site.PointRef{Name: "VAV-2.ZN", Kind: site.PointTrendColumn, Source: "csv", Column: "ZN"},
		}}},
	}
	s.Index()
	return s
}

// seed writes hours of 5-minute data for the site's terminal and a decoy.
func seed(t *testing.T, srv *influxtest.Server, hours int) {
	t.Helper()
	var b strings.Builder
	for i := 0; i < hours*12; i++ {
		ts := t0.Add(time.Duration(i) * 5 * time.Minute).UnixNano()
		fmt.Fprintf(&b, "vav,terminal=VAV\\ \"2\"\\ ${x} dat=%g,flow=%di,valve=%g %d\n", 68+float64(i%10), 400+i%3, float64(i%100), ts)
		fmt.Fprintf(&b, "vav,terminal=decoy dat=1,flow=1i,valve=1 %d\n", ts)
	}
	if err := srv.Write(b.String()); err != nil {
		t.Fatal(err)
	}
}

func collect(t *testing.T, s *Source) map[string][]collector.Reading {
	t.Helper()
	out := make(chan []collector.Reading, 16)
	got := map[string][]collector.Reading{}
	done := make(chan struct{})
	go func() {
		for batch := range out {
			for _, r := range batch {
				got[r.Point] = append(got[r.Point], r)
			}
		}
		close(done)
	}()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	if err := s.Run(ctx, out); err != nil {
		t.Fatal(err)
	}
	close(out)
	<-done
	return got
}

func TestHistoryPagedAndCheckpointed(t *testing.T) {
	srv := influxtest.Start(t)
	seed(t, srv, 10)
	st := influxSite(srv.URL)
	cps := &memCheckpoints{}
	var reads int
	opt := Options{Name: "bms-influx", Config: *st.Sources[0].Influx, Site: st, Start: t0, End: t0.Add(5 * time.Hour),
		Page: 2 * time.Hour, Checkpoints: cps, OnRead: func(time.Duration, int, error) { reads++ }}
	s, err := New(opt)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Points()) != 3 {
		t.Fatalf("points %v, want the three influx points only", s.Points())
	}
	got := collect(t, s)
	for _, name := range []string{"VAV-2.DAT", "VAV-2.FLOW", "VAV-2.VLV"} {
		if len(got[name]) != 5*12 { // 5 h of 5-minute samples in [t0, t0+5h)
			t.Fatalf("%s: %d readings, want 60", name, len(got[name]))
		}
	}
	if reads != 3*3 { // pages of 2 h over 5 h: 3 pages × 3 points
		t.Errorf("%d queries, want 9", reads)
	}
	dat := got["VAV-2.DAT"]
	for i, r := range dat {
		if i > 0 && !r.At.After(dat[i-1].At) {
			t.Fatalf("readings out of order at %d", i)
		}
		// 68 °F = 20 °C exactly (NIST SP 811 B.9: t/°C = (t/°F − 32)/1.8).
		want := (68 + float64(i%10) - 32) / 1.8
		if math.Abs(r.Value-want) > 1e-12 || r.Quality != collector.Good {
			t.Fatalf("reading %d = %v (%s), want %v °C", i, r.Value, r.Quality, want)
		}
	}
	if v := got["VAV-2.FLOW"][0].Value; math.Abs(v-units.CFMToM3s(400)) > 1e-15 {
		t.Errorf("flow %v m³/s, want 400 cfm = %v", v, units.CFMToM3s(400))
	}
	if v := got["VAV-2.VLV"][50].Value; math.Abs(v-0.5) > 1e-15 { // 50 % = 0.5
		t.Errorf("valve %v, want 0.5", v)
	}

	// A second run over a longer range continues from the checkpoints:
	// only [5 h, 10 h) comes back, nothing twice.
	opt.End = t0.Add(10 * time.Hour)
	s2, err := New(opt)
	if err != nil {
		t.Fatal(err)
	}
	got2 := collect(t, s2)
	for name, rs := range got2 {
		if len(rs) != 5*12 || rs[0].At.Before(t0.Add(5*time.Hour)) {
			t.Fatalf("%s: resumed run gave %d readings from %v, want 60 from 05:00", name, len(rs), rs[0].At)
		}
	}
}

func TestFollowMode(t *testing.T) {
	srv := influxtest.Start(t)
	st := influxSite(srv.URL)
	now := time.Now().Truncate(time.Second)
	line := func(at time.Time, v float64) string {
		return fmt.Sprintf("vav,terminal=VAV\\ \"2\"\\ ${x} dat=%g %d\n", v, at.UnixNano())
	}
	if err := srv.Write(line(now.Add(-2*time.Minute), 70)); err != nil {
		t.Fatal(err)
	}
	s, err := New(Options{Name: "bms-influx", Config: *st.Sources[0].Influx, Site: st, Start: now.Add(-10 * time.Minute),
		PollInterval: 50 * time.Millisecond, Lag: -1, Page: time.Hour})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 20*time.Second)
	defer cancel()
	out := make(chan []collector.Reading, 16)
	errc := make(chan error, 1)
	go func() { errc <- s.Run(ctx, out) }()
	next := func() collector.Reading {
		select {
		case b := <-out:
			return b[0]
		case <-ctx.Done():
			t.Fatal("no reading within 20 s")
		}
		return collector.Reading{}
	}
	if r := next(); r.Point != "VAV-2.DAT" || math.Abs(r.Value-units.FToC(70)) > 1e-12 {
		t.Fatalf("first reading %+v", r)
	}
	if err := srv.Write(line(time.Now().Add(-time.Millisecond), 72)); err != nil {
		t.Fatal(err)
	}
	if r := next(); math.Abs(r.Value-units.FToC(72)) > 1e-12 {
		t.Fatalf("followed reading %+v", r)
	}
	cancel()
	if err := <-errc; err != nil {
		t.Fatal(err)
	}
}

func TestHistoryErrorNamesPoint(t *testing.T) {
	st := influxSite("http://127.0.0.1:1") // nothing listens on port 1
	s, err := New(Options{Name: "bms-influx", Config: *st.Sources[0].Influx, Site: st, Start: t0, End: t0.Add(time.Hour), HTTPTimeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	err = s.Run(context.Background(), make(chan []collector.Reading, 1))
	if err == nil || !strings.Contains(err.Error(), "point VAV-2.") {
		t.Fatalf("error %v, want one naming the point", err)
	}
}

func TestNewRejectsBadPoints(t *testing.T) {
	st := influxSite("http://127.0.0.1:1")
	st.Terminals[0].Points.Discharge.Unit = "furlongs"
	if _, err := New(Options{Name: "bms-influx", Config: *st.Sources[0].Influx, Site: st, Start: t0}); err == nil || !strings.Contains(err.Error(), "VAV-2.DAT") {
		t.Fatalf("unknown unit: %v", err)
	}
	st = influxSite("http://127.0.0.1:1")
	st.Terminals[0].Points.Airflow.Influx.Field = ""
	if _, err := New(Options{Name: "bms-influx", Config: *st.Sources[0].Influx, Site: st, Start: t0}); err == nil || !strings.Contains(err.Error(), "VAV-2.FLOW") {
		t.Fatalf("missing field: %v", err)
	}
}
