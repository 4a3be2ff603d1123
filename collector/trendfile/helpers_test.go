package trendfile

import (
	"bufio"
	"context"
	"fmt"
	"io"
	"log/slog"
	"math"
	"os"
	"strconv"
	"testing"
	"time"
	_ "time/tzdata" // DST tests must not depend on the machine's zoneinfo

	"risewatch/collector"
	"risewatch/site"
	"risewatch/units"
)

const srcName = "trend"

func col(name, unit string, binary bool) site.PointRef {
	return site.PointRef{Name: name, Kind: site.PointTrendColumn, Source: srcName, Column: name + " col", Unit: unit, Binary: binary}
}

// genSite has one loop, one AHU and n terminals with IP-unit trend columns.
func genSite(n int) *site.Site {
	s := &site.Site{Name: "gen", Location: time.UTC,
		Loops: []site.Loop{{ID: "HW", DesignSupplyC: 80, SupplyTemp: col("HW.HWST", "degF", false), PlantEnabled: col("HW.EN", "on/off", true)}},
		AHUs:  []site.AHU{{ID: "AHU", SupplyAir: col("AHU.SAT", "degF", false), FanStatus: col("AHU.FAN", "", true)}},
	}
	for i := 0; i < n; i++ {
		id := fmt.Sprintf("VAV-%03d", i)
		s.Terminals = append(s.Terminals, site.Terminal{ID: id, AHU: "AHU", Loop: "HW", Points: site.TerminalPoints{
			Airflow: col(id+".FLOW", "cfm", false), Discharge: col(id+".DAT", "degF", false),
			Valve: col(id+".VLV", "%", false), ZoneTemp: col(id+".ZN", "degF", false)}})
	}
	s.LoopIndex = map[string]int{"HW": 0}
	s.AHUIndex = map[string]int{"AHU": 0}
	return s
}

// columns lists the site's trend points in file order.
func columns(s *site.Site) []site.PointRef { return collector.Points(s) }

// rawValue is a deterministic raw (file-unit) value for point k at row r.
func rawValue(p site.PointRef, k, r int) float64 {
	switch {
	case p.Binary:
		return float64((r/37 + k) % 2)
	case p.Unit == "%":
		return math.Round(50+50*math.Sin(float64(r+k)/20)) / 1
	case p.Unit == "cfm":
		return 300 + float64((r*7+k*13)%400)
	}
	return math.Round((55+40*math.Sin(float64(r*3+k)/50))*100) / 100
}

// toSI is the expected reading value.
func toSI(t *testing.T, p site.PointRef, raw float64) float64 {
	if p.Binary || p.Unit == "" {
		return raw
	}
	u, err := units.ParseUnit(p.Unit)
	if err != nil {
		t.Fatal(err)
	}
	return u.ToSI(raw)
}

// writeWide writes rows rows of the simulator's layout: "timestamp"
// (RFC 3339 with offset) then one column per point named by Column.
func writeWide(w io.Writer, s *site.Site, start time.Time, step time.Duration, rows int) error {
	bw := bufio.NewWriterSize(w, 1<<16)
	pts := columns(s)
	bw.WriteString("timestamp")
	for _, p := range pts {
		bw.WriteString("," + p.Column)
	}
	bw.WriteString("\n")
	var num []byte
	for r := 0; r < rows; r++ {
		bw.WriteString(start.Add(time.Duration(r) * step).Format(time.RFC3339))
		for k, p := range pts {
			bw.WriteByte(',')
			num = strconv.AppendFloat(num[:0], rawValue(p, k, r), 'f', -1, 64)
			bw.Write(num)
		}
		bw.WriteByte('\n')
	}
	return bw.Flush()
}

// writeLong writes the same data as writeWide in the long layout.
func writeLong(w io.Writer, s *site.Site, start time.Time, step time.Duration, rows int) error {
	bw := bufio.NewWriter(w)
	pts := columns(s)
	bw.WriteString("timestamp,point,value\n")
	for r := 0; r < rows; r++ {
		ts := start.Add(time.Duration(r) * step).Format(time.RFC3339)
		for k, p := range pts {
			fmt.Fprintf(bw, "%s,%s,%s\n", ts, p.Column, strconv.FormatFloat(rawValue(p, k, r), 'f', -1, 64))
		}
	}
	return bw.Flush()
}

func quietLog() *slog.Logger { return slog.New(slog.NewTextHandler(io.Discard, nil)) }

func newSource(t testing.TB, s *site.Site, c site.TrendfileConfig) *Source {
	t.Helper()
	src, err := New(Config{Name: srcName, Site: s, File: c, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	return src
}

// readAll runs the source to completion and returns every reading.
func readAll(t testing.TB, src *Source) []collector.Reading {
	t.Helper()
	out := make(chan []collector.Reading, 16)
	errc := make(chan error, 1)
	go func() { errc <- src.Run(context.Background(), out); close(out) }()
	var all []collector.Reading
	for b := range out {
		all = append(all, b...)
	}
	if err := <-errc; err != nil {
		t.Fatal(err)
	}
	return all
}

func writeFile(t testing.TB, path, content string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
}
