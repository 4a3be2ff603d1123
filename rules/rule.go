package rules

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"
)

// Scope says what a rule's evidence is about.
const (
	ScopeTerminal = "terminal"
	ScopeLoop     = "loop"
)

// Rule is one rule as written in YAML.
type Rule struct {
	ID       string `yaml:"id"`
	Kind     string `yaml:"kind"`  // fdd.Kind identifier, e.g. "leaking-valve"
	Scope    string `yaml:"scope"` // "terminal" (default) or "loop"
	Title    string `yaml:"title"`
	Source   string `yaml:"source"` // published source of the thresholds, or "common practice"
	Severity int    `yaml:"severity"`
	// Gates must all hold for the condition to be judged: usable, steady,
	// plant_on, fan_on, occupied, heating_season, any truth-valued evidence
	// field, or a name prefixed with "!" for its negation.
	Gates []string `yaml:"gates"`
	When  *Cond    `yaml:"when"`
	For   Duration `yaml:"for"`
	// Within, when set, makes For a total instead of a run: the condition
	// must have held for For in all within the last Within (judged
	// records; time between two true records counts as in a run), for
	// faults that come and go with the load, such as hunting. Held time
	// is kept in Within/24 bins.
	Within    Duration `yaml:"within"`
	ClearWhen *Cond    `yaml:"clear_when"`
	// EvidenceWhen picks the record whose numbers a terminal fault shows
	// (its transitions' evidence, the report's, the e-mail's): the latest
	// in which this also holds, with when and the gates; until one has
	// been seen, the latest in which when holds. A fouled coil, say, is
	// better shown by a steady record at high command than by one with the
	// valve shut.
	EvidenceWhen *Cond    `yaml:"evidence_when"`
	ClearFor     Duration `yaml:"clear_for"`
	// Suppresses lists kinds this fault explains on the same entity (for a
	// loop rule: on every terminal of the loop).
	Suppresses []string `yaml:"suppresses"`
	// Confidence is a number 0..1 or an evidence field name (e.g.
	// "score.leaking-valve"); empty means the fdd signature score for the
	// rule's kind, or 0.8 when that is unavailable.
	Confidence string   `yaml:"confidence"`
	Message    string   `yaml:"message"` // text/template; see message.go
	Causes     []string `yaml:"causes"`
	Checks     []string `yaml:"checks"`
	Show       []string `yaml:"show"` // extra evidence fields to publish
	Except     []string `yaml:"except"`
	Only       []string `yaml:"only"`
	Disabled   bool     `yaml:"disabled"`

	File string `yaml:"-"`
	Line int    `yaml:"-"`
}

var ruleKeys = []string{"id", "kind", "scope", "title", "source", "severity", "gates", "when", "for", "within", "clear_when", "evidence_when", "clear_for", "suppresses", "confidence", "message", "causes", "checks", "show", "except", "only", "disabled"}

// UnmarshalYAML records the line and rejects unknown keys.
func (r *Rule) UnmarshalYAML(n *yaml.Node) error {
	if err := checkKeys(n, "rule", ruleKeys); err != nil {
		return err
	}
	type plain Rule
	if err := n.Decode((*plain)(r)); err != nil {
		return err
	}
	r.Line = n.Line
	return nil
}

func (r *Rule) clone() Rule {
	d := *r
	d.When = r.When.clone()
	d.ClearWhen = r.ClearWhen.clone()
	for _, s := range []*[]string{&d.Gates, &d.Suppresses, &d.Causes, &d.Checks, &d.Show, &d.Except, &d.Only} {
		*s = append([]string(nil), (*s)...)
	}
	return d
}

// where names the rule's position for messages.
func (r *Rule) where() string {
	if r.File == "" {
		return fmt.Sprintf("rule %s (line %d)", r.ID, r.Line)
	}
	return fmt.Sprintf("%s:%d: rule %s", r.File, r.Line, r.ID)
}

// Override changes a rule of an earlier file by ID.
type Override struct {
	ID              string            `yaml:"id"`
	Disabled        *bool             `yaml:"disabled"`
	Thresholds      map[string]string `yaml:"thresholds"`       // threshold name → value
	ClearThresholds map[string]string `yaml:"clear_thresholds"` // threshold name → clear value
	For             *Duration         `yaml:"for"`
	Within          *Duration         `yaml:"within"`
	ClearFor        *Duration         `yaml:"clear_for"`
	Severity        *int              `yaml:"severity"`
	Except          []string          `yaml:"except"` // terminal/loop IDs or path.Match patterns, added
	Only            []string          `yaml:"only"`   // replaces
	Message         *string           `yaml:"message"`

	Line int `yaml:"-"`
}

var overrideKeys = []string{"id", "disabled", "thresholds", "clear_thresholds", "for", "within", "clear_for", "severity", "except", "only", "message"}

// UnmarshalYAML records the line and rejects unknown keys.
func (o *Override) UnmarshalYAML(n *yaml.Node) error {
	if err := checkKeys(n, "override", overrideKeys); err != nil {
		return err
	}
	type plain Override
	if err := n.Decode((*plain)(o)); err != nil {
		return err
	}
	o.Line = n.Line
	return nil
}

// Season is the heating season as month-day bounds ("10-01" to "04-30"),
// inclusive, in the site's time zone; it may wrap the new year.
type Season struct {
	From string `yaml:"from"`
	To   string `yaml:"to"`
}

// bounds returns From and To as month*100+day.
func (s Season) bounds() (from, to int, err error) {
	p := func(t string) (int, error) {
		var m, d int
		if _, err := fmt.Sscanf(strings.TrimSpace(t), "%d-%d", &m, &d); err != nil || m < 1 || m > 12 || d < 1 || d > 31 {
			return 0, fmt.Errorf("heating_season: %q is not MM-DD", t)
		}
		return m*100 + d, nil
	}
	if from, err = p(s.From); err != nil {
		return
	}
	to, err = p(s.To)
	return
}

// File is one rules file: the built-in set, or a site's additions and
// overrides.
type File struct {
	Name          string     `yaml:"-"`
	HeatingSeason *Season    `yaml:"heating_season"`
	MaxGap        *Duration  `yaml:"max_gap"` // a gap in evidence longer than this resets persistence
	Rules         []Rule     `yaml:"rules"`
	Overrides     []Override `yaml:"overrides"`
}

var fileKeys = []string{"heating_season", "max_gap", "rules", "overrides"}

// Parse reads a rules file. name is used in messages.
func Parse(data []byte, name string) (*File, error) {
	var root yaml.Node
	dec := yaml.NewDecoder(bytes.NewReader(data))
	if err := dec.Decode(&root); err != nil {
		if errors.Is(err, io.EOF) {
			return &File{Name: name}, nil
		}
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if len(root.Content) == 0 {
		return &File{Name: name}, nil
	}
	doc := root.Content[0]
	if doc.Kind == yaml.ScalarNode && doc.Tag == "!!null" {
		return &File{Name: name}, nil
	}
	if err := checkKeys(doc, "rules file", fileKeys); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	f := &File{Name: name}
	if err := doc.Decode(f); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	for i := range f.Rules {
		f.Rules[i].File = name
	}
	return f, nil
}

// LoadFile reads a rules file from disk.
func LoadFile(path string) (*File, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("rules: %w", err)
	}
	return Parse(data, path)
}

// Duration is a time.Duration read from YAML as "15m", "2h", "3d" or a
// number of seconds.
type Duration time.Duration

// D returns the duration.
func (d Duration) D() time.Duration { return time.Duration(d) }

// UnmarshalYAML parses the duration.
func (d *Duration) UnmarshalYAML(n *yaml.Node) error {
	v, err := parseDuration(n.Value)
	if err != nil {
		return fmt.Errorf("line %d: %w", n.Line, err)
	}
	*d = Duration(v)
	return nil
}

// MarshalYAML writes the duration as text.
func (d Duration) MarshalYAML() (any, error) { return time.Duration(d).String(), nil }

func parseDuration(s string) (time.Duration, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return 0, nil
	}
	if v, err := strconv.ParseFloat(s, 64); err == nil {
		if v < 0 || v > 1e9 {
			return 0, fmt.Errorf("duration %q out of range", s)
		}
		return time.Duration(v * float64(time.Second)), nil
	}
	if strings.HasSuffix(s, "d") {
		v, err := strconv.ParseFloat(strings.TrimSuffix(s, "d"), 64)
		if err != nil || v < 0 || v > 3650 {
			return 0, fmt.Errorf("duration %q: want e.g. 15m, 2h or 3d", s)
		}
		return time.Duration(v * 24 * float64(time.Hour)), nil
	}
	v, err := time.ParseDuration(s)
	if err != nil || v < 0 {
		return 0, fmt.Errorf("duration %q: want e.g. 15m, 2h or 3d", s)
	}
	return v, nil
}
