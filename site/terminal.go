package site

import (
	"slices"

	"gopkg.in/yaml.v3"

	"risewatch/units"
)

// Terminal keys. Templates and terminal_defaults take the same keys except
// id (and terminal_defaults takes no template).
var terminalKeys = []string{"id", "template", "ahu", "loop", "zone", "building", "location", "device", "points_from", "points", "coil", "valve", "airflow", "design_load"}

func keysWithout(ks []string, drop ...string) []string {
	var out []string
	for _, k := range ks {
		keep := true
		for _, x := range drop {
			keep = keep && k != x
		}
		if keep {
			out = append(out, k)
		}
	}
	return out
}

// decodeTemplates records terminal_defaults and templates and checks each
// on its own (keys, units, references), so a mistake in a template is
// reported even if no terminal uses it.
func (d *decoder) decodeTemplates(defaults, templates *yaml.Node) {
	d.partial = true
	defer func() { d.partial = false }()
	if defaults != nil && !isNull(defaults) {
		d.siteDefault = defaults
		d.decodeTerminal(defaults, "terminal_defaults", keysWithout(terminalKeys, "id", "template"))
	}
	for id, n := range d.ahuDefaults {
		d.decodeTerminal(n, "AHU "+id+" terminal_defaults", keysWithout(terminalKeys, "id", "template"))
	}
	tv := resolve(templates)
	if tv == nil || isNull(tv) {
		return
	}
	if tv.Kind != yaml.MappingNode {
		d.e.at(templates, "templates: expected a mapping of template name: terminal keys")
		return
	}
	for i := 0; i+1 < len(tv.Content); i += 2 {
		k := resolve(tv.Content[i])
		if k == nil || k.Kind != yaml.ScalarNode || !validID(k.Value) {
			d.e.at(tv.Content[i], "templates: template names must be %s", idRule)
			continue
		}
		if _, dup := d.templates[k.Value]; dup {
			d.e.at(k, "templates: duplicate template %q", k.Value)
			continue
		}
		d.templates[k.Value] = tv.Content[i+1]
	}
	for i := 0; i+1 < len(tv.Content); i += 2 {
		k := resolve(tv.Content[i])
		if n, ok := d.templates[k.Value]; ok && k.Kind == yaml.ScalarNode {
			d.decodeTerminal(d.effective(n, k.Value), "template "+k.Value, keysWithout(terminalKeys, "id"))
		}
	}
}

// effective merges, from lowest to highest precedence: terminal_defaults,
// the AHU's terminal_defaults, the template chain (base first), and n.
func (d *decoder) effective(n *yaml.Node, what string) *yaml.Node {
	chain := []*yaml.Node{n}
	seen := map[string]bool{}
	cur := n
	for range maxDepth {
		m := mapping(&errs{seen: map[Error]bool{}}, cur, "", terminalKeys...)
		tv := m.scalar("template")
		if tv == nil {
			break
		}
		if seen[tv.Value] {
			d.e.at(tv, "%s: template %q refers back to itself", what, tv.Value)
			break
		}
		seen[tv.Value] = true
		next, ok := d.templates[tv.Value]
		if !ok {
			d.e.at(tv, "%s: no template named %q; defined templates: %s", what, tv.Value, d.templateNames())
			break
		}
		chain = append(chain, next)
		cur = next
	}
	// The AHU decides which AHU defaults apply.
	ahu := ""
	for _, c := range append(chain, d.siteDefault) {
		m := mapping(&errs{seen: map[Error]bool{}}, c, "", terminalKeys...)
		if v := m.scalar("ahu"); v != nil {
			ahu = v.Value
			break
		}
	}
	layers := []*yaml.Node{d.siteDefault}
	if ahu != "" {
		layers = append(layers, d.ahuDefaults[ahu])
	}
	for i := len(chain) - 1; i >= 0; i-- {
		layers = append(layers, chain[i])
	}
	var out *yaml.Node
	for _, l := range layers {
		out = mergeNodes(out, l, 0)
	}
	return out
}

func (d *decoder) templateNames() string {
	if len(d.templates) == 0 {
		return "(none)"
	}
	var names []string
	for k := range d.templates {
		names = append(names, k)
	}
	slices.Sort(names)
	return joinKeys(names)
}

// Keys whose mappings merge key by key; other values replace.
var deepKeys = map[string]bool{"points": true, "coil": true, "valve": true, "airflow": true}

// Alternatives: a higher layer giving one side removes the other side of a
// lower layer (a terminal's geometry replaces its template's preset).
var exclusive = map[string][2][]string{
	"coil":  {{"geometry"}, {"rows", "fpi", "oversized"}},
	"valve": {{"cv"}, {"kv"}},
}

// mergeNodes returns base overlaid with over without changing either.
func mergeNodes(base, over *yaml.Node, depth int) *yaml.Node {
	b, o := resolve(base), resolve(over)
	if o == nil || isNull(o) {
		return base
	}
	if b == nil || isNull(b) || b.Kind != yaml.MappingNode || o.Kind != yaml.MappingNode {
		return over
	}
	out := &yaml.Node{Kind: yaml.MappingNode, Tag: o.Tag, Line: o.Line, Column: o.Column, Style: o.Style}
	idx := map[string]int{}
	for i := 0; i+1 < len(b.Content); i += 2 {
		k := b.Content[i]
		idx[k.Value] = len(out.Content)
		out.Content = append(out.Content, k, b.Content[i+1])
	}
	for i := 0; i+1 < len(o.Content); i += 2 {
		k, v := o.Content[i], o.Content[i+1]
		if j, ok := idx[k.Value]; ok && k.Kind == yaml.ScalarNode {
			if depth == 0 && deepKeys[k.Value] {
				merged := mergeNodes(out.Content[j+1], v, depth+1)
				if ex, ok := exclusive[k.Value]; ok {
					merged = dropExclusive(merged, v, ex)
				}
				out.Content[j], out.Content[j+1] = k, merged
			} else {
				out.Content[j], out.Content[j+1] = k, v
			}
			continue
		}
		idx[k.Value] = len(out.Content)
		out.Content = append(out.Content, k, v)
	}
	return out
}

// dropExclusive removes from merged the keys of one side of ex when over
// gives the other side (and not both, which decodeCoil reports).
func dropExclusive(merged, over *yaml.Node, ex [2][]string) *yaml.Node {
	m, o := resolve(merged), resolve(over)
	if m == nil || o == nil || m.Kind != yaml.MappingNode || o.Kind != yaml.MappingNode {
		return merged
	}
	has := func(n *yaml.Node, k string) bool {
		for i := 0; i+1 < len(n.Content); i += 2 {
			if n.Content[i].Value == k {
				return true
			}
		}
		return false
	}
	drop := map[string]bool{}
	for side := 0; side < 2; side++ {
		gives := false
		for _, k := range ex[side] {
			gives = gives || has(o, k)
		}
		if gives {
			for _, k := range ex[1-side] {
				if !has(o, k) {
					drop[k] = true
				}
			}
		}
	}
	if len(drop) == 0 {
		return merged
	}
	out := &yaml.Node{Kind: m.Kind, Tag: m.Tag, Line: m.Line, Column: m.Column, Style: m.Style}
	for i := 0; i+1 < len(m.Content); i += 2 {
		if !drop[m.Content[i].Value] {
			out.Content = append(out.Content, m.Content[i], m.Content[i+1])
		}
	}
	return out
}

func (d *decoder) decodeTerminals(n *yaml.Node) {
	for _, item := range seqItems(d.e, n, "terminals") {
		ri := resolve(item)
		if ri == nil || ri.Kind != yaml.MappingNode {
			mapping(d.e, item, "terminal") // reports the shape error
			continue
		}
		// Peek at the id for messages; keys are checked on the merged
		// mapping, which keeps every key's own position.
		id := mapping(&errs{seen: map[Error]bool{}}, item, "", terminalKeys...).str("id", false, "")
		what := "terminal"
		if id != "" {
			what = "terminal " + id
		}
		eff := d.effective(item, what)
		d.decodeTerminal(eff, what, terminalKeys)
	}
}

// decodeTerminal decodes one terminal (or, in partial mode, a template or
// defaults block, where required keys may come later).
func (d *decoder) decodeTerminal(n *yaml.Node, what string, allowed []string) {
	m := mapping(d.e, n, what, allowed...)
	if m.node == nil {
		return
	}
	full := !d.partial
	t := Terminal{Line: m.node.Line}
	if full {
		t.ID = m.str("id", true, "a unique name such as VAV-2-07")
		if t.ID == "" || !d.claimID(m.at("id"), "terminal", t.ID) {
			return
		}
	}
	t.AHU = d.ref(m, what, "ahu", "AHU", full, d.site.AHUIndexOf, d.ahuIDs())
	t.Loop = d.ref(m, what, "loop", "loop", full, d.site.LoopIndexOf, d.loopIDs())
	t.Zone = m.str("zone", false, "")
	t.Building = m.str("building", false, "")
	t.Location = m.str("location", false, "")
	if x, ok := m.integer("device", false, 0, maxInstance); ok {
		u := uint32(x)
		t.Device = &u
	}
	en := &entity{kind: "terminal", id: t.ID, node: m.node, device: t.Device}
	if m.has("points_from") {
		en.from, en.fromNode = m.strList("points_from")
	} else {
		en.from, en.fromNode = d.siteFrom, d.siteFromN
	}
	d.checkFrom(en, m.has("points_from"))
	en.vars = map[string]string{"id": t.ID, "ahu": t.AHU, "loop": t.Loop, "zone": t.Zone, "building": t.Building}
	given := d.decodePoints(en, m.val("points"), terminalRoles, t.Points.Ref)
	if full && !en.brokenFrom {
		for _, r := range []Role{RoleAirflow, RoleDischarge, RoleValve} {
			if !t.Points.Ref(r).Defined() && !given[r] {
				d.e.at(m.pos(), "%s: required point %s (%s) is missing; give points: %s: ... or list a source with a pattern for %s in points_from", what, r, roleInfos[r].doc, r, r)
			}
		}
	}
	if m.has("coil") {
		d.decodeCoil(m.val("coil"), what, &t)
	} else if full {
		d.e.at(m.pos(), "%s: coil is required: a preset (coil: {inlet: 8 in, rows: 2}), or coil: geometry: ..., optionally with coil: rated: ... from the submittal", what)
	}
	d.decodeValve(m, what, &t)
	d.decodeAirflow(m, what, &t)
	if v, ok := m.quantity("design_load", units.Power, false, ""); ok {
		if v <= 0 || v > 500e3 {
			d.e.at(m.at("design_load"), "%s: design_load must be above 0 and at most 500 kW", what)
		} else {
			t.DesignLoadW = v
		}
	}
	if full {
		d.site.Terminals = append(d.site.Terminals, t)
	}
}

// ref reads an AHU or loop reference; with one AHU (loop) in the file it
// may be left out.
func (d *decoder) ref(m *mapReader, what, key, kind string, full bool, index func(string) int, ids []string) string {
	v := m.str(key, false, "")
	if v == "" {
		if full && len(ids) == 1 {
			return ids[0]
		}
		if full {
			d.e.at(m.pos(), "%s: %s is required: the file defines %d (%s)", what, key, len(ids), joinOr(ids))
		}
		return ""
	}
	if index(v) < 0 {
		d.e.at(m.at(key), "%s: %s: no %s named %q; defined: %s", what, key, kind, v, joinOr(ids))
	}
	return v
}

func joinOr(ids []string) string {
	if len(ids) == 0 {
		return "none"
	}
	if len(ids) > 8 {
		return joinKeys(ids[:8]) + ", ..."
	}
	return joinKeys(ids)
}

func (d *decoder) ahuIDs() []string {
	out := make([]string, len(d.site.AHUs))
	for i, a := range d.site.AHUs {
		out[i] = a.ID
	}
	return out
}

func (d *decoder) loopIDs() []string {
	out := make([]string, len(d.site.Loops))
	for i, l := range d.site.Loops {
		out[i] = l.ID
	}
	return out
}

// AHUIndexOf returns the index of the AHU with this ID, or -1.
func (s *Site) AHUIndexOf(id string) int {
	for i := range s.AHUs {
		if s.AHUs[i].ID == id {
			return i
		}
	}
	return -1
}

// LoopIndexOf returns the index of the loop with this ID, or -1.
func (s *Site) LoopIndexOf(id string) int {
	for i := range s.Loops {
		if s.Loops[i].ID == id {
			return i
		}
	}
	return -1
}
