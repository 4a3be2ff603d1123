package site

import (
	"maps"
	"regexp"
	"strings"

	"gopkg.in/yaml.v3"
)

// PointPattern says how a source names one role's point for any entity, so
// that a terminal that lists the source in points_from needs no per-point
// lines. Text fields may hold placeholders: {id} (the entity's ID), {ahu},
// {loop}, {zone}, {building} (a terminal's; for an AHU or loop {ahu} or
// {loop} is its own ID).
//
//	trendfile: column: "{id}.DAT"           unit: degF
//	bacnet:    object: "analog-input:2"     trend_log: 12 (in the entity's device)
//	influx:    measurement: vav  field: dat  tags: {terminal: "{id}"}
type PointPattern struct {
	Column      string // trendfile
	ObjectType  string // bacnet
	Instance    uint32
	Property    string
	TrendLog    *uint32
	Measurement string // influx
	Field       string
	Tags        map[string]string
	Unit        string // canonical unit name (units.Unit.Name)
}

var placeholder = regexp.MustCompile(`\{[^{}]*\}`)

var placeholderNames = map[string]bool{"{id}": true, "{ahu}": true, "{loop}": true, "{zone}": true, "{building}": true}

// expandText fills placeholders; it returns the name of a placeholder whose
// value is empty.
func expandText(s string, vars map[string]string) (string, string) {
	var empty string
	out := placeholder.ReplaceAllStringFunc(s, func(ph string) string {
		if !placeholderNames[ph] {
			return ph // reported where the pattern is defined
		}
		v := vars[strings.Trim(ph, "{}")]
		if v == "" && empty == "" {
			empty = ph
		}
		return v
	})
	return out, empty
}

// expand makes the point for one entity; msg is non-empty when it cannot.
func (p PointPattern) expand(sc *SourceConfig, r Role, vars map[string]string, device *uint32) (PointRef, string) {
	ref := PointRef{Source: sc.Name, Unit: p.Unit, Binary: r.Binary()}
	var empty string
	fill := func(s string) string {
		out, e := expandText(s, vars)
		if e != "" && empty == "" {
			empty = e
		}
		return out
	}
	switch sc.Kind {
	case "trendfile":
		ref.Kind = PointTrendColumn
		ref.Column = fill(p.Column)
	case "bacnet":
		if device == nil {
			return PointRef{}, "needs a BACnet device instance: give device: N"
		}
		ref.Kind = PointBACnet
		ref.BACnet = &BACnetRef{Device: *device, ObjectType: p.ObjectType, Instance: p.Instance, Property: p.Property, TrendLog: p.TrendLog}
		if p.TrendLog != nil {
			tl := *p.TrendLog
			ref.BACnet.TrendLog = &tl
		}
	case "influx":
		ref.Kind = PointInflux
		ref.Influx = &InfluxRef{Measurement: fill(p.Measurement), Field: fill(p.Field)}
		if len(p.Tags) > 0 {
			ref.Influx.Tags = map[string]string{}
			for k, v := range p.Tags {
				ref.Influx.Tags[k] = fill(v)
			}
		}
	default:
		return PointRef{}, "source kind " + sc.Kind + " has no point patterns"
	}
	if empty != "" {
		return PointRef{}, "pattern uses " + empty + ", which is empty here"
	}
	return ref, ""
}

// Expand makes role r's point for an entity from this pattern, as Load
// does for points_from. vars holds placeholder values without braces
// ("id", "ahu", "loop", "zone", "building"). It reports false when the
// pattern cannot be filled (an empty placeholder, or a BACnet pattern
// without device).
func (p PointPattern) Expand(sc *SourceConfig, r Role, entityID string, vars map[string]string, device *uint32) (PointRef, bool) {
	v := maps.Clone(vars)
	if v == nil {
		v = map[string]string{}
	}
	v["id"] = entityID
	ref, msg := p.expand(sc, r, v, device)
	if msg != "" {
		return PointRef{}, false
	}
	ref.Name = PointName(entityID, r)
	return ref, true
}

// decodePatterns reads a source's `points:` mapping of role: pattern.
func (d *decoder) decodePatterns(sc *SourceConfig, v *yaml.Node) map[Role]PointPattern {
	what := "source " + sc.Name + " points"
	m := mapping(d.e, v, what, roleKeys(allRoles)...)
	if m.node == nil {
		return nil
	}
	out := map[Role]PointPattern{}
	for _, k := range m.ord {
		r := roleByKey(k)
		w := what + " " + k
		var pm *mapReader
		var p PointPattern
		switch sc.Kind {
		case "trendfile":
			pm = mapping(d.e, m.val(k), w, "column", "unit")
			p.Column = pm.str("column", true, `the column or long-layout point name, e.g. "{id}.DAT"`)
			d.checkPlaceholders(pm, w, "column", p.Column)
		case "bacnet":
			pm = mapping(d.e, m.val(k), w, "object", "property", "trend_log", "unit")
			ov := pm.scalar("object")
			if ov == nil {
				pm.missing("object", `object type and instance in each device, e.g. "analog-input:2"`)
			} else if typ, inst, ok := d.objectID(ov, w, ov.Value); ok {
				p.ObjectType, p.Instance = typ, inst
			}
			p.Property = "present-value"
			if s := pm.str("property", false, ""); s != "" {
				p.Property = d.property(pm.at("property"), w, s)
			}
			if x, ok := pm.integer("trend_log", false, 0, maxInstance); ok {
				u := uint32(x)
				p.TrendLog = &u
			}
		case "influx":
			pm = mapping(d.e, m.val(k), w, "measurement", "field", "tags", "unit")
			p.Measurement = pm.str("measurement", true, "the InfluxDB measurement")
			p.Field = pm.str("field", true, "the InfluxDB field")
			d.checkPlaceholders(pm, w, "measurement", p.Measurement)
			d.checkPlaceholders(pm, w, "field", p.Field)
			p.Tags = d.tags(pm, w)
			for _, tv := range p.Tags {
				d.checkPlaceholders(pm, w, "tags", tv)
			}
		default:
			continue
		}
		if pm.node == nil {
			continue
		}
		p.Unit = d.pointUnit(pm, w, r)
		out[r] = p
	}
	return out
}

func (d *decoder) checkPlaceholders(m *mapReader, what, key, s string) {
	for _, ph := range placeholder.FindAllString(s, -1) {
		if !placeholderNames[ph] {
			d.e.at(m.at(key), "%s: %s: unknown placeholder %s; expected {id}, {ahu}, {loop}, {zone} or {building}", what, key, ph)
		}
	}
}
