package sim

import (
	"bufio"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"time"

	"risewatch/site"
	"risewatch/units"
)

// Output file names inside the output directory.
const (
	TrendDirName    = "trends"
	GroundTruthFile = "ground_truth.csv"
	PeaksFile       = "true_peaks.csv"
	SiteFile        = "site.yaml"
)

// WriteResult summarises what WriteOutputs wrote.
type WriteResult struct {
	TrendFiles []string
	Rows       int
	Columns    int
	Faults     int
}

// trendWriter writes the wide CSV export, one file per local day, in the
// units a BAS exports (°F, cfm, %, On/Off).
type trendWriter struct {
	dir   string
	day   string
	f     *os.File
	w     *bufio.Writer
	buf   []byte
	files []string
	rows  int
	cols  []string
}

func (tw *trendWriter) header(s *Simulator) {
	tw.cols = []string{"timestamp", colOAT()}
	for _, l := range s.sc.Loops {
		tw.cols = append(tw.cols, colLoopSupply(l.ID), colLoopEnable(l.ID))
	}
	for _, a := range s.sc.AHUs {
		tw.cols = append(tw.cols, colAHUSupply(a.ID), colAHUFan(a.ID), colAHUOcc(a.ID))
	}
	for _, t := range s.terms {
		id := t.spec.ID
		tw.cols = append(tw.cols, colAirflow(id), colAirflowSet(id), colDAT(id), colValve(id), colZoneTemp(id), colZoneHeatSP(id))
	}
}

func (tw *trendWriter) rotate(day string) error {
	if err := tw.close(); err != nil {
		return err
	}
	name := filepath.Join(tw.dir, day+".csv")
	f, err := os.Create(name)
	if err != nil {
		return fmt.Errorf("trend export: %w", err)
	}
	tw.f, tw.w, tw.day = f, bufio.NewWriterSize(f, 1<<20), day
	tw.files = append(tw.files, name)
	for i, c := range tw.cols {
		if i > 0 {
			tw.w.WriteByte(',')
		}
		tw.w.WriteString(c)
	}
	tw.w.WriteByte('\n')
	return nil
}

func (tw *trendWriter) close() error {
	if tw.f == nil {
		return nil
	}
	err := tw.w.Flush()
	if cerr := tw.f.Close(); err == nil {
		err = cerr
	}
	tw.f = nil
	if err != nil {
		return fmt.Errorf("trend export %s: %w", tw.day, err)
	}
	return nil
}

func (tw *trendWriter) num(v float64, prec int) {
	tw.buf = append(tw.buf, ',')
	tw.buf = strconv.AppendFloat(tw.buf, v, 'f', prec, 64)
}

func (tw *trendWriter) state(on bool) {
	if on {
		tw.buf = append(tw.buf, ",On"...)
	} else {
		tw.buf = append(tw.buf, ",Off"...)
	}
}

func (tw *trendWriter) row(st *Step) error {
	day := st.At.Format("2006-01-02")
	if day != tw.day {
		if err := tw.rotate(day); err != nil {
			return err
		}
	}
	b := st.At.AppendFormat(tw.buf[:0], time.RFC3339)
	tw.buf = b
	tw.num(units.CToF(st.OutdoorC), 1)
	for _, l := range st.Loops {
		tw.num(units.CToF(l.SupplyC), 1)
		tw.state(l.PlantOn)
	}
	for _, a := range st.AHUs {
		tw.num(units.CToF(a.SupplyC), 1)
		tw.state(a.FanOn)
		tw.state(a.Occupied)
	}
	for _, t := range st.Terminals {
		tw.num(units.M3sToCFM(t.AirflowM3s), 0)
		tw.num(units.M3sToCFM(t.AirflowSetM3s), 0)
		tw.num(units.CToF(t.DischargeC), 1)
		tw.num(t.ValveCmd*100, 1)
		tw.num(units.CToF(t.ZoneC), 1)
		tw.num(units.CToF(t.ZoneSetC), 1)
	}
	tw.buf = append(tw.buf, '\n')
	tw.rows++
	_, err := tw.w.Write(tw.buf)
	return err
}

// WriteOutputs runs the simulation and writes, under dir: trends/*.csv (wide
// CSV per local day), ground_truth.csv, true_peaks.csv and site.yaml.
func (s *Simulator) WriteOutputs(ctx context.Context, dir string) (WriteResult, error) {
	var res WriteResult
	trendDir := filepath.Join(dir, TrendDirName)
	if err := os.MkdirAll(trendDir, 0o755); err != nil {
		return res, fmt.Errorf("output: %w", err)
	}
	absTrend, err := filepath.Abs(trendDir)
	if err != nil {
		return res, fmt.Errorf("output: %w", err)
	}
	st := s.Site(absTrend)
	st.File = filepath.Join(dir, SiteFile)
	y, err := site.Marshal(st)
	if err != nil {
		return res, fmt.Errorf("site file: %w", err)
	}
	if err := os.WriteFile(filepath.Join(dir, SiteFile), y, 0o644); err != nil {
		return res, fmt.Errorf("site file: %w", err)
	}
	tw := &trendWriter{dir: trendDir}
	tw.header(s)
	peaks := make([]peak, len(s.terms))
	err = s.Run(ctx, func(step *Step) error {
		for i := range step.Terminals {
			peaks[i].add(step, &step.Terminals[i].True, s.sc.step)
		}
		return tw.row(step)
	})
	for i := range peaks {
		peaks[i].closeHour(s.sc.step)
	}
	if cerr := tw.close(); err == nil {
		err = cerr
	}
	if err != nil {
		return res, err
	}
	res.TrendFiles, res.Rows, res.Columns = tw.files, tw.rows, len(tw.cols)
	gt := s.sc.GroundTruth()
	res.Faults = len(gt)
	if err := writeGroundTruth(filepath.Join(dir, GroundTruthFile), gt); err != nil {
		return res, err
	}
	return res, s.writePeaks(filepath.Join(dir, PeaksFile), peaks)
}

func writeGroundTruth(path string, gt []FaultRecord) error {
	b := []byte("entity,fault,severity,start,end,detail\n")
	for _, r := range gt {
		b = fmt.Appendf(b, "%s,%s,%s,%s,%s,%s\n", r.Entity, r.Kind, strconv.FormatFloat(r.Severity, 'g', -1, 64),
			r.Start.Format(time.RFC3339), r.End.Format(time.RFC3339), r.Detail)
	}
	if err := os.WriteFile(path, b, 0o644); err != nil {
		return fmt.Errorf("ground truth: %w", err)
	}
	return nil
}
