package rules

import (
	_ "embed"
	"fmt"
	"path"
	"sort"
	"strconv"
	"strings"
	"time"

	"risewatch/fdd"
)

//go:embed builtin.yaml
var builtinYAML []byte

// BuiltinYAML returns the embedded default rules file (for `risewatch
// analyze --print-rules` and documentation).
func BuiltinYAML() []byte { return append([]byte(nil), builtinYAML...) }

// Default parses the built-in rule set.
func Default() (*Ruleset, error) { return Build() }

// Ruleset is a validated, compiled set of rules: the built-in set with any
// site files applied. It is immutable and may be shared by evaluators.
type Ruleset struct {
	rules     []*compiled // in evaluation order
	seasonOn  bool
	seasonLo  int // month*100+day
	seasonHi  int
	maxGap    time.Duration
	sch       *schemas
	byID      map[string]*compiled
	kindRules [kindSlots][]*compiled
}

// kindSlots bounds fdd.Kind values the rules layer tracks per entity.
const kindSlots = 32

// DefaultMaxGap is the longest gap in evidence that does not reset a
// pending or clearing persistence timer (common practice: two analysis
// steps of a 5-minute trend log).
const DefaultMaxGap = 10 * time.Minute

// Build parses the built-in rules and applies files in order: each file's
// overrides change earlier rules by ID, its rules are added (a rule with an
// earlier rule's ID replaces it), and its heating_season and max_gap replace
// earlier values.
func Build(files ...*File) (*Ruleset, error) {
	base, err := Parse(builtinYAML, "builtin.yaml")
	if err != nil {
		return nil, fmt.Errorf("built-in rules: %w", err)
	}
	return BuildFrom(append([]*File{base}, files...)...)
}

// BuildFrom is Build without the built-in set.
func BuildFrom(files ...*File) (*Ruleset, error) {
	sch, err := newSchemas()
	if err != nil {
		return nil, err
	}
	var rules []Rule
	index := map[string]int{}
	var season *Season
	maxGap := DefaultMaxGap
	for _, f := range files {
		if f == nil {
			continue
		}
		if f.HeatingSeason != nil {
			s := *f.HeatingSeason
			season = &s
		}
		if f.MaxGap != nil {
			maxGap = f.MaxGap.D()
		}
		for i := range f.Overrides {
			o := &f.Overrides[i]
			j, ok := index[o.ID]
			if !ok {
				return nil, fmt.Errorf("%s:%d: override of unknown rule %q (known: %s)", f.Name, o.Line, o.ID, strings.Join(sortedKeys(index), ", "))
			}
			if err := applyOverride(&rules[j], o); err != nil {
				return nil, fmt.Errorf("%s:%d: override %s: %w", f.Name, o.Line, o.ID, err)
			}
		}
		for i := range f.Rules {
			r := f.Rules[i].clone()
			if r.ID == "" {
				return nil, fmt.Errorf("%s:%d: rule without id", f.Name, r.Line)
			}
			if j, ok := index[r.ID]; ok {
				rules[j] = r
				continue
			}
			index[r.ID] = len(rules)
			rules = append(rules, r)
		}
	}
	rs := &Ruleset{maxGap: maxGap, sch: sch, byID: map[string]*compiled{}}
	if season != nil {
		lo, hi, err := season.bounds()
		if err != nil {
			return nil, err
		}
		rs.seasonOn, rs.seasonLo, rs.seasonHi = true, lo, hi
	}
	for i := range rules {
		c, err := compileRule(&rules[i], sch)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", rules[i].where(), err)
		}
		c.idx = len(rs.rules)
		rs.rules = append(rs.rules, c)
		rs.byID[c.rule.ID] = c
	}
	// Rules that explain other kinds run first, so a suppressor that opens
	// in a step takes effect in the same step.
	// Within that, more urgent rules first, so a fault whose rules all hold
	// at once opens at its highest severity instead of escalating.
	sort.SliceStable(rs.rules, func(i, j int) bool {
		a, b := rs.rules[i], rs.rules[j]
		if (a.suppress != 0) != (b.suppress != 0) {
			return a.suppress != 0
		}
		return a.severity < b.severity
	})
	nTerm, nLoop := 0, 0
	for i, c := range rs.rules {
		c.idx = i
		if c.loop {
			c.slot, nLoop = nLoop, nLoop+1
		} else {
			c.slot, nTerm = nTerm, nTerm+1
		}
		rs.kindRules[c.kind] = append(rs.kindRules[c.kind], c)
	}
	return rs, nil
}

func sortedKeys(m map[string]int) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

// Rules returns a copy of the effective rules (after overrides).
func (rs *Ruleset) Rules() []Rule {
	out := make([]Rule, len(rs.rules))
	for i, c := range rs.rules {
		out[i] = c.rule.clone()
	}
	return out
}

// Rule returns the effective rule with the given ID.
func (rs *Ruleset) Rule(id string) (Rule, bool) {
	c, ok := rs.byID[id]
	if !ok {
		return Rule{}, false
	}
	return c.rule.clone(), true
}

func applyOverride(r *Rule, o *Override) error {
	if o.Disabled != nil {
		r.Disabled = *o.Disabled
	}
	if o.For != nil {
		r.For = *o.For
	}
	if o.Within != nil {
		r.Within = *o.Within
	}
	if o.ClearFor != nil {
		r.ClearFor = *o.ClearFor
	}
	if o.Severity != nil {
		r.Severity = *o.Severity
	}
	if o.Message != nil {
		r.Message = *o.Message
	}
	r.Except = append(r.Except, o.Except...)
	if o.Only != nil {
		r.Only = append([]string(nil), o.Only...)
	}
	set := func(m map[string]string, clear bool) error {
		for name, v := range m {
			n := 0
			fn := func(c *Cond) {
				if c.ThresholdName() == name {
					if clear {
						c.Clear = v
					} else {
						c.Value = v
					}
					n++
				}
			}
			r.When.walk(fn)
			r.ClearWhen.walk(fn)
			if n == 0 {
				return fmt.Errorf("no threshold named %q (rule has: %s)", name, strings.Join(thresholdNames(r), ", "))
			}
		}
		return nil
	}
	if err := set(o.Thresholds, false); err != nil {
		return err
	}
	return set(o.ClearThresholds, true)
}

func thresholdNames(r *Rule) []string {
	seen := map[string]bool{}
	var out []string
	fn := func(c *Cond) {
		if c.Is == nil && !seen[c.ThresholdName()] {
			seen[c.ThresholdName()] = true
			out = append(out, c.ThresholdName())
		}
	}
	r.When.walk(fn)
	r.ClearWhen.walk(fn)
	return out
}

// gate bits evaluated once per evidence record.
type gateMask uint8

const (
	gUsable gateMask = 1 << iota
	gSteady
	gPlant
	gFan
	gOccupied
	gSeason

	gateMaskMax = 1<<6 - 1 // largest gateMask value
)

var gateNames = map[string]gateMask{
	"usable": gUsable, "steady": gSteady, "plant_on": gPlant,
	"fan_on": gFan, "occupied": gOccupied, "heating_season": gSeason,
}

// compiled is a rule ready for evaluation.
type compiled struct {
	rule         *Rule
	idx          int
	slot         int // index among the rules of its scope (tracker column)
	kind         fdd.Kind
	loop         bool
	disabled     bool
	need, forbid gateMask
	gates        program // extra truth-valued gates (empty: none)
	when, clear  program
	showWhen     program // Rule.EvidenceWhen (empty: none)
	forNs        int64
	withinNs     int64 // Rule.Within (0: For is a run)
	clearForNs   int64
	suppress     uint32 // kinds explained (bit per fdd.Kind)
	severity     Severity
	confField    *field
	confConst    float64
	tmpl         messageTemplates
	show         []*field // fields published in Evidence.Extra
	except, only []string
}

func compileRule(r *Rule, sch *schemas) (*compiled, error) {
	c := &compiled{rule: r, disabled: r.Disabled}
	k, ok := fdd.ParseKind(r.Kind)
	if !ok || k == fdd.KindNone || int(k) >= kindSlots {
		return nil, fmt.Errorf("kind %q: want one of %s", r.Kind, kindList())
	}
	c.kind = k
	s := sch.terminal
	switch r.Scope {
	case "", ScopeTerminal:
	case ScopeLoop:
		c.loop, s = true, sch.loop
	default:
		return nil, fmt.Errorf("scope %q: want terminal or loop", r.Scope)
	}
	if r.Severity < 1 || r.Severity > 5 {
		return nil, fmt.Errorf("severity %d: want 1 (most urgent) to 5", r.Severity)
	}
	c.severity = Severity(r.Severity)
	var extra []Cond
	for _, g := range r.Gates {
		name, neg := strings.CutPrefix(strings.TrimSpace(g), "!")
		if m, ok := gateNames[name]; ok && !(c.loop && (m == gUsable || m == gSteady || m == gFan || m == gOccupied)) {
			if neg {
				c.forbid |= m
			} else {
				c.need |= m
			}
			continue
		}
		f, err := s.lookup(name)
		if err != nil {
			return nil, fmt.Errorf("gate %q: %w", g, err)
		}
		if !f.isBool() {
			return nil, fmt.Errorf("gate %q: field is not a truth value", g)
		}
		want := !neg
		extra = append(extra, Cond{Field: name, Is: &want, Line: r.Line})
	}
	if len(extra) > 0 {
		var err error
		if c.gates, err = compileCond(&Cond{All: extra, Line: r.Line}, s, false); err != nil {
			return nil, err
		}
	}
	if r.When == nil {
		return nil, fmt.Errorf("missing 'when'")
	}
	var err error
	if c.when, err = compileCond(r.When, s, false); err != nil {
		return nil, fmt.Errorf("when: %w", err)
	}
	if r.ClearWhen != nil {
		if c.clear, err = compileCond(r.ClearWhen, s, false); err != nil {
			return nil, fmt.Errorf("clear_when: %w", err)
		}
	} else {
		p, err := compileCond(r.When, s, true)
		if err != nil {
			return nil, fmt.Errorf("when (clear thresholds): %w", err)
		}
		c.clear = p.negated()
	}
	if r.EvidenceWhen != nil {
		if c.loop {
			return nil, fmt.Errorf("evidence_when: only for terminal rules")
		}
		if c.showWhen, err = compileCond(r.EvidenceWhen, s, false); err != nil {
			return nil, fmt.Errorf("evidence_when: %w", err)
		}
	}
	c.forNs, c.clearForNs = int64(r.For), int64(r.ClearFor)
	switch {
	case r.Within < 0:
		return nil, fmt.Errorf("within %s: must not be negative", time.Duration(r.Within))
	case r.Within > 0 && r.For <= 0:
		return nil, fmt.Errorf("within %s needs a positive 'for' (the total time within it)", time.Duration(r.Within))
	case r.Within > 0 && r.Within < r.For:
		return nil, fmt.Errorf("within %s is shorter than for %s", time.Duration(r.Within), time.Duration(r.For))
	case r.Within > 0 && time.Duration(r.Within) < heldBins*time.Minute:
		return nil, fmt.Errorf("within %s: want at least %s (it is kept in %d bins)", time.Duration(r.Within), heldBins*time.Minute, heldBins)
	}
	c.withinNs = int64(r.Within)
	if c.clearForNs == 0 {
		c.clearForNs = c.forNs
	}
	for _, sk := range r.Suppresses {
		k, ok := fdd.ParseKind(sk)
		if !ok || k == fdd.KindNone || int(k) >= kindSlots {
			return nil, fmt.Errorf("suppresses %q: want one of %s", sk, kindList())
		}
		if k == c.kind {
			return nil, fmt.Errorf("suppresses its own kind %s", sk)
		}
		c.suppress |= 1 << uint(k)
	}
	switch conf := strings.TrimSpace(r.Confidence); {
	case conf == "":
		if !c.loop {
			c.confField = s.fields["score."+c.kind.String()]
		}
		c.confConst = 0.8
	default:
		if v, err := strconv.ParseFloat(conf, 64); err == nil {
			if v < 0 || v > 1 {
				return nil, fmt.Errorf("confidence %v: want 0..1", v)
			}
			c.confConst = v
		} else if f, err := s.lookup(conf); err == nil {
			c.confField, c.confConst = f, 0.8
		} else {
			return nil, fmt.Errorf("confidence: %w", err)
		}
	}
	for _, name := range r.Show {
		f, err := s.lookup(name)
		if err != nil {
			return nil, fmt.Errorf("show: %w", err)
		}
		c.show = append(c.show, f)
	}
	seen := map[string]bool{}
	for _, f := range c.show {
		seen[f.name] = true
	}
	addRef := func(name string) {
		if f, ok := s.fields[name]; ok && !seen[name] && (f.kind == fieldFloat || f.kind == fieldInt) {
			seen[name] = true
			c.show = append(c.show, f)
		}
	}
	for _, t := range []*Cond{r.When, r.ClearWhen} {
		t.walk(func(cd *Cond) { addRef(cd.Field); addRef(cd.Minus); addRef(cd.Ref) })
	}
	for _, p := range append(append([]string(nil), r.Except...), r.Only...) {
		if _, err := path.Match(p, ""); err != nil {
			return nil, fmt.Errorf("pattern %q: %w", p, err)
		}
	}
	c.except, c.only = r.Except, r.Only
	if c.tmpl, err = parseMessage(r.ID, r.Message); err != nil {
		return nil, err
	}
	return c, nil
}

func kindList() string {
	var names []string
	for _, k := range fdd.AllKinds() {
		names = append(names, k.String())
	}
	return strings.Join(names, ", ")
}

// appliesTo reports whether the rule runs for an entity ID under its
// only/except lists (path.Match patterns, e.g. "VAV-3-*").
func (c *compiled) appliesTo(id string) bool {
	if c.disabled {
		return false
	}
	match := func(ps []string) bool {
		for _, p := range ps {
			if ok, _ := path.Match(p, id); ok || p == id {
				return true
			}
		}
		return false
	}
	if len(c.only) > 0 && !match(c.only) {
		return false
	}
	return !match(c.except)
}
