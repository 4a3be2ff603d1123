package reliability

import (
	"context"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/collector/bacnet"
)

// TestCampusSiteLoadsAndPolls: the generated site file loads, names every
// point, and one poll of a small campus reads each of them Good.
func TestCampusSiteLoadsAndPolls(t *testing.T) {
	c := startCampus(t, CampusConfig{Groups: 2, PerGroup: 3, Timeout: time.Second, Retries: 1})
	s, _ := loadSite(t, c.SiteYAML(""))
	if len(s.Terminals) != 6 || len(s.AHUs) != 2 {
		t.Fatalf("site has %d terminals and %d AHUs, want 6 and 2", len(s.Terminals), len(s.AHUs))
	}
	refs := bacnet.PointsFor(s, "bas")
	if len(refs) != c.Points() {
		t.Fatalf("%d BACnet points in the site, campus serves %d", len(refs), c.Points())
	}
	src, err := bacnet.NewSource("bas", *s.Sources[0].BACnet, refs, nil, time.UTC, quietLog())
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 20*time.Second)
	defer cancel()
	if err := src.Start(ctx); err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	for _, u := range src.UnitChecks() {
		if u.Mismatch {
			t.Errorf("units check: %s", u.Message)
		}
	}
	rs, err := src.PollOnce(ctx)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range rs {
		if r.Quality != collector.Good {
			t.Errorf("%s: quality %s", r.Point, r.Quality)
		}
	}
	if len(rs) != c.Points() {
		t.Errorf("%d readings, want %d", len(rs), c.Points())
	}
}
