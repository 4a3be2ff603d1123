package site

import (
	"math"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"risewatch/units"
)

// maxDepth bounds alias resolution and template chains; YAML aliases can
// form cycles ("a: &x [*x]") and the decoder must not loop on them.
const maxDepth = 32

// resolve follows aliases and document nodes.
func resolve(n *yaml.Node) *yaml.Node {
	for i := 0; n != nil && i < maxDepth; i++ {
		switch n.Kind {
		case yaml.AliasNode:
			n = n.Alias
		case yaml.DocumentNode:
			if len(n.Content) == 0 {
				return nil
			}
			n = n.Content[0]
		default:
			return n
		}
	}
	return nil
}

// isNull reports an explicit YAML null ("~", "null" or an empty value).
func isNull(n *yaml.Node) bool {
	n = resolve(n)
	return n == nil || (n.Kind == yaml.ScalarNode && n.Tag == "!!null")
}

// mapReader reads one YAML mapping: it rejects unknown and duplicate keys
// when it is made and hands out typed values with their positions.
type mapReader struct {
	e    *errs
	node *yaml.Node // the mapping (nil when the value was not a mapping)
	what string     // "terminal VAV-2-07", for messages
	vals map[string]*yaml.Node
	keys map[string]*yaml.Node
	ord  []string // keys in file order
}

// mapping makes a reader for n. allowed lists the accepted keys; an unknown
// key is an error naming the expected ones.
func mapping(e *errs, n *yaml.Node, what string, allowed ...string) *mapReader {
	m := &mapReader{e: e, what: what, vals: map[string]*yaml.Node{}, keys: map[string]*yaml.Node{}}
	orig := n
	n = resolve(n)
	if n == nil || isNull(n) {
		return m
	}
	if n.Kind != yaml.MappingNode {
		e.at(orig, "%s: expected a mapping (key: value lines), found %s", what, kindName(n))
		return m
	}
	m.node = n
	ok := map[string]bool{}
	for _, a := range allowed {
		ok[a] = true
	}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		if k.Kind != yaml.ScalarNode {
			e.at(k, "%s: keys must be plain names", what)
			continue
		}
		if k.Value == "<<" {
			e.at(k, "%s: YAML merge keys (<<) are not supported; use templates or terminal_defaults", what)
			continue
		}
		if !ok[k.Value] {
			msg := "unknown key " + strconv.Quote(k.Value) + " in " + what
			if c := Closest(k.Value, allowed); c != "" {
				msg += "; did you mean " + strconv.Quote(c) + "?"
			}
			e.at(k, "%s; expected one of: %s", msg, strings.Join(allowed, ", "))
			continue
		}
		if prev, dup := m.keys[k.Value]; dup {
			e.at(k, "%s: duplicate key %q (first at line %d)", what, k.Value, prev.Line)
			continue
		}
		m.keys[k.Value] = k
		m.vals[k.Value] = v
		m.ord = append(m.ord, k.Value)
	}
	return m
}

func kindName(n *yaml.Node) string {
	switch n.Kind {
	case yaml.MappingNode:
		return "a mapping"
	case yaml.SequenceNode:
		return "a list"
	case yaml.ScalarNode:
		if n.Tag == "!!null" {
			return "nothing"
		}
		return "the value " + strconv.Quote(n.Value)
	}
	return "something else"
}

// pos is the node to blame for the whole mapping.
func (m *mapReader) pos() *yaml.Node { return m.node }

func (m *mapReader) has(key string) bool {
	v, ok := m.vals[key]
	return ok && v != nil
}

// val is the value node for key (nil when absent).
func (m *mapReader) val(key string) *yaml.Node { return m.vals[key] }

// at is the best node to blame for key: its value, else the mapping.
func (m *mapReader) at(key string) *yaml.Node {
	if v := m.vals[key]; v != nil {
		return v
	}
	return m.node
}

func (m *mapReader) missing(key, expect string) {
	m.e.at(m.node, "%s: %q is required (%s)", m.what, key, expect)
}

// scalar returns the scalar value node for key, or nil (with an error when
// the value is not a scalar).
func (m *mapReader) scalar(key string) *yaml.Node {
	v := resolve(m.vals[key])
	if v == nil || isNull(v) {
		return nil
	}
	if v.Kind != yaml.ScalarNode {
		m.e.at(m.vals[key], "%s: %s: expected a single value, found %s", m.what, key, kindName(v))
		return nil
	}
	return v
}

func (m *mapReader) str(key string, required bool, expect string) string {
	v := m.scalar(key)
	if v == nil {
		if required && !m.has(key) {
			m.missing(key, expect)
		} else if required {
			m.e.at(m.at(key), "%s: %s: must not be empty (%s)", m.what, key, expect)
		}
		return ""
	}
	return v.Value
}

// quantity parses key as a quantity of dimension d into SI.
func (m *mapReader) quantity(key string, d units.Dimension, required bool, def string) (float64, bool) {
	v := m.scalar(key)
	if v == nil {
		if required {
			m.missing(key, "a "+d.String()+", e.g. "+example(d))
		}
		return 0, false
	}
	x, err := units.ParseDefault(v.Value, d, def)
	if err != nil {
		m.e.at(v, "%s: %s: %v", m.what, key, err)
		return 0, false
	}
	return x, true
}

func example(d units.Dimension) string {
	switch d {
	case units.Temperature:
		return `"180 F" or "82.2 C"`
	case units.TempDiff:
		return `"20 F" or "11 K"`
	case units.VolumeFlow:
		return `"450 cfm" or "212 L/s"`
	case units.Power:
		return `"30 MBH" or "8.8 kW"`
	case units.Pressure:
		return `"6 ft" (water head), "3 psi" or "18 kPa"`
	case units.Length:
		return `"12 in" or "305 mm"`
	case units.FinDensity:
		return `"10 fpi"`
	}
	return `"1"`
}

// number reads a plain number (no unit) within [lo, hi].
func (m *mapReader) number(key string, required bool, lo, hi float64) (float64, bool) {
	v := m.scalar(key)
	if v == nil {
		if required {
			m.missing(key, "a number")
		}
		return 0, false
	}
	x, err := strconv.ParseFloat(strings.TrimSpace(v.Value), 64)
	if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
		m.e.at(v, "%s: %s: expected a plain number, found %q", m.what, key, v.Value)
		return 0, false
	}
	if x < lo || x > hi {
		m.e.at(v, "%s: %s: %g is out of range; expected %g to %g", m.what, key, x, lo, hi)
		return 0, false
	}
	return x, true
}

// integer reads a whole number within [lo, hi].
func (m *mapReader) integer(key string, required bool, lo, hi int64) (int64, bool) {
	v := m.scalar(key)
	if v == nil {
		if required {
			m.missing(key, "a whole number")
		}
		return 0, false
	}
	x, err := strconv.ParseInt(strings.TrimSpace(v.Value), 10, 64)
	if err != nil {
		m.e.at(v, "%s: %s: expected a whole number, found %q", m.what, key, v.Value)
		return 0, false
	}
	if x < lo || x > hi {
		m.e.at(v, "%s: %s: %d is out of range; expected %d to %d", m.what, key, x, lo, hi)
		return 0, false
	}
	return x, true
}

func (m *mapReader) boolean(key string) (bool, bool) {
	v := m.scalar(key)
	if v == nil {
		return false, false
	}
	switch strings.ToLower(v.Value) {
	case "true", "yes", "on":
		return true, true
	case "false", "no", "off":
		return false, true
	}
	m.e.at(v, "%s: %s: expected true or false, found %q", m.what, key, v.Value)
	return false, false
}

// duration reads a Go duration such as "90s", "5m", "1h30m" (> 0, <= max).
func (m *mapReader) duration(key string, def, max time.Duration) time.Duration {
	v := m.scalar(key)
	if v == nil {
		return def
	}
	d, err := time.ParseDuration(strings.TrimSpace(v.Value))
	if err != nil || d <= 0 || d > max {
		m.e.at(v, "%s: %s: expected a positive duration up to %s such as \"30s\", \"5m\" or \"1h\", found %q", m.what, key, max, v.Value)
		return def
	}
	return d
}

// oneOf reads a word from a closed set.
func (m *mapReader) oneOf(key, def string, choices ...string) string {
	v := m.scalar(key)
	if v == nil {
		return def
	}
	for _, c := range choices {
		if strings.EqualFold(v.Value, c) {
			return c
		}
	}
	m.e.at(v, "%s: %s: %q is not one of: %s", m.what, key, v.Value, strings.Join(choices, ", "))
	return def
}

// strList reads a name or a list of names.
func (m *mapReader) strList(key string) ([]string, []*yaml.Node) {
	v := resolve(m.vals[key])
	if v == nil || isNull(v) {
		return nil, nil
	}
	if v.Kind == yaml.ScalarNode {
		return []string{v.Value}, []*yaml.Node{v}
	}
	if v.Kind != yaml.SequenceNode {
		m.e.at(m.vals[key], "%s: %s: expected a name or a list of names", m.what, key)
		return nil, nil
	}
	var out []string
	var ns []*yaml.Node
	for _, c := range v.Content {
		c2 := resolve(c)
		if c2 == nil || c2.Kind != yaml.ScalarNode || c2.Value == "" {
			m.e.at(c, "%s: %s: expected a name", m.what, key)
			continue
		}
		out = append(out, c2.Value)
		ns = append(ns, c2)
	}
	return out, ns
}

// validID reports whether s can name a loop, AHU, terminal or source: it is
// used in point names ("VAV-2-07.DAT"), so no dots or spaces.
func validID(s string) bool {
	if s == "" || len(s) > 64 {
		return false
	}
	for _, r := range s {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '-' || r == '_' || r == '/') {
			return false
		}
	}
	return true
}

const idRule = "letters, digits, '-', '_' or '/', at most 64"

// seqItems returns the items of a list value (with an error if not a list).
func seqItems(e *errs, n *yaml.Node, what string) []*yaml.Node {
	orig := n
	n = resolve(n)
	if n == nil || isNull(n) {
		return nil
	}
	if n.Kind != yaml.SequenceNode {
		e.at(orig, "%s: expected a list (lines starting with '-'), found %s", what, kindName(n))
		return nil
	}
	return n.Content
}
