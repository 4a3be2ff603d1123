package report

import (
	"fmt"
	"strings"
	"time"

	"github.com/robfig/cron/v3"
)

// DefaultSpec is the default schedule: Monday 06:00 site time.
const DefaultSpec = "0 6 * * MON"

// ParseSchedule parses a five-field cron spec (robfig/cron/v3 standard
// parser, with descriptors such as @weekly) evaluated in loc.
func ParseSchedule(spec string, loc *time.Location) (cron.Schedule, error) {
	if strings.TrimSpace(spec) == "" {
		spec = DefaultSpec
	}
	if loc == nil {
		loc = time.UTC
	}
	if !strings.HasPrefix(spec, "CRON_TZ=") && !strings.HasPrefix(spec, "TZ=") {
		spec = "CRON_TZ=" + loc.String() + " " + spec
	}
	s, err := cron.ParseStandard(spec)
	if err != nil {
		return nil, fmt.Errorf("report schedule %q: %w", spec, err)
	}
	return s, nil
}

// WeekOf returns the Monday-00:00-to-Monday week (site time) that contains t.
func WeekOf(t time.Time, loc *time.Location) (start, end time.Time) {
	if loc == nil {
		loc = time.UTC
	}
	lt := t.In(loc)
	off := (int(lt.Weekday()) + 6) % 7 // days since Monday
	start = time.Date(lt.Year(), lt.Month(), lt.Day()-off, 0, 0, 0, 0, loc)
	return start, start.AddDate(0, 0, 7)
}

// PreviousWeek is the full week before the one containing t: what a report
// run on Monday morning covers.
func PreviousWeek(t time.Time, loc *time.Location) (start, end time.Time) {
	s, _ := WeekOf(t, loc)
	return WeekOf(s.AddDate(0, 0, -1), loc)
}

// ParseWeek reads a week as an ISO week ("2026-W03") or any date in it
// ("2026-01-14"), in loc.
func ParseWeek(s string, loc *time.Location) (start, end time.Time, err error) {
	if loc == nil {
		loc = time.UTC
	}
	var y, w int
	if n, _ := fmt.Sscanf(s, "%d-W%d", &y, &w); n == 2 {
		if w < 1 || w > 53 {
			return time.Time{}, time.Time{}, fmt.Errorf("week %q: week number %d out of range", s, w)
		}
		// ISO 8601: week 1 contains 4 January.
		jan4 := time.Date(y, 1, 4, 0, 0, 0, 0, loc)
		s1, _ := WeekOf(jan4, loc)
		start = s1.AddDate(0, 0, 7*(w-1))
		if _, iw := start.ISOWeek(); iw != w {
			return time.Time{}, time.Time{}, fmt.Errorf("week %q: year %d has no week %d", s, y, w)
		}
		return start, start.AddDate(0, 0, 7), nil
	}
	d, err := time.ParseInLocation("2006-01-02", s, loc)
	if err != nil {
		return time.Time{}, time.Time{}, fmt.Errorf("week %q: want YYYY-Www or YYYY-MM-DD", s)
	}
	start, end = WeekOf(d, loc)
	return start, end, nil
}
