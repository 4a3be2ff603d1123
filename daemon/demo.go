package daemon

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"path/filepath"
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
	Days    int     // history simulated at once into the devices' trend logs (default 7)
	Forward int     // simulated days after the history (default 21)
	Speed   float64 // simulated seconds per wall second after the history (default 60)
	Logger  *slog.Logger
	// Ready is told where everything is once the dashboard listens.
	Ready func(DemoInfo)
}

// DemoInfo says where the demo's outputs are.
type DemoInfo struct {
	DataDir, MailSpool, Reports, SiteFile string
	URL                                   string
	Terminals                             int
	// Devices lists the simulated BACnet/IP device groups ("plant 127.0.0.1:40123", ...).
	Devices                []string
	DeviceCount            int
	HistoryFrom, HistoryTo time.Time
	Poll                   time.Duration // wall-clock poll interval
}

// Demo addresses: the reserved .example domain (RFC 2606), invented people.
const (
	demoFrom       = "risewatch@wrenfield.example"
	demoOperators  = "facilities@wrenfield.example"
	demoContractor = "service@mechanical-contractor.example"
)

// RunDemo serves the built-in demo campus as simulated BACnet/IP devices on
// loopback and runs the daemon on them with the store, /metrics, the
// dashboard and a local mail spool, until ctx ends. The history (Days) is
// simulated at once into the devices' one-minute trend logs, which the
// daemon backfills (in time order across points) before it starts polling;
// then the simulation runs forward at Speed, writing each step into the
// objects' present values and trend logs, and the daemon polls them once
// per simulated minute.
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
	step := sc.StepDuration()
	pace := time.Duration(float64(step) / o.Speed)
	poll := max(pace, 50*time.Millisecond)
	info := DemoInfo{DataDir: o.DataDir, MailSpool: filepath.Join(o.DataDir, "mail-spool"),
		Reports: filepath.Join(o.DataDir, "reports"), SiteFile: filepath.Join(o.DataDir, "site.yaml"), Terminals: sm.Terminals(),
		HistoryFrom: sc.StartTime(), HistoryTo: sc.StartTime().AddDate(0, 0, o.Days), Poll: poll}
	if err := os.MkdirAll(info.MailSpool, 0o755); err != nil {
		return err
	}
	s := sm.Site("")
	// The trend logs hold the history and a day more; later records overwrite the oldest.
	bas, err := newDemoBAS(s, (o.Days+1)*int(24*time.Hour/step), poll, 60*poll)
	if err != nil {
		return err
	}
	defer bas.close()
	for i, srv := range bas.servers {
		name := "plant"
		if i > 0 {
			name = s.AHUs[i-1].ID
		}
		info.Devices = append(info.Devices, name+" "+srv.Addr().String())
	}
	info.DeviceCount = len(s.Sources[0].BACnet.Devices)
	s.File = info.SiteFile
	if y, err := site.Marshal(s); err == nil {
		_ = os.WriteFile(info.SiteFile, y, 0o644)
	}
	cfg := &Config{File: "demo", DataDir: o.DataDir, Listen: o.Listen, PersistEvery: time.Minute, MailSpool: info.MailSpool, loc: s.Location,
		Notify: &notify.Config{From: demoFrom, GroupFor: 5 * time.Second, IP: true, LinkBase: "http://" + o.Listen,
			Routes: []notify.Route{{Name: "facilities", To: []string{demoOperators}}}},
		Report: ReportConfig{To: []string{demoContractor}, IP: true, Readiness: &ReadinessConfig{Supply: "120 F"}}, Web: WebConfig{IP: true}}
	cfg.defaults()
	el := &errList{file: "demo"}
	cfg.validate(el)
	if err := el.err(); err != nil {
		return err
	}
	histDone := make(chan struct{})
	d, first, err := New(Options{Site: s, Config: cfg, DataClock: true, ReportOnStart: true, Clock: bas.Now, SourcesAfter: histDone,
		NotifyEvery: 2 * time.Second, AckPoll: time.Second, SnapshotEvery: 5 * time.Second, Logger: o.Logger})
	if err != nil {
		return err
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	simErr := make(chan error, 1)
	go func() { simErr <- runDemoSim(ctx, sm, bas, info.HistoryTo, pace, histDone, o.Logger) }()
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

// runDemoSim runs the simulation into the devices: up to histTo as fast as
// it goes (then closes histDone), after that one step per pace.
func runDemoSim(ctx context.Context, sm *sim.Simulator, bas *demoBAS, histTo time.Time, pace time.Duration, histDone chan struct{}, log *slog.Logger) error {
	t0 := time.Now()
	var next time.Time
	opened := false
	err := sm.Run(ctx, func(st *sim.Step) error {
		if !st.At.Before(histTo) && !opened {
			opened = true
			log.Info("demo: history in the trend logs", "until", histTo, "took", time.Since(t0).Round(time.Millisecond))
			close(histDone)
		}
		bas.feed(st)
		if !opened {
			return nil
		}
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
		return nil
	})
	if !opened {
		close(histDone)
	}
	return err
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
