package trendfile

import (
	"fmt"
	"strings"
	"time"

	"risewatch/collector"
	"risewatch/site"
	"risewatch/units"
)

// Layouts.
const (
	LayoutWide = "wide" // time column, then one column per point (the default)
	LayoutLong = "long" // time, point name, value
)

// Default column names.
const (
	DefaultTimeColumn  = "timestamp"
	DefaultPointColumn = "point"
	DefaultValueColumn = "value"
)

// format is the resolved per-source file format.
type format struct {
	source       string
	layout       string
	delim        byte
	decComma     bool
	skipRows     int
	timeColumn   string
	timeSet      bool // TimeColumn was configured (no fallback to column 0)
	pointColumn  string
	valueColumn  string
	timeFormat   string
	loc          *time.Location
	batchReading int // readings per batch sent
	workers      int // goroutines parsing a wide file (0: GOMAXPROCS; 1: sequential)
	chunkBytes   int // input per chunk of the parallel reader (0: default)
	modeChunks   int // chunks per measured window of the parallel reader (0: default)
}

// resolveFormat checks c and fills defaults. A time zone missing from c
// falls back to the site's.
func resolveFormat(source string, c site.TrendfileConfig, siteLoc *time.Location) (format, error) {
	f := format{source: source, layout: strings.ToLower(c.Layout), decComma: c.DecimalComma, skipRows: c.SkipRows,
		timeColumn: c.TimeColumn, timeSet: c.TimeColumn != "", pointColumn: c.PointColumn, valueColumn: c.ValueColumn,
		timeFormat: c.TimeFormat, loc: c.TimeZone, batchReading: 2048}
	if f.layout == "" {
		f.layout = LayoutWide
	}
	if f.layout != LayoutWide && f.layout != LayoutLong {
		return f, fmt.Errorf("source %s: layout %q: want %q or %q", source, c.Layout, LayoutWide, LayoutLong)
	}
	switch {
	case c.Delimiter == 0 && c.DecimalComma:
		f.delim = ';'
	case c.Delimiter == 0:
		f.delim = ','
	case c.Delimiter > 127 || c.Delimiter == '"' || c.Delimiter == '\n' || c.Delimiter == '\r':
		return f, fmt.Errorf("source %s: delimiter %q: want one ASCII character other than a quote or line break", source, c.Delimiter)
	default:
		f.delim = byte(c.Delimiter)
	}
	if f.decComma && f.delim == ',' {
		return f, fmt.Errorf("source %s: decimal comma needs a delimiter other than ',' (e.g. ';')", source)
	}
	if f.skipRows < 0 {
		return f, fmt.Errorf("source %s: skip rows %d: want 0 or more", source, f.skipRows)
	}
	if f.timeColumn == "" {
		f.timeColumn = DefaultTimeColumn
	}
	if f.pointColumn == "" {
		f.pointColumn = DefaultPointColumn
	}
	if f.valueColumn == "" {
		f.valueColumn = DefaultValueColumn
	}
	if f.loc == nil {
		f.loc = siteLoc
	}
	if f.loc == nil {
		f.loc = time.UTC
	}
	if _, err := newTimeParser(f.timeFormat, f.loc); err != nil {
		return f, fmt.Errorf("source %s: %w", source, err)
	}
	return f, nil
}

// pointInfo is one site point this source may deliver, with its unit
// conversion SI = raw·scale + offset (every unit in package units is affine).
type pointInfo struct {
	name          string
	scale, offset float64
	binary        bool
}

// pointTable maps header names to the site's points for one source.
type pointTable struct {
	points   []pointInfo
	byColumn map[string]int32 // PointRef.Column of this source's trend-column points
	byName   map[string]int32 // PointRef.Name of every point
}

// buildPoints collects the site's points and their unit conversions.
func buildPoints(source string, s *site.Site) (*pointTable, error) {
	t := &pointTable{byColumn: map[string]int32{}, byName: map[string]int32{}}
	for _, p := range collector.Points(s) {
		if p.Fixed != nil {
			continue
		}
		pi := pointInfo{name: p.Name, scale: 1, binary: p.Binary}
		if p.Unit != "" && !p.Binary {
			u, err := units.ParseUnit(p.Unit)
			if err != nil {
				return nil, fmt.Errorf("source %s: point %s: %w", source, p.Name, err)
			}
			pi.offset = u.ToSI(0)
			pi.scale = u.ToSI(1) - pi.offset
		}
		i := int32(len(t.points))
		t.points = append(t.points, pi)
		t.byName[p.Name] = i
		if p.Kind == site.PointTrendColumn && p.Source == source && p.Column != "" {
			if _, dup := t.byColumn[p.Column]; !dup {
				t.byColumn[p.Column] = i
			}
		}
	}
	return t, nil
}

// lookup finds the point for a header or long-layout point name: a
// trend-column point of this source whose Column matches, else a point
// whose Name matches.
func (t *pointTable) lookup(name []byte) (int32, bool) {
	if i, ok := t.byColumn[string(name)]; ok {
		return i, true
	}
	i, ok := t.byName[string(name)]
	return i, ok
}
