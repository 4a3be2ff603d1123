package daemon

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"path/filepath"
	"strconv"
	"time"

	"risewatch/publish/notify"
	"risewatch/sim"
	"risewatch/site"
	"risewatch/units"
)

// DemoOptions configure `risewatch demo`.
type DemoOptions struct {
	DataDir string  // "" = a fresh directory under the OS temp dir
	Listen  string  // default 127.0.0.1:9470
	Days    int     // history written at once (default 7)
	Forward int     // simulated days after the history (default 21)
	Speed   float64 // simulated seconds per wall second after the history (default 60)
	Logger  *slog.Logger
	// Ready is told where everything is once the dashboard listens.
	Ready func(DemoInfo)
}

// DemoInfo says where the demo's outputs are.
type DemoInfo struct {
	DataDir, DropDir, MailSpool, Reports, SiteFile string
	URL                                            string
	Terminals                                      int
	HistoryFrom, HistoryTo                         time.Time
}

// Demo addresses: the reserved .example domain (RFC 2606), invented people.
const (
	demoFrom       = "risewatch@wrenfield.example"
	demoOperators  = "facilities@wrenfield.example"
	demoContractor = "service@mechanical-contractor.example"
)

// RunDemo simulates the built-in demo campus into a drop folder (the
// history at once, then forward at Speed) and runs the daemon on it with
// the store, /metrics, the dashboard and a local mail spool, until ctx ends.
func RunDemo(ctx context.Context, o DemoOptions) error {
	if o.Days <= 0 {
		o.Days = 7
	}
	if o.Forward <= 0 {
		o.Forward = 21
	}
	if o.Speed <= 0 {
		o.Speed = 60
	}
	if o.Listen == "" {
		o.Listen = "127.0.0.1:9470"
	}
	if o.Logger == nil {
		o.Logger = slog.Default()
	}
	if o.DataDir == "" {
		d, err := os.MkdirTemp("", "risewatch-demo-")
		if err != nil {
			return err
		}
		o.DataDir = d
	}
	base, err := sim.DemoScenario()
	if err != nil {
		return err
	}
	sc, err := base.With(o.Days+o.Forward, 0)
	if err != nil {
		return err
	}
	sm, err := sim.New(sc)
	if err != nil {
		return err
	}
	info := DemoInfo{DataDir: o.DataDir, DropDir: filepath.Join(o.DataDir, "drop"), MailSpool: filepath.Join(o.DataDir, "mail-spool"),
		Reports: filepath.Join(o.DataDir, "reports"), SiteFile: filepath.Join(o.DataDir, "site.yaml"), Terminals: sm.Terminals(),
		HistoryFrom: sc.StartTime(), HistoryTo: sc.StartTime().AddDate(0, 0, o.Days)}
	done := filepath.Join(o.DataDir, "drop-done")
	for _, d := range []string{info.DropDir, done, info.MailSpool} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			return err
		}
	}
	s := sm.Site(info.DropDir)
	s.Sources[0].Trendfile.Watch = true
	s.Sources[0].Trendfile.ProcessedDir = done
	s.File = info.SiteFile
	if y, err := site.Marshal(s); err == nil {
		_ = os.WriteFile(info.SiteFile, y, 0o644)
	}
	cfg := &Config{File: "demo", DataDir: o.DataDir, Listen: o.Listen, PersistEvery: time.Minute, MailSpool: info.MailSpool, loc: s.Location,
		Notify: &notify.Config{From: demoFrom, GroupFor: 5 * time.Second, LinkBase: "http://" + o.Listen,
			Routes: []notify.Route{{Name: "facilities", To: []string{demoOperators}}}},
		Report: ReportConfig{To: []string{demoContractor}, IP: true}, Web: WebConfig{IP: true}}
	cfg.defaults()
	el := &errList{file: "demo"}
	cfg.validate(el)
	if err := el.err(); err != nil {
		return err
	}
	d, first, err := New(Options{Site: s, Config: cfg, DataClock: true, ReportOnStart: true, DropSettle: 500 * time.Millisecond,
		NotifyEvery: 2 * time.Second, AckPoll: time.Second, SnapshotEvery: 5 * time.Second, Logger: o.Logger})
	if err != nil {
		return err
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	simErr := make(chan error, 1)
	go func() { simErr <- writeDemoTrends(ctx, sm, s, info.DropDir, done, info.HistoryTo, o.Speed) }()
	go func() {
		select {
		case <-d.Ready():
			info.URL = "http://" + d.Addr().String() + "/"
			if o.Ready != nil {
				o.Ready(info)
			}
		case <-ctx.Done():
		}
	}()
	runErr := d.Run(ctx, first)
	cancel()
	if err := <-simErr; err != nil && !errors.Is(err, context.Canceled) && runErr == nil {
		runErr = fmt.Errorf("simulation: %w", err)
	}
	return runErr
}

// demoColumn is one exported column: where its value comes from in a step.
type demoColumn struct {
	name   string
	unit   string
	binary bool
	value  func(st *sim.Step) (float64, bool)
}

// demoColumns lists the site's trend columns in export order.
func demoColumns(s *site.Site) ([]demoColumn, error) {
	var cols []demoColumn
	var errs []error
	add := func(p site.PointRef, fn func(st *sim.Step) (float64, bool)) {
		if p.Column == "" {
			return
		}
		u := p.Unit
		if !p.Binary {
			if _, err := units.ParseUnit(u); err != nil {
				errs = append(errs, fmt.Errorf("column %s: %w", p.Column, err))
				return
			}
		}
		cols = append(cols, demoColumn{name: p.Column, unit: u, binary: p.Binary, value: fn})
	}
	add(s.OutdoorAir, func(st *sim.Step) (float64, bool) { return st.OutdoorC, true })
	b := func(v bool) float64 {
		if v {
			return 1
		}
		return 0
	}
	for i, l := range s.Loops {
		add(l.SupplyTemp, func(st *sim.Step) (float64, bool) { return st.Loops[i].SupplyC, true })
		add(l.PlantEnabled, func(st *sim.Step) (float64, bool) { return b(st.Loops[i].PlantOn), true })
	}
	for i, a := range s.AHUs {
		add(a.SupplyAir, func(st *sim.Step) (float64, bool) { return st.AHUs[i].SupplyC, true })
		add(a.FanStatus, func(st *sim.Step) (float64, bool) { return b(st.AHUs[i].FanOn), true })
		add(a.Occupancy, func(st *sim.Step) (float64, bool) { return b(st.AHUs[i].Occupied), true })
	}
	for i, t := range s.Terminals {
		p := t.Points
		add(p.Airflow, func(st *sim.Step) (float64, bool) { return st.Terminals[i].AirflowM3s, true })
		add(p.AirflowSetpoint, func(st *sim.Step) (float64, bool) { return st.Terminals[i].AirflowSetM3s, true })
		add(p.Discharge, func(st *sim.Step) (float64, bool) { return st.Terminals[i].DischargeC, true })
		add(p.Valve, func(st *sim.Step) (float64, bool) { return st.Terminals[i].ValveCmd, true })
		add(p.ZoneTemp, func(st *sim.Step) (float64, bool) { return st.Terminals[i].ZoneC, true })
		add(p.ZoneSetpoint, func(st *sim.Step) (float64, bool) { return st.Terminals[i].ZoneSetC, true })
	}
	return cols, errors.Join(errs...)
}

// chunkWriter writes wide CSV export files into a drop folder: each file is
// written under a ".part" name (which the drop-folder reader skips) and
// renamed when complete.
type chunkWriter struct {
	dir, done string
	cols      []demoColumn
	units     []func(float64) float64
	f         *os.File
	w         *bufio.Writer
	name      string
	skip      bool
	buf       []byte
}

func newChunkWriter(dir, done string, cols []demoColumn) *chunkWriter {
	cw := &chunkWriter{dir: dir, done: done, cols: cols}
	for _, c := range cols {
		if c.binary {
			cw.units = append(cw.units, nil)
			continue
		}
		u, _ := units.ParseUnit(c.unit)
		if c.unit == "%" {
			cw.units = append(cw.units, func(v float64) float64 { return v * 100 })
			continue
		}
		cw.units = append(cw.units, u.FromSI)
	}
	return cw
}

// open starts the file name (a file already read by an earlier run is skipped).
func (cw *chunkWriter) open(name string) error {
	if err := cw.close(); err != nil {
		return err
	}
	cw.name = name
	if _, err := os.Stat(filepath.Join(cw.done, name)); err == nil {
		cw.skip = true
		return nil
	}
	cw.skip = false
	f, err := os.Create(filepath.Join(cw.dir, name+".part"))
	if err != nil {
		return err
	}
	cw.f, cw.w = f, bufio.NewWriterSize(f, 1<<20)
	cw.w.WriteString("timestamp")
	for _, c := range cw.cols {
		cw.w.WriteByte(',')
		cw.w.WriteString(c.name)
	}
	cw.w.WriteByte('\n')
	return nil
}

func (cw *chunkWriter) row(st *sim.Step) error {
	if cw.skip || cw.f == nil {
		return nil
	}
	b := st.At.AppendFormat(cw.buf[:0], time.RFC3339)
	for i, c := range cw.cols {
		v, _ := c.value(st)
		b = append(b, ',')
		if c.binary {
			if v != 0 {
				b = append(b, "On"...)
			} else {
				b = append(b, "Off"...)
			}
			continue
		}
		b = strconv.AppendFloat(b, cw.units[i](v), 'f', 2, 64)
	}
	b = append(b, '\n')
	cw.buf = b
	_, err := cw.w.Write(b)
	return err
}

func (cw *chunkWriter) close() error {
	if cw.f == nil {
		return nil
	}
	err := cw.w.Flush()
	if cerr := cw.f.Close(); err == nil {
		err = cerr
	}
	part := cw.f.Name()
	cw.f = nil
	if err == nil {
		err = os.Rename(part, filepath.Join(cw.dir, cw.name))
	}
	return err
}

// writeDemoTrends runs the simulation: one export file per simulated day
// up to histTo as fast as it goes, then one file per ten simulated minutes
// paced at speed.
func writeDemoTrends(ctx context.Context, sm *sim.Simulator, s *site.Site, dir, done string, histTo time.Time, speed float64) error {
	cols, err := demoColumns(s)
	if err != nil {
		return err
	}
	cw := newChunkWriter(dir, done, cols)
	step := sm.Scenario().StepDuration()
	pace := time.Duration(float64(step) / speed)
	var next time.Time
	err = sm.Run(ctx, func(st *sim.Step) error {
		var name string
		if st.At.Before(histTo) {
			name = st.At.Format("2006-01-02") + ".csv"
		} else {
			name = st.At.Truncate(10*time.Minute).Format("2006-01-02T1504") + ".csv"
		}
		if name != cw.name {
			if err := cw.open(name); err != nil {
				return err
			}
		}
		if err := cw.row(st); err != nil {
			return err
		}
		if !st.At.Before(histTo) {
			now := time.Now()
			if next.IsZero() {
				next = now
			}
			next = next.Add(pace)
			if d := next.Sub(now); d > 0 {
				select {
				case <-ctx.Done():
					return ctx.Err()
				case <-time.After(d):
				}
			}
		}
		return nil
	})
	if cerr := cw.close(); err == nil {
		err = cerr
	}
	return err
}
