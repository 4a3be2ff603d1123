package trendfile

import (
	"path/filepath"
	"strings"
	"testing"
	"time"

	"risewatch/site"
)

// DST rules for the check values: the IANA tz database. America/Chicago in
// 2024 (US Energy Policy Act of 2005, §110): DST from Sun 10 Mar 02:00 CST
// (08:00 UTC) to Sun 3 Nov 02:00 CDT (07:00 UTC). Europe/Berlin in 2024
// (EU Directive 2000/84/EC): summer time from Sun 31 Mar 01:00 UTC to
// Sun 27 Oct 01:00 UTC.

// wallRows returns "HH:MM" wall times every 15 min between from and to
// (inclusive), as "date HH:MM" strings.
func wallRows(date string, from, to string) []string {
	f, _ := time.Parse("15:04", from)
	t, _ := time.Parse("15:04", to)
	var out []string
	for x := f; !x.After(t); x = x.Add(15 * time.Minute) {
		out = append(out, date+" "+x.Format("15:04"))
	}
	return out
}

func runDST(t *testing.T, zone, layout string, times []string) ([]time.Time, Stats) {
	t.Helper()
	loc, err := time.LoadLocation(zone)
	if err != nil {
		t.Fatal(err)
	}
	s := genSite(1)
	var b strings.Builder
	b.WriteString("timestamp,VAV-000.DAT col\n")
	for _, ts := range times {
		b.WriteString(ts + ",70\n")
	}
	path := filepath.Join(t.TempDir(), "dst.csv")
	writeFile(t, path, b.String())
	src := newSource(t, s, site.TrendfileConfig{Path: path, TimeFormat: layout, TimeZone: loc})
	var at []time.Time
	for _, r := range readAll(t, src) {
		at = append(at, r.At)
	}
	return at, src.Stats()
}

func checkContinuous(t *testing.T, got []time.Time, first time.Time, n int) {
	t.Helper()
	if len(got) != n {
		t.Fatalf("got %d readings, want %d", len(got), n)
	}
	for i, g := range got {
		if want := first.Add(time.Duration(i) * 15 * time.Minute); !g.Equal(want) {
			t.Errorf("row %d at %v, want %v", i, g.UTC(), want)
		}
	}
}

func TestDSTChicagoFallBackRepeatedHour(t *testing.T) {
	rows := append(wallRows("2024-11-03", "00:00", "01:45"), wallRows("2024-11-03", "01:00", "03:00")...)
	for _, layout := range []string{"2006-01-02 15:04", FormatRFC3339} {
		got, st := runDST(t, "America/Chicago", layout, rows)
		// 00:00 CDT = 05:00 UTC; the repeated hour is read twice, so the
		// instants run on every 15 min to 03:00 CST = 09:00 UTC.
		checkContinuous(t, got, time.Date(2024, 11, 3, 5, 0, 0, 0, time.UTC), 17)
		if st.RepeatedTimes != 8 {
			t.Errorf("%s: repeated %d, want 8 (four rows, each hour)", layout, st.RepeatedTimes)
		}
	}
}

func TestDSTChicagoSpringForward(t *testing.T) {
	rows := append(wallRows("2024-03-10", "00:00", "01:45"), wallRows("2024-03-10", "03:00", "04:00")...)
	got, st := runDST(t, "America/Chicago", "2006-01-02 15:04", rows)
	// 00:00 CST = 06:00 UTC; 03:00 CDT = 08:00 UTC follows 01:45 CST = 07:45 UTC.
	checkContinuous(t, got, time.Date(2024, 3, 10, 6, 0, 0, 0, time.UTC), 13)
	if st.DSTGapTimes != 0 {
		t.Errorf("gap times %d, want 0", st.DSTGapTimes)
	}
	// A time inside the gap is read with the offset before it (CST).
	got, st = runDST(t, "America/Chicago", "2006-01-02 15:04", []string{"2024-03-10 01:45", "2024-03-10 02:30", "2024-03-10 03:45"})
	want := []time.Time{time.Date(2024, 3, 10, 7, 45, 0, 0, time.UTC), time.Date(2024, 3, 10, 8, 30, 0, 0, time.UTC), time.Date(2024, 3, 10, 8, 45, 0, 0, time.UTC)}
	for i := range want {
		if i >= len(got) || !got[i].Equal(want[i]) {
			t.Fatalf("gap case: got %v, want %v", got, want)
		}
	}
	if st.DSTGapTimes != 1 {
		t.Errorf("gap times %d, want 1", st.DSTGapTimes)
	}
}

func TestDSTBerlin(t *testing.T) {
	rows := append(wallRows("2024-10-27", "00:00", "02:45"), wallRows("2024-10-27", "02:00", "04:00")...)
	got, st := runDST(t, "Europe/Berlin", "2006-01-02 15:04", rows)
	// 00:00 CEST (UTC+2) = 22:00 UTC on 26 Oct; 04:00 CET = 03:00 UTC.
	checkContinuous(t, got, time.Date(2024, 10, 26, 22, 0, 0, 0, time.UTC), 21)
	if st.RepeatedTimes != 8 {
		t.Errorf("repeated %d, want 8", st.RepeatedTimes)
	}
	rows = append(wallRows("2024-03-31", "00:00", "01:45"), wallRows("2024-03-31", "03:00", "04:00")...)
	got, _ = runDST(t, "Europe/Berlin", FormatRFC3339, rows)
	// 00:00 CET = 23:00 UTC on 30 Mar; 03:00 CEST = 01:00 UTC.
	checkContinuous(t, got, time.Date(2024, 3, 30, 23, 0, 0, 0, time.UTC), 13)
}

func TestOffsetTimesNeedNoZone(t *testing.T) {
	// Explicit offsets are exact whatever the zone (RFC 3339 §5.6).
	got, st := runDST(t, "Europe/Berlin", FormatRFC3339, []string{
		"2024-11-03T01:30:00-05:00", "2024-11-03T01:30:00-06:00", "2024-11-03T07:45:00Z", "2024-11-03 08:00:00.5+0000"})
	want := []time.Time{time.Date(2024, 11, 3, 6, 30, 0, 0, time.UTC), time.Date(2024, 11, 3, 7, 30, 0, 0, time.UTC),
		time.Date(2024, 11, 3, 7, 45, 0, 0, time.UTC), time.Date(2024, 11, 3, 8, 0, 0, 5e8, time.UTC)}
	if len(got) != len(want) {
		t.Fatalf("got %v", got)
	}
	for i := range want {
		if !got[i].Equal(want[i]) {
			t.Errorf("row %d: %v, want %v", i, got[i], want[i])
		}
	}
	if st.RepeatedTimes != 0 || st.DSTGapTimes != 0 {
		t.Errorf("stats %+v", st)
	}
}

func TestUnixTimes(t *testing.T) {
	p, _ := newTimeParser(FormatUnix, nil)
	// 1705276800 s is 2024-01-15T00:00:00Z (POSIX time definition, IEEE Std 1003.1 §4.16).
	ns, err := p.parse([]byte("1705276800.25"))
	if err != nil || ns != 1705276800250000000 {
		t.Errorf("unix: %d %v", ns, err)
	}
	p, _ = newTimeParser(FormatUnixMs, nil)
	if ns, err := p.parse([]byte("1705276800000")); err != nil || ns != 1705276800e9 {
		t.Errorf("unixms: %d %v", ns, err)
	}
}
