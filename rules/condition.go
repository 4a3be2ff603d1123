package rules

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"risewatch/units"
)

// Cond is one node of a condition tree as written in YAML. A node is either a
// comparison (field set) or a group (all, any or not).
//
//	field: leak_rise_k      # evidence field by its rule tag
//	minus: sat_c            # optional: compare field − minus
//	abs: true               # optional: compare |field − minus|
//	op: ">"                 # >, >=, <, <=, ==, !=
//	value: 3 K              # threshold: SI number or quantity with unit ("5 F")
//	ref: sigma_k            # optional: threshold += times × ref
//	times: 2
//	clear: 2.75 K           # optional clear threshold (hysteresis)
//	name: dat_above_sat     # name used by site overrides (default: field)
//
//	field: fan_on           # truth values
//	is: true
type Cond struct {
	Field string  `yaml:"field"`
	Minus string  `yaml:"minus"`
	Abs   bool    `yaml:"abs"`
	Op    string  `yaml:"op"`
	Value string  `yaml:"value"`
	Clear string  `yaml:"clear"`
	Ref   string  `yaml:"ref"`
	Times float64 `yaml:"times"`
	Is    *bool   `yaml:"is"`
	Name  string  `yaml:"name"`
	All   []Cond  `yaml:"all"`
	Any   []Cond  `yaml:"any"`
	Not   *Cond   `yaml:"not"`

	Line, Column int `yaml:"-"`
}

var condKeys = []string{"field", "minus", "abs", "op", "value", "clear", "ref", "times", "is", "name", "all", "any", "not"}

// UnmarshalYAML records the position and rejects unknown keys.
func (c *Cond) UnmarshalYAML(n *yaml.Node) error {
	if err := checkKeys(n, "condition", condKeys); err != nil {
		return err
	}
	type plain Cond
	if err := n.Decode((*plain)(c)); err != nil {
		return err
	}
	c.Line, c.Column = n.Line, n.Column
	return nil
}

// ThresholdName is the name site overrides use for this comparison.
func (c *Cond) ThresholdName() string {
	switch {
	case c.Name != "":
		return c.Name
	case c.Minus != "":
		return c.Field + "_minus_" + c.Minus
	}
	return c.Field
}

// walk calls fn for every comparison in the tree.
func (c *Cond) walk(fn func(*Cond)) {
	if c == nil {
		return
	}
	if c.Field != "" {
		fn(c)
	}
	for i := range c.All {
		c.All[i].walk(fn)
	}
	for i := range c.Any {
		c.Any[i].walk(fn)
	}
	c.Not.walk(fn)
}

// clone deep-copies the tree (overrides edit copies, never the built-in set).
func (c *Cond) clone() *Cond {
	if c == nil {
		return nil
	}
	d := *c
	d.All = cloneConds(c.All)
	d.Any = cloneConds(c.Any)
	d.Not = c.Not.clone()
	if c.Is != nil {
		b := *c.Is
		d.Is = &b
	}
	return &d
}

func cloneConds(cs []Cond) []Cond {
	if cs == nil {
		return nil
	}
	out := make([]Cond, len(cs))
	for i := range cs {
		out[i] = *cs[i].clone()
	}
	return out
}

// tri is a three-valued truth: a NaN input makes a comparison unknown, and
// unknown neither opens nor clears a fault.
type tri uint8

const (
	triFalse tri = iota
	triTrue
	triUnknown
)

type cmpOp uint8

const (
	opGT cmpOp = iota
	opGE
	opLT
	opLE
	opEQ
	opNE
)

func parseOp(s string) (cmpOp, bool) {
	switch strings.TrimSpace(s) {
	case ">", "gt":
		return opGT, true
	case ">=", "ge":
		return opGE, true
	case "<", "lt":
		return opLT, true
	case "<=", "le":
		return opLE, true
	case "==", "=", "eq":
		return opEQ, true
	case "!=", "ne":
		return opNE, true
	}
	return 0, false
}

func (o cmpOp) cmp(a, b float64) bool {
	switch o {
	case opGT:
		return a > b
	case opGE:
		return a >= b
	case opLT:
		return a < b
	case opLE:
		return a <= b
	case opEQ:
		return a == b
	}
	return a != b
}

// parseValue reads a threshold for a quantity of dimension d: a bare number is
// SI (minutes for *_min fields); text with a unit goes through units.Parse;
// a duration ("15m") is accepted for *_min fields.
func parseValue(s string, d units.Dimension, fieldName string) (float64, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return 0, fmt.Errorf("missing value")
	}
	if v, err := strconv.ParseFloat(s, 64); err == nil {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return 0, fmt.Errorf("value %q is not a finite number", s)
		}
		return v, nil
	}
	if strings.HasSuffix(fieldName, "_min") {
		dur, err := time.ParseDuration(strings.ReplaceAll(s, " ", ""))
		if err != nil {
			return 0, fmt.Errorf("value %q: want minutes or a duration such as 15m", s)
		}
		return dur.Minutes(), nil
	}
	if d == units.NoDimension || d == units.Binary {
		return 0, fmt.Errorf("value %q: field %s takes a plain number", s, fieldName)
	}
	return units.Parse(s, d)
}

// compileCond turns a tree into a flat program. useClear selects each
// comparison's clear threshold (falling back to its open threshold).
func compileCond(c *Cond, s *schema, useClear bool) (program, error) {
	var pr program
	if err := emitCond(&pr, c, s, useClear); err != nil {
		return nil, err
	}
	return pr, nil
}

// emitCond appends the pre-order nodes of c to pr.
func emitCond(pr *program, c *Cond, s *schema, useClear bool) error {
	pos := func(err error) error { return fmt.Errorf("line %d: %w", c.Line, err) }
	groups := 0
	if c.Field != "" {
		groups++
	}
	if c.All != nil {
		groups++
	}
	if c.Any != nil {
		groups++
	}
	if c.Not != nil {
		groups++
	}
	if groups != 1 {
		return pos(fmt.Errorf("a condition needs exactly one of field, all, any, not"))
	}
	if c.Field != "" {
		n, err := compileLeaf(c, s, useClear)
		if err != nil {
			return err
		}
		n.end = int32(len(*pr) + 1)
		*pr = append(*pr, n)
		return nil
	}
	if c.Not != nil {
		at := len(*pr)
		*pr = append(*pr, node{kind: nNot})
		if err := emitCond(pr, c.Not, s, useClear); err != nil {
			return err
		}
		(*pr)[at].end = int32(len(*pr))
		return nil
	}
	kids, kind := c.All, nAll
	if c.All == nil {
		kids, kind = c.Any, nAny
	}
	if len(kids) == 0 {
		return pos(fmt.Errorf("empty condition group"))
	}
	order := make([]int, len(kids))
	for i := range order {
		order[i] = i
	}
	if kind == nAll {
		// Three-valued AND is commutative: test first what is false most
		// of the time, so a healthy terminal costs one compare.
		sort.SliceStable(order, func(i, j int) bool { return selectivity(&kids[order[i]]) < selectivity(&kids[order[j]]) })
	}
	if len(kids) == 1 {
		return emitCond(pr, &kids[0], s, useClear)
	}
	at := len(*pr)
	*pr = append(*pr, node{kind: kind})
	for _, k := range order {
		if err := emitCond(pr, &kids[k], s, useClear); err != nil {
			return err
		}
	}
	(*pr)[at].end = int32(len(*pr))
	return nil
}

// selectivity orders the children of an all-group: comparisons on the
// engine's signature scores (near 0 on a healthy terminal) first, then other
// comparisons, then nested groups.
func selectivity(c *Cond) int {
	switch {
	case c.Field != "" && strings.HasPrefix(c.Field, "score."):
		return 0
	case c.Field != "":
		return 1
	}
	return 2
}

// compileLeaf compiles one comparison (end is set by the caller).
func compileLeaf(c *Cond, s *schema, useClear bool) (node, error) {
	pos := func(err error) error { return fmt.Errorf("line %d: field %s: %w", c.Line, c.Field, err) }
	a, err := s.lookup(c.Field)
	if err != nil {
		return node{}, pos(err)
	}
	if c.Is != nil {
		if !a.isBool() {
			return node{}, pos(fmt.Errorf("'is' needs a truth-valued field"))
		}
		if c.Op != "" || c.Value != "" || c.Minus != "" || c.Ref != "" || c.Clear != "" || c.Abs {
			return node{}, pos(fmt.Errorf("'is' takes no op, value, minus, ref, clear or abs"))
		}
		return node{kind: nIs, a: *a, want: *c.Is}, nil
	}
	op, ok := parseOp(c.Op)
	if !ok {
		return node{}, pos(fmt.Errorf("op %q: want one of > >= < <= == !=", c.Op))
	}
	dim := a.dim
	var b, ref *field
	if c.Minus != "" {
		if b, err = s.lookup(c.Minus); err != nil {
			return node{}, pos(err)
		}
		if dim == units.Temperature {
			dim = units.TempDiff
		}
	}
	if c.Ref != "" {
		if ref, err = s.lookup(c.Ref); err != nil {
			return node{}, pos(err)
		}
		if c.Times == 0 || math.IsNaN(c.Times) || math.IsInf(c.Times, 0) {
			return node{}, pos(fmt.Errorf("ref %s needs a finite non-zero 'times'", c.Ref))
		}
	}
	text := c.Value
	if useClear && c.Clear != "" {
		text = c.Clear
	}
	if text == "" && ref != nil {
		text = "0"
	}
	v, err := parseValue(text, dim, c.Field)
	if err != nil {
		return node{}, pos(err)
	}
	if c.Clear != "" {
		if _, err := parseValue(c.Clear, dim, c.Field); err != nil {
			return node{}, pos(fmt.Errorf("clear: %w", err))
		}
	}
	if b == nil && ref == nil && !c.Abs && a.kind == fieldFloat {
		return node{kind: nFloat, op: op, off: a.off, v: v, a: *a}, nil
	}
	n := node{kind: nExpr, op: op, a: *a, v: v, abs: c.Abs, times: c.Times}
	if b != nil {
		n.hasB, n.b = true, *b
	}
	if ref != nil {
		n.hasR, n.r = true, *ref
	}
	return n, nil
}

// checkKeys rejects mapping keys not in allowed, naming the line.
func checkKeys(n *yaml.Node, what string, allowed []string) error {
	if n.Kind != yaml.MappingNode {
		return fmt.Errorf("line %d: %s must be a mapping", n.Line, what)
	}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k := n.Content[i]
		ok := false
		for _, a := range allowed {
			if k.Value == a {
				ok = true
				break
			}
		}
		if !ok {
			return fmt.Errorf("line %d: unknown %s key %q (known: %s)", k.Line, what, k.Value, strings.Join(allowed, ", "))
		}
	}
	return nil
}
