package sim

import (
	"bytes"
	_ "embed"
	"fmt"
	"os"
	"strings"
	"time"

	"gopkg.in/yaml.v3"
)

// Scenario is a simulated campus: its climate, plant, air handlers with
// their terminals, and the faults to inject, read from YAML. Units are in
// the key names (…_f °F, …_in inches, …_psi, …_ft2, …_c, …_k); the simulator
// converts to SI once at load.
type Scenario struct {
	Name       string      `yaml:"name"`
	Site       string      `yaml:"site"`
	Seed       uint64      `yaml:"seed"`
	Start      string      `yaml:"start"` // local date YYYY-MM-DD (midnight) or RFC 3339 time
	Days       int         `yaml:"days"`
	Step       string      `yaml:"step"`      // Go duration, default 1m
	TimeZone   string      `yaml:"time_zone"` // IANA name; fixed-offset zones (Etc/GMT+6) avoid DST
	ElevationM float64     `yaml:"elevation_m"`
	Weather    WeatherSpec `yaml:"weather"`
	Prices     PriceSpec   `yaml:"prices"`
	Loops      []LoopSpec  `yaml:"loops"`
	AHUs       []AHUSpec   `yaml:"ahus"`
	Faults     []FaultSpec `yaml:"faults"`

	file  string
	loc   *time.Location
	start time.Time
	step  time.Duration
}

// PriceSpec carries the energy prices into the site file.
type PriceSpec struct {
	HeatPerKWh    float64 `yaml:"heat_per_kwh"`
	CoolingPerKWh float64 `yaml:"cooling_per_kwh"`
	Currency      string  `yaml:"currency"`
}

// LoopSpec is one hot-water loop and its plant.
type LoopSpec struct {
	ID             string  `yaml:"id"`
	DesignSupplyF  float64 `yaml:"design_supply_f"`  // 180 or 120 design
	DesignDeltaF   float64 `yaml:"design_delta_f"`   // design supply–return difference
	SupplyAtMildF  float64 `yaml:"supply_at_mild_f"` // reset: supply at the mild outdoor point
	DesignOutdoorF float64 `yaml:"design_outdoor_f"` // reset: design supply at or below this
	MildOutdoorF   float64 `yaml:"mild_outdoor_f"`
	EnableBelowF   float64 `yaml:"enable_below_f"` // outdoor lockout
	DPSetpointPSI  float64 `yaml:"dp_setpoint_psi"`
	Line           int     `yaml:"-"`

	supplyAtDesignC, supplyAtMildC, designOutdoorC, mildOutdoorC, enableBelowC, dpSetpointPa, designDeltaK float64
}

// DaySchedule is "HH:MM-HH:MM" occupied hours, or empty for unoccupied all day.
type DaySchedule string

type daySpan struct{ startMin, endMin int }

func (d daySpan) empty() bool { return d.endMin <= d.startMin }

// AHUSpec is one air handler and the terminals it serves.
type AHUSpec struct {
	ID         string         `yaml:"id"`
	Loop       string         `yaml:"loop"`
	Building   string         `yaml:"building"`
	Weekday    DaySchedule    `yaml:"weekday"`
	Saturday   DaySchedule    `yaml:"saturday"`
	Sunday     DaySchedule    `yaml:"sunday"`
	WarmupMin  int            `yaml:"warmup_min"`
	SATAtLowF  float64        `yaml:"sat_at_low_oat_f"` // SAT setpoint at or below SATLowOATF
	SATAtHighF float64        `yaml:"sat_at_high_oat_f"`
	SATLowOATF float64        `yaml:"sat_low_oat_f"`
	SATHighOAT float64        `yaml:"sat_high_oat_f"`
	DuctGainF  float64        `yaml:"duct_gain_f"`
	HeatSetF   float64        `yaml:"occupied_heating_f"`
	CoolSetF   float64        `yaml:"occupied_cooling_f"`
	UnoccHeatF float64        `yaml:"unoccupied_heating_f"`
	UnoccCoolF float64        `yaml:"unoccupied_cooling_f"`
	DATMaxF    float64        `yaml:"max_discharge_f"`
	Terminals  []TerminalSpec `yaml:"terminals"`
	Line       int            `yaml:"-"`

	loop                                                           int
	weekday, saturday, sunday                                      daySpan
	warmupMin                                                      int
	satAtLowC, satAtHighC, satOATLowC, satOATHighC                 float64
	ductGainK, heatSetC, coolSetC, unoccHeatC, unoccCoolC, datMaxC float64
}

// TerminalSpec is one VAV box with hot-water reheat and its zone.
type TerminalSpec struct {
	ID        string  `yaml:"id"`
	Zone      string  `yaml:"zone"`
	Room      string  `yaml:"room"`
	InletIn   float64 `yaml:"inlet_in"`
	Rows      int     `yaml:"rows"`
	Oversized bool    `yaml:"oversized"`
	FPI       float64 `yaml:"fpi"`
	Circuits  int     `yaml:"circuits"`
	AreaFt2   float64 `yaml:"area_ft2"`
	Exposure  string  `yaml:"exposure"`    // interior, north, east, south, west
	LoadFrac  float64 `yaml:"design_load"` // zone design loss / what the box delivers at heating max and max DAT
	Cv        float64 `yaml:"cv"`
	Linear    bool    `yaml:"linear_valve"`
	Line      int     `yaml:"-"`
}

// UnmarshalYAML records the YAML line for messages.
func (t *TerminalSpec) UnmarshalYAML(n *yaml.Node) error {
	type plain TerminalSpec
	if err := n.Decode((*plain)(t)); err != nil {
		return err
	}
	t.Line = n.Line
	return nil
}

// UnmarshalYAML records the YAML line for messages.
func (a *AHUSpec) UnmarshalYAML(n *yaml.Node) error {
	type plain AHUSpec
	if err := n.Decode((*plain)(a)); err != nil {
		return err
	}
	a.Line = n.Line
	return nil
}

// UnmarshalYAML records the YAML line for messages.
func (l *LoopSpec) UnmarshalYAML(n *yaml.Node) error {
	type plain LoopSpec
	if err := n.Decode((*plain)(l)); err != nil {
		return err
	}
	l.Line = n.Line
	return nil
}

//go:embed demo.yaml
var demoYAML []byte

// DemoScenario is the built-in demo campus.
func DemoScenario() (*Scenario, error) { return ParseScenario(demoYAML, "demo") }

// DemoYAML returns the built-in demo scenario's YAML text.
func DemoYAML() []byte { return bytes.Clone(demoYAML) }

// LoadScenario reads and validates a scenario file.
func LoadScenario(path string) (*Scenario, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("scenario: %w", err)
	}
	return ParseScenario(b, path)
}

// ParseScenario decodes and validates scenario YAML; file names it in errors.
// Unknown keys are errors.
func ParseScenario(data []byte, file string) (*Scenario, error) {
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	var s Scenario
	if err := dec.Decode(&s); err != nil {
		return nil, fmt.Errorf("%s: %w", file, err)
	}
	s.file = file
	if err := s.prepare(); err != nil {
		return nil, err
	}
	return &s, nil
}

// WithoutFaults returns a copy with the fault list emptied: the fault-free
// twin (same seed, same weather and noise, no faults).
func (s *Scenario) WithoutFaults() *Scenario {
	c := *s
	c.Faults = nil
	return &c
}

// Location is the site time zone.
func (s *Scenario) Location() *time.Location { return s.loc }

// StartTime is the first simulated instant.
func (s *Scenario) StartTime() time.Time { return s.start }

// EndTime is the instant after the last step.
func (s *Scenario) EndTime() time.Time { return s.start.AddDate(0, 0, s.Days) }

// StepDuration is the simulation and export interval.
func (s *Scenario) StepDuration() time.Duration { return s.step }

func (s *Scenario) errf(line int, format string, args ...any) error {
	if line > 0 {
		return fmt.Errorf("%s:%d: %s", s.file, line, fmt.Sprintf(format, args...))
	}
	return fmt.Errorf("%s: %s", s.file, fmt.Sprintf(format, args...))
}

func parseSpan(d DaySchedule) (daySpan, error) {
	str := strings.TrimSpace(string(d))
	if str == "" || str == "off" {
		return daySpan{}, nil
	}
	a, b, ok := strings.Cut(str, "-")
	if !ok {
		return daySpan{}, fmt.Errorf("schedule %q: want HH:MM-HH:MM", str)
	}
	ta, err1 := time.Parse("15:04", strings.TrimSpace(a))
	tb, err2 := time.Parse("15:04", strings.TrimSpace(b))
	if err1 != nil || err2 != nil {
		return daySpan{}, fmt.Errorf("schedule %q: want HH:MM-HH:MM", str)
	}
	sp := daySpan{ta.Hour()*60 + ta.Minute(), tb.Hour()*60 + tb.Minute()}
	if sp.empty() {
		return daySpan{}, fmt.Errorf("schedule %q: end before start", str)
	}
	return sp, nil
}

// With returns a copy with the number of days and/or the seed replaced
// (zero keeps the scenario's value); fault windows are re-resolved.
func (s *Scenario) With(days int, seed uint64) (*Scenario, error) {
	c := *s
	c.Faults = append([]FaultSpec(nil), s.Faults...)
	if days > 0 {
		c.Days = days
	}
	if seed > 0 {
		c.Seed = seed
	}
	if err := c.prepare(); err != nil {
		return nil, err
	}
	return &c, nil
}
