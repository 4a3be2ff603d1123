package reliability

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/units"
)

// absurd is one terminal's impossible input: a fixed value (SI) or a
// function of the step for one of its points.
type absurd struct {
	name  string
	role  string // point suffix: AF DAT VLV ZNT ...
	value func(step int) float64
}

func fixed(v float64) func(int) float64 { return func(int) float64 { return v } }

// TestAbsurdValuesOpenOnlyDataQuality feeds three days of one-minute steps
// through the assembler, the evidence engine and the rules. Control
// terminals hold a plausible steady state with sensor noise (valve closed,
// no rise: nothing to find); each other terminal has one impossible point (NaN, ±Inf,
// ±1e9, -273 °C, 5000 cfm through a 6 in inlet, a valve at 250 % or
// -50 %, a value flipping between ±1e9 every step). No equipment fault may
// open on any of them, and nothing at all on the controls: only
// data-quality, or dat-failed where the impossible point is the discharge
// sensor itself (a DAT of NaN or 1e9 °C for days is a failed sensor).
func TestAbsurdValuesOpenOnlyDataQuality(t *testing.T) {
	cases := []absurd{
		{"DAT NaN", "DAT", fixed(math.NaN())},
		{"DAT +Inf", "DAT", fixed(math.Inf(1))},
		{"DAT +1e9 °C", "DAT", fixed(1e9)},
		{"DAT -1e9 °C", "DAT", fixed(-1e9)},
		{"DAT -273 °C", "DAT", fixed(-273)},
		{"DAT flipping ±1e9", "DAT", func(i int) float64 { return 1e9 * float64(1-2*(i%2)) }},
		{"airflow 5000 cfm on a 6 in box", "AF", fixed(units.CFMToM3s(5000))},
		{"airflow -1e9", "AF", fixed(-1e9)},
		{"airflow NaN", "AF", fixed(math.NaN())},
		{"valve 250 %", "VLV", fixed(2.5)},
		{"valve -50 %", "VLV", fixed(-0.5)},
		{"valve 1e9", "VLV", fixed(1e9)},
		{"zone -273 °C", "ZNT", fixed(-273)},
		{"zone +1e9 °C", "ZNT", fixed(1e9)},
		{"airflow setpoint -1e9", "AFSP", fixed(-1e9)},
	}
	const controls = 3
	n := len(cases) + controls
	c := startCampus(t, CampusConfig{Groups: 1, PerGroup: n})
	y := c.SiteYAML("")
	// The 5000 cfm case is a 6 in box (about 400 cfm at most, common practice).
	six := TerminalID(6)
	y = strings.Replace(y, "  - {id: "+six+", ", "  - {id: "+six+", coil: {inlet: 6 in, rows: 1}, airflow: {min: 60 cfm, cooling_max: 400 cfm, heating_max: 200 cfm}, ", 1)
	s, _ := loadSite(t, y)
	if s.Terminals[6].InletIn != 6 {
		t.Fatalf("%s inlet %g in, want 6", six, s.Terminals[6].InletIn)
	}

	// Plausible steady state in SI: heating minimum airflow, valve shut,
	// discharge = supply air + duct gain (no reheat), zone at setpoint.
	normal := map[string]float64{
		"AF": units.CFMToM3s(valAirflowCFM), "AFSP": units.CFMToM3s(valAirflowCFM), "VLV": 0,
		"DAT": units.FToC(valSupplyAirF) + s.AHUs[0].DuctGainK, "ZNT": units.FToC(valZoneF), "ZNSP": units.FToC(valZoneF),
		"SAT": units.FToC(valSupplyAirF), "FAN": 1, "OCC": 1, "HWST": units.FToC(valHotWaterF), "HWEN": 1,
	}
	// Sensor noise (standard deviation, SI): a real sensor is never flat
	// for days (a flat one is a failed sensor). Common practice for
	// thermistors and flow stations, not measured data.
	noise := map[string]float64{"DAT": 0.15, "SAT": 0.15, "ZNT": 0.1, "HWST": 0.3, "AF": units.CFMToM3s(5)}
	rng := rand.New(rand.NewPCG(9, 1))
	byTerminal := map[string]absurd{}
	for i, a := range cases {
		byTerminal[TerminalID(i)] = a
	}
	points := collector.Points(s)
	asm, err := collector.NewAssembler(s, collector.AssembleConfig{Resample: collector.ResampleConfig{Interval: time.Minute},
		Lateness: 10 * time.Minute, Sources: []string{"bas"}, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	eng, err := fdd.NewEngine(s, fdd.Config{Step: time.Minute})
	if err != nil {
		t.Fatal(err)
	}
	rs, err := rules.Default()
	if err != nil {
		t.Fatal(err)
	}
	ev, err := rules.NewEvaluator(s, rs)
	if err != nil {
		t.Fatal(err)
	}
	var evs []fdd.Evidence
	var trs []rules.Transition
	opened := map[string]map[fdd.Kind]int{}
	analyse := func(b []collector.Sample) {
		evs = eng.Step(b, evs[:0])
		trs = ev.Step(evs, eng.Loops(), trs[:0])
		for _, tr := range trs {
			if tr.To != rules.StateOpen {
				continue
			}
			if opened[tr.Entity] == nil {
				opened[tr.Entity] = map[fdd.Kind]int{}
			}
			opened[tr.Entity][tr.Kind]++
		}
	}
	t0 := time.Date(2025, 1, 13, 0, 0, 0, 0, time.UTC)
	const steps = 3 * 24 * 60
	batch := make([]collector.Reading, len(points))
	for i := 0; i < steps; i++ {
		at := t0.Add(time.Duration(i) * time.Minute)
		for k, p := range points {
			id, role, _ := strings.Cut(p.Name, ".")
			v := normal[role]
			if sd := noise[role]; sd > 0 {
				v += sd * rng.NormFloat64()
			}
			if a, ok := byTerminal[id]; ok && a.role == role {
				v = a.value(i)
			}
			batch[k] = collector.Reading{Point: p.Name, At: at, Value: v, Quality: collector.Good}
		}
		asm.Add("bas", batch, analyse)
	}
	asm.Flush(analyse)
	if st := asm.Stats(); st.EmittedSteps < steps-1 {
		t.Fatalf("assembler emitted %d steps of %d", st.EmittedSteps, steps)
	}
	dq := 0
	for i := 0; i < n; i++ {
		id := TerminalID(i)
		what := "control (plausible values)"
		if a, ok := byTerminal[id]; ok {
			what = a.name
		}
		for k, cnt := range opened[id] {
			a, isAbsurd := byTerminal[id]
			switch {
			case isAbsurd && k == fdd.KindDataQuality:
				dq++
			case isAbsurd && k == fdd.KindZoneSensor && strings.HasPrefix(a.role, "ZN"):
				// An impossible room reading is the zone sensor's own finding.
				dq++
			case isAbsurd && k == fdd.KindDATFailed && a.role == "DAT":
				// An impossible discharge reading for days is the failed
				// discharge sensor itself: a finding about the input.
			default:
				t.Errorf("%s (%s): %s opened %d times", id, what, k, cnt)
			}
		}
		t.Logf("%s %-32s opened %v", id, what, opened[id])
	}
	for ent, ks := range opened {
		if !strings.HasPrefix(ent, "VAV-") {
			t.Errorf("%s: opened %v", ent, ks)
		}
	}
	t.Logf("%d of %d absurd terminals opened a data-quality fault", dq, len(cases))
}
