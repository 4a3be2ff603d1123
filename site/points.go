package site

import (
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"

	"risewatch/units"
)

// entity is what a point decoder needs to know about its loop, AHU or
// terminal: its ID, the values pattern placeholders expand to, and where
// its points come from.
type entity struct {
	kind     string // "loop", "AHU", "terminal"
	id       string
	vars     map[string]string // placeholder values: id, ahu, loop, zone, building
	device   *uint32
	from     []string
	fromNode []*yaml.Node
	node     *yaml.Node // the entity's mapping, for "missing" errors
	// brokenFrom: a points_from source failed to decode; missing points are
	// then not reported again.
	brokenFrom bool
}

func (en *entity) what() string { return en.kind + " " + en.id }

// decodePoints fills the entity's points for roles from its explicit
// `points:` mapping and its `points_from` sources. An explicit value wins;
// "none" (or null) removes a point a pattern would give. It returns the
// roles written explicitly (so a bad explicit point is not also reported
// as missing).
func (d *decoder) decodePoints(en *entity, pointsNode *yaml.Node, roles []Role, get func(Role) *PointRef) map[Role]bool {
	given := map[Role]bool{}
	pm := mapping(d.e, pointsNode, en.what()+" points", roleKeys(roles)...)
	for _, r := range roles {
		ref := get(r)
		*ref = PointRef{}
		if v, ok := pm.vals[r.String()]; ok {
			given[r] = true
			if isNull(v) || (resolve(v).Kind == yaml.ScalarNode && strings.EqualFold(resolve(v).Value, "none")) {
				continue
			}
			*ref = d.explicitPoint(en, r, v)
		} else if !d.partial {
			for _, src := range en.from {
				sc := d.source(src)
				if sc == nil {
					continue
				}
				pat, ok := sc.Points[r]
				if !ok {
					continue
				}
				p, msg := pat.expand(sc, r, en.vars, en.device)
				if msg != "" {
					d.e.at(en.node, "%s: points_from %s: %s %s", en.what(), src, r, msg)
					break
				}
				*ref = p
				break
			}
		}
		if ref.Defined() {
			ref.Name = PointName(en.id, r)
		}
	}
	return given
}

// checkFrom validates a points_from list; report is false for a list
// inherited from the top level (checked there once). A missing or broken
// source marks the entity so its missing points are not reported again.
func (d *decoder) checkFrom(en *entity, report bool) {
	for i, src := range en.from {
		if d.broken[src] || d.source(src) == nil {
			en.brokenFrom = true
		}
		if report && !d.broken[src] && d.source(src) == nil {
			d.e.at(en.fromNode[i], "%s: points_from: no source named %q; defined sources: %s", en.what(), src, d.sourceNames())
		}
	}
}

var pointKeys = []string{"source", "column", "bacnet", "influx", "fixed", "unit"}

// explicitPoint decodes one point written out in full, or a fixed value
// given as a bare quantity ("discharge: 55 F", "fan_status: on").
func (d *decoder) explicitPoint(en *entity, r Role, v *yaml.Node) PointRef {
	what := en.what() + " point " + r.String()
	rv := resolve(v)
	if rv != nil && rv.Kind == yaml.ScalarNode {
		return d.fixedValue(what, r, rv)
	}
	m := mapping(d.e, v, what, pointKeys...)
	if m.node == nil {
		return PointRef{}
	}
	n := 0
	for _, k := range []string{"column", "bacnet", "influx", "fixed"} {
		if m.has(k) {
			n++
		}
	}
	if n != 1 {
		d.e.at(m.pos(), "%s: give exactly one of column (trend file), bacnet, influx or fixed", what)
		return PointRef{}
	}
	if m.has("fixed") {
		if m.has("source") || m.has("unit") {
			d.e.at(m.pos(), "%s: a fixed value takes no source or unit; write the unit in the value (fixed: 55 F)", what)
		}
		fv := resolve(m.val("fixed"))
		if fv == nil || fv.Kind != yaml.ScalarNode {
			d.e.at(m.at("fixed"), "%s: fixed: expected a value such as %s", what, example(r.Dimension()))
			return PointRef{}
		}
		return d.fixedValue(what, r, fv)
	}
	var kind PointKind
	var srcKind string
	switch {
	case m.has("column"):
		kind, srcKind = PointTrendColumn, "trendfile"
	case m.has("bacnet"):
		kind, srcKind = PointBACnet, "bacnet"
	default:
		kind, srcKind = PointInflux, "influx"
	}
	p := PointRef{Kind: kind, Binary: r.Binary()}
	p.Source = d.pointSource(en, m, what, srcKind)
	p.Unit = d.pointUnit(m, what, r)
	switch kind {
	case PointTrendColumn:
		p.Column = m.str("column", true, "the trend-file column or long-layout point name")
	case PointBACnet:
		p.BACnet = d.bacnetRef(en, m.val("bacnet"), what)
	case PointInflux:
		p.Influx = d.influxRef(m.val("influx"), what)
	}
	return p
}

func (d *decoder) fixedValue(what string, r Role, v *yaml.Node) PointRef {
	var x float64
	if r.Binary() {
		switch strings.ToLower(v.Value) {
		case "on", "true", "active", "1", "yes":
			x = 1
		case "off", "false", "inactive", "0", "no":
			x = 0
		default:
			d.e.at(v, "%s: expected on or off (or none), found %q", what, v.Value)
			return PointRef{}
		}
	} else {
		var err error
		x, err = units.Parse(v.Value, r.Dimension())
		if err != nil {
			d.e.at(v, "%s: fixed value %v (or write none for no point)", what, err)
			return PointRef{}
		}
	}
	return PointRef{Fixed: &x, Binary: r.Binary(), Unit: siUnit(r)}
}

// siUnit is the unit a fixed value is stored in.
func siUnit(r Role) string {
	switch r.Dimension() {
	case units.Temperature:
		return "degC"
	case units.VolumeFlow:
		return "m3/s"
	case units.Fraction:
		return "fraction"
	case units.Binary:
		return "on/off"
	}
	return ""
}

// pointSource resolves the source of an explicit point: the one named, or
// the first points_from source of the right kind, or the only source of
// that kind in the file.
func (d *decoder) pointSource(en *entity, m *mapReader, what, kind string) string {
	if name := m.str("source", false, ""); name != "" {
		sc := d.source(name)
		switch {
		case sc == nil && d.broken[name]:
		case sc == nil:
			d.e.at(m.at("source"), "%s: no source named %q; defined sources: %s", what, name, d.sourceNames())
		case sc.Kind != kind:
			d.e.at(m.at("source"), "%s: source %q is a %s source, but this point needs a %s source", what, name, sc.Kind, kind)
		}
		return name
	}
	for _, name := range en.from {
		if sc := d.source(name); sc != nil && sc.Kind == kind {
			return name
		}
	}
	var only []string
	for _, sc := range d.sources {
		if sc.Kind == kind {
			only = append(only, sc.Name)
		}
	}
	if len(only) == 1 {
		return only[0]
	}
	if len(only) == 0 {
		d.e.at(m.pos(), "%s: needs a %s source, but the file defines none", what, kind)
	} else {
		d.e.at(m.pos(), "%s: source is required: the file has %d %s sources (%s)", what, len(only), kind, strings.Join(only, ", "))
	}
	return ""
}

// pointUnit reads and checks the unit a source delivers.
func (d *decoder) pointUnit(m *mapReader, what string, r Role) string {
	dim := r.Dimension()
	s := m.str("unit", false, "")
	if s == "" {
		if r.Binary() {
			return "on/off"
		}
		d.e.at(m.at("unit"), "%s: unit is required: the unit the source delivers, one of %s", what, strings.Join(units.Accepted(dim), ", "))
		return ""
	}
	return d.unitFor(m.at("unit"), what, s, dim)
}

func (d *decoder) unitFor(n *yaml.Node, what, s string, dim units.Dimension) string {
	u, ok := units.LookupUnit(s, dim)
	if !ok {
		msg := "unknown unit " + strconv.Quote(s)
		if o, err := units.ParseUnit(s); err == nil {
			msg = strconv.Quote(s) + " is a " + o.Dim.String() + " unit"
		}
		d.e.at(n, "%s: unit: %s; expected a %s unit: %s", what, msg, dim, strings.Join(units.Accepted(dim), ", "))
		return ""
	}
	return u.Name
}

// bacnetRef reads "analog-input:3" (the entity's device) or a mapping
// {device, object, property, trend_log}.
func (d *decoder) bacnetRef(en *entity, v *yaml.Node, what string) *BACnetRef {
	what += " bacnet"
	rv := resolve(v)
	if rv == nil {
		return nil
	}
	ref := &BACnetRef{Property: "present-value"}
	var dev *uint32
	if rv.Kind == yaml.ScalarNode {
		typ, inst, ok := d.objectID(rv, what, rv.Value)
		if !ok {
			return nil
		}
		ref.ObjectType, ref.Instance = typ, inst
		dev = en.device
	} else {
		m := mapping(d.e, v, what, "device", "object", "property", "trend_log")
		if x, ok := m.integer("device", false, 0, maxInstance); ok {
			u := uint32(x)
			dev = &u
		} else if !m.has("device") {
			dev = en.device
		}
		ov := m.scalar("object")
		if ov == nil {
			m.missing("object", `object type and instance, e.g. "analog-input:3" or "AI:3"`)
			return nil
		}
		typ, inst, ok := d.objectID(ov, what, ov.Value)
		if !ok {
			return nil
		}
		ref.ObjectType, ref.Instance = typ, inst
		if p := m.str("property", false, ""); p != "" {
			ref.Property = d.property(m.at("property"), what, p)
		}
		if x, ok := m.integer("trend_log", false, 0, maxInstance); ok {
			u := uint32(x)
			ref.TrendLog = &u
		}
	}
	if dev == nil {
		if d.partial {
			return nil // a template: the terminal gives the device
		}
		d.e.at(v, "%s: no device instance: give device: N on the %s or in the point", what, en.kind)
		return nil
	}
	ref.Device = *dev
	return ref
}

// maxInstance is the largest BACnet object instance (22 bits; 4194303 is
// reserved as "uninitialized", ASHRAE 135 clause 12.11.x / 20.2.14).
const maxInstance = 4194302

var objectTypes = map[string]string{
	"analog-input": "analog-input", "ai": "analog-input",
	"analog-output": "analog-output", "ao": "analog-output",
	"analog-value": "analog-value", "av": "analog-value",
	"binary-input": "binary-input", "bi": "binary-input",
	"binary-output": "binary-output", "bo": "binary-output",
	"binary-value": "binary-value", "bv": "binary-value",
	"multi-state-input": "multi-state-input", "msi": "multi-state-input",
	"multi-state-output": "multi-state-output", "mso": "multi-state-output",
	"multi-state-value": "multi-state-value", "msv": "multi-state-value",
}

// objectID parses "analog-input:3" or "AI:3".
func (d *decoder) objectID(n *yaml.Node, what, s string) (string, uint32, bool) {
	typ, num, ok := strings.Cut(strings.TrimSpace(s), ":")
	t, known := objectTypes[strings.ToLower(strings.TrimSpace(typ))]
	inst, err := strconv.ParseUint(strings.TrimSpace(num), 10, 32)
	if !ok || !known || err != nil || inst > maxInstance {
		d.e.at(n, "%s: %q: expected object type and instance such as \"analog-input:3\" or \"AI:3\" (types: analog-/binary-/multi-state- input, output, value; instance 0 to %d)", what, s, maxInstance)
		return "", 0, false
	}
	return t, uint32(inst), true
}

func (d *decoder) property(n *yaml.Node, what, p string) string {
	for _, r := range p {
		if !(r >= 'a' && r <= 'z' || r == '-') {
			d.e.at(n, "%s: property %q: expected an ASHRAE 135 property name such as present-value", what, p)
			return "present-value"
		}
	}
	return p
}

func (d *decoder) influxRef(v *yaml.Node, what string) *InfluxRef {
	what += " influx"
	m := mapping(d.e, v, what, "measurement", "field", "tags")
	ref := &InfluxRef{
		Measurement: m.str("measurement", true, "the InfluxDB measurement"),
		Field:       m.str("field", true, "the InfluxDB field"),
	}
	ref.Tags = d.tags(m, what)
	return ref
}

func (d *decoder) tags(m *mapReader, what string) map[string]string {
	tv := resolve(m.val("tags"))
	if tv == nil || isNull(tv) {
		return nil
	}
	if tv.Kind != yaml.MappingNode {
		d.e.at(m.at("tags"), "%s: tags: expected a mapping of tag: value", what)
		return nil
	}
	out := map[string]string{}
	for i := 0; i+1 < len(tv.Content); i += 2 {
		k, v := resolve(tv.Content[i]), resolve(tv.Content[i+1])
		if k == nil || v == nil || k.Kind != yaml.ScalarNode || v.Kind != yaml.ScalarNode || k.Value == "" {
			d.e.at(tv.Content[i], "%s: tags: expected tag: value", what)
			continue
		}
		out[k.Value] = v.Value
	}
	return out
}
