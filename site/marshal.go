package site

import (
	"bytes"
	"fmt"
	"maps"
	"strconv"

	"gopkg.in/yaml.v3"

	"risewatch/coilmodel"
	"risewatch/units"
)

// Marshal writes s as a site file that Load reads back to the same model:
// quantities in SI with shortest round-trip numbers, points that follow a
// source's pattern as points_from, and terminals that share coil, valve
// and airflow data as templates (one line per terminal). It checks its own
// output with Parse and returns an error if that fails. Not written: coil
// fouling resistances, AHU terminal_defaults (their effect is written out).
func Marshal(s *Site) ([]byte, error) {
	w := &writer{s: s}
	root := w.mapping(false)
	w.site(root)
	w.sources(root)
	w.entities(root)
	if s.Daemon != nil {
		put(root, "daemon", s.Daemon) // kept as written; package daemon owns its meaning
	}
	var buf bytes.Buffer
	buf.WriteString("# risewatch site file written by site.Marshal\n")
	enc := yaml.NewEncoder(&buf)
	enc.SetIndent(2)
	if err := enc.Encode(root); err != nil {
		return nil, fmt.Errorf("site: marshal: %w", err)
	}
	if err := enc.Close(); err != nil {
		return nil, fmt.Errorf("site: marshal: %w", err)
	}
	name := s.File
	if name == "" {
		name = "marshalled site"
	}
	if _, err := Parse(name, buf.Bytes()); err != nil {
		return buf.Bytes(), fmt.Errorf("site: marshal: output does not load:\n%w", err)
	}
	return buf.Bytes(), nil
}

type writer struct{ s *Site }

func (w *writer) mapping(flow bool) *yaml.Node {
	n := &yaml.Node{Kind: yaml.MappingNode, Tag: "!!map"}
	if flow {
		n.Style = yaml.FlowStyle
	}
	return n
}

func put(m *yaml.Node, key string, v *yaml.Node) {
	m.Content = append(m.Content, &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!str", Value: key}, v)
}

func text(s string) *yaml.Node { return &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!str", Value: s} }

func num(x float64) *yaml.Node {
	v := strconv.FormatFloat(x, 'g', -1, 64)
	tag := "!!float"
	if _, err := strconv.ParseInt(v, 10, 64); err == nil {
		tag = "!!int" // "10", not "!!float 10"
	}
	return &yaml.Node{Kind: yaml.ScalarNode, Tag: tag, Value: v}
}

func integer(x int64) *yaml.Node {
	return &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!int", Value: strconv.FormatInt(x, 10)}
}

func boolean(b bool) *yaml.Node {
	return &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!bool", Value: strconv.FormatBool(b)}
}

// qty writes a quantity the way it was most likely entered ("180 F",
// "14 in"), reading back as exactly x (units.FormatExact).
func qty(x float64, d units.Dimension) *yaml.Node { return text(units.FormatExact(x, d)) }

func (w *writer) site(root *yaml.Node) {
	s := w.s
	m := w.mapping(false)
	put(m, "name", text(s.Name))
	zone := "UTC"
	if s.Location != nil {
		zone = s.Location.String()
	}
	put(m, "time_zone", text(zone))
	if s.ElevationM != 0 {
		put(m, "elevation", qty(s.ElevationM, units.Length))
	}
	if s.DesignOutdoorC != nil {
		put(m, "design_heating_outdoor", qty(*s.DesignOutdoorC, units.Temperature))
	}
	if s.OutdoorAir.Defined() {
		pm := w.mapping(true)
		put(pm, RoleOutdoorAir.String(), w.point(RoleOutdoorAir, s.OutdoorAir))
		put(m, "points", pm)
	}
	e := s.Energy
	if e != (EnergyPrices{}) {
		em := w.mapping(false)
		put(em, "currency", text(e.Currency))
		if e.HeatPerKWh != 0 {
			put(em, "heat_per_kwh", num(e.HeatPerKWh))
		}
		if e.CoolingPerKWh != 0 {
			put(em, "cooling_per_kwh", num(e.CoolingPerKWh))
		}
		if e.HeatingPlantEff != 0 {
			put(em, "heating_efficiency", num(e.HeatingPlantEff))
		}
		if e.CoolingPlantCOP != 0 {
			put(em, "cooling_cop", num(e.CoolingPlantCOP))
		}
		put(m, "energy", em)
	}
	put(root, "site", m)
}

func (w *writer) sources(root *yaml.Node) {
	if len(w.s.Sources) == 0 {
		return
	}
	seq := &yaml.Node{Kind: yaml.SequenceNode, Tag: "!!seq"}
	for _, sc := range w.s.Sources {
		m := w.mapping(false)
		put(m, "name", text(sc.Name))
		put(m, "kind", text(sc.Kind))
		switch {
		case sc.Trendfile != nil:
			w.trendfile(m, sc.Trendfile)
		case sc.BACnet != nil:
			w.bacnet(m, sc.BACnet)
		case sc.Influx != nil:
			c := sc.Influx
			put(m, "url", text(c.URL))
			put(m, "org", text(c.Org))
			put(m, "bucket", text(c.Bucket))
			put(m, "token_env", text(c.TokenEnv))
			if c.Page > 0 {
				put(m, "page", text(c.Page.String()))
			}
		}
		if len(sc.Points) > 0 {
			pm := w.mapping(false)
			for _, r := range allRoles {
				if p, ok := sc.Points[r]; ok {
					put(pm, r.String(), w.pattern(sc.Kind, r, p))
				}
			}
			put(m, "points", pm)
		}
		seq.Content = append(seq.Content, m)
	}
	put(root, "sources", seq)
}

func (w *writer) trendfile(m *yaml.Node, c *TrendfileConfig) {
	put(m, "path", text(c.Path))
	if c.Layout != "" {
		put(m, "layout", text(c.Layout))
	}
	switch c.Delimiter {
	case 0, ',':
	case '\t':
		put(m, "delimiter", text("tab"))
	default:
		put(m, "delimiter", text(string(c.Delimiter)))
	}
	if c.DecimalComma {
		put(m, "decimal_comma", boolean(true))
	}
	if c.SkipRows > 0 {
		put(m, "skip_rows", integer(int64(c.SkipRows)))
	}
	if c.TimeColumn != "" {
		put(m, "time_column", text(c.TimeColumn))
	}
	if c.TimeFormat != "" {
		put(m, "time_format", text(c.TimeFormat))
	}
	if c.TimeZone != nil {
		put(m, "time_zone", text(c.TimeZone.String()))
	}
	if c.Layout == "long" {
		put(m, "point_column", text(c.PointColumn))
		put(m, "value_column", text(c.ValueColumn))
	}
	if c.Watch {
		put(m, "watch", boolean(true))
		if c.Glob != "" {
			put(m, "glob", text(c.Glob))
		}
		if c.ProcessedDir != "" {
			put(m, "processed_dir", text(c.ProcessedDir))
		}
	}
}

func (w *writer) bacnet(m *yaml.Node, c *BACnetConfig) {
	if c.Bind != "" {
		put(m, "bind", text(c.Bind))
	}
	if c.BBMD != "" {
		put(m, "bbmd", text(c.BBMD))
		if c.TTL > 0 {
			put(m, "ttl", text(c.TTL.String()))
		}
	}
	for _, kv := range []struct {
		k  string
		v  interface{ String() string }
		ok bool
	}{{"poll_interval", c.PollInterval, c.PollInterval > 0}, {"trend_sweep", c.TrendSweep, c.TrendSweep > 0}, {"timeout", c.Timeout, c.Timeout > 0}} {
		if kv.ok {
			put(m, kv.k, text(kv.v.String()))
		}
	}
	put(m, "retries", integer(int64(c.Retries)))
	if len(c.Devices) > 0 {
		dm := w.mapping(false)
		for _, inst := range sortedKeys(c.Devices) {
			put(dm, strconv.FormatUint(uint64(inst), 10), text(c.Devices[inst]))
		}
		put(m, "devices", dm)
	}
}

func sortedKeys[K ~uint32 | ~string, V any](m map[K]V) []K {
	ks := make([]K, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	for i := 1; i < len(ks); i++ {
		for j := i; j > 0 && ks[j] < ks[j-1]; j-- {
			ks[j], ks[j-1] = ks[j-1], ks[j]
		}
	}
	return ks
}

func (w *writer) unit(m *yaml.Node, r Role, unit string) {
	if unit != "" && !(r.Binary() && unit == "on/off") {
		put(m, "unit", text(unit))
	}
}

func (w *writer) pattern(kind string, r Role, p PointPattern) *yaml.Node {
	m := w.mapping(true)
	switch kind {
	case "trendfile":
		put(m, "column", text(p.Column))
	case "bacnet":
		put(m, "object", text(p.ObjectType+":"+strconv.FormatUint(uint64(p.Instance), 10)))
		if p.Property != "" && p.Property != "present-value" {
			put(m, "property", text(p.Property))
		}
		if p.TrendLog != nil {
			put(m, "trend_log", integer(int64(*p.TrendLog)))
		}
	case "influx":
		put(m, "measurement", text(p.Measurement))
		put(m, "field", text(p.Field))
		if len(p.Tags) > 0 {
			put(m, "tags", w.tags(p.Tags))
		}
	}
	w.unit(m, r, p.Unit)
	return m
}

func (w *writer) tags(t map[string]string) *yaml.Node {
	m := w.mapping(true)
	for _, k := range sortedKeys(t) {
		put(m, k, text(t[k]))
	}
	return m
}

// point writes one explicit point.
func (w *writer) point(r Role, p PointRef) *yaml.Node {
	if !p.Defined() {
		return text("none")
	}
	if p.Fixed != nil {
		if r.Binary() {
			if *p.Fixed != 0 {
				return text("on")
			}
			return text("off")
		}
		return qty(*p.Fixed, r.Dimension())
	}
	m := w.mapping(true)
	put(m, "source", text(p.Source))
	switch p.Kind {
	case PointTrendColumn:
		put(m, "column", text(p.Column))
	case PointBACnet:
		b := w.mapping(true)
		if p.BACnet != nil {
			put(b, "device", integer(int64(p.BACnet.Device)))
			put(b, "object", text(p.BACnet.ObjectType+":"+strconv.FormatUint(uint64(p.BACnet.Instance), 10)))
			if p.BACnet.Property != "" && p.BACnet.Property != "present-value" {
				put(b, "property", text(p.BACnet.Property))
			}
			if p.BACnet.TrendLog != nil {
				put(b, "trend_log", integer(int64(*p.BACnet.TrendLog)))
			}
		}
		put(m, "bacnet", b)
	case PointInflux:
		im := w.mapping(true)
		if p.Influx != nil {
			put(im, "measurement", text(p.Influx.Measurement))
			put(im, "field", text(p.Influx.Field))
			if len(p.Influx.Tags) > 0 {
				put(im, "tags", w.tags(p.Influx.Tags))
			}
		}
		put(m, "influx", im)
	}
	w.unit(m, r, p.Unit)
	return m
}

// refEqual compares two points on what Load decides (not Name).
func refEqual(a, b PointRef) bool {
	if a.Kind != b.Kind || a.Source != b.Source || a.Column != b.Column || a.Unit != b.Unit || a.Binary != b.Binary {
		return false
	}
	if (a.Fixed == nil) != (b.Fixed == nil) || (a.Fixed != nil && *a.Fixed != *b.Fixed) {
		return false
	}
	if (a.BACnet == nil) != (b.BACnet == nil) || (a.Influx == nil) != (b.Influx == nil) {
		return false
	}
	if a.BACnet != nil {
		x, y := *a.BACnet, *b.BACnet
		if (x.TrendLog == nil) != (y.TrendLog == nil) || (x.TrendLog != nil && *x.TrendLog != *y.TrendLog) {
			return false
		}
		x.TrendLog, y.TrendLog = nil, nil
		if x != y {
			return false
		}
	}
	if a.Influx != nil {
		if a.Influx.Measurement != b.Influx.Measurement || a.Influx.Field != b.Influx.Field || !maps.Equal(a.Influx.Tags, b.Influx.Tags) {
			return false
		}
	}
	return true
}

// pointsFor writes an entity's points as points_from plus the exceptions.
func (w *writer) pointsFor(m *yaml.Node, id string, roles []Role, get func(Role) *PointRef, vars map[string]string, device *uint32) {
	vars = maps.Clone(vars)
	vars["id"] = id
	var from []string
	for _, sc := range w.s.Sources {
		for _, r := range roles {
			p := get(r)
			pat, ok := sc.Points[r]
			if !ok || !p.Defined() || p.Source != sc.Name {
				continue
			}
			if want, msg := pat.expand(&w.s.Sources[indexOfSource(w.s, sc.Name)], r, vars, device); msg == "" && refEqual(want, *p) {
				from = append(from, sc.Name)
				break
			}
		}
	}
	pm := w.mapping(true)
	for _, r := range roles {
		p := *get(r)
		var got PointRef
		for _, name := range from {
			sc := &w.s.Sources[indexOfSource(w.s, name)]
			if pat, ok := sc.Points[r]; ok {
				got, _ = pat.expand(sc, r, vars, device)
				break
			}
		}
		if refEqual(got, p) || (!got.Defined() && !p.Defined()) {
			continue
		}
		put(pm, r.String(), w.point(r, p))
	}
	fl := &yaml.Node{Kind: yaml.SequenceNode, Tag: "!!seq", Style: yaml.FlowStyle}
	for _, f := range from {
		fl.Content = append(fl.Content, text(f))
	}
	if len(fl.Content) > 0 {
		put(m, "points_from", fl) // Marshal writes no top-level points_from, so none is inherited
	}
	if len(pm.Content) > 0 {
		put(m, "points", pm)
	}
}

func indexOfSource(s *Site, name string) int {
	for i := range s.Sources {
		if s.Sources[i].Name == name {
			return i
		}
	}
	return -1
}

// coilNode writes a terminal's coil: the preset form when the coil is the
// preset's geometry, else the full geometry; and the rated point.
func (w *writer) coilNode(t *Terminal) *yaml.Node {
	m := w.mapping(true)
	base := t.Coil
	if t.Rated != nil {
		base.UAMultiplier = 0
	}
	plain := base
	plain.UAMultiplier = 0
	preset := false
	if p := t.CoilPreset; p != nil {
		if pc, err := coilmodel.Preset(p.InletIn, p.Rows, p.FPI, p.Oversized); err == nil && pc == plain {
			preset = true
			put(m, "inlet", text(strconv.FormatFloat(p.InletIn, 'g', -1, 64)+" in"))
			put(m, "rows", integer(int64(p.Rows)))
			if p.FPI != 0 {
				put(m, "fpi", num(p.FPI))
			}
			if p.Oversized {
				put(m, "oversized", boolean(true))
			}
		}
	}
	if !preset {
		if t.InletIn > 0 {
			put(m, "inlet", text(strconv.FormatFloat(t.InletIn, 'g', -1, 64)+" in"))
		}
		put(m, "geometry", w.geometry(base))
		if t.Oversized {
			put(m, "oversized", boolean(true))
		}
	}
	if t.Rated != nil {
		r := t.Rated
		rm := w.mapping(true)
		put(rm, "capacity", qty(r.CapacityW, units.Power))
		put(rm, "airflow", qty(r.AirflowM3s, units.VolumeFlow))
		put(rm, "entering_air", qty(r.EnteringAirC, units.Temperature))
		put(rm, "water_flow", qty(r.WaterFlowM3s, units.VolumeFlow))
		put(rm, "entering_water", qty(r.EnteringWaterC, units.Temperature))
		put(m, "rated", rm)
	} else if base.UAMultiplier != 0 && base.UAMultiplier != 1 {
		put(m, "ua_multiplier", num(base.UAMultiplier))
	}
	return m
}

func (w *writer) geometry(c coilmodel.Coil) *yaml.Node {
	g := w.mapping(true)
	put(g, "face_width", qty(c.FaceWidthM, units.Length))
	put(g, "face_height", qty(c.FaceHeightM, units.Length))
	put(g, "rows", integer(int64(c.Rows)))
	put(g, "circuits", integer(int64(c.Circuits)))
	if c.TubesPerRow > 0 {
		put(g, "tubes_per_row", integer(int64(c.TubesPerRow)))
	}
	tm := w.mapping(true)
	put(tm, "od", qty(c.Tube.OuterDiaM, units.Length))
	put(tm, "wall", qty(c.Tube.WallM, units.Length))
	if c.Tube.ConductivityWmK != 0 {
		put(tm, "conductivity", qty(c.Tube.ConductivityWmK, units.Conductivity))
	}
	put(g, "tube", tm)
	fm := w.mapping(true)
	put(fm, "fpi", qty(c.Fin.PerM, units.FinDensity))
	put(fm, "thickness", qty(c.Fin.ThicknessM, units.Length))
	if c.Fin.Material == "copper" || c.Fin.Material == "aluminum" {
		put(fm, "material", text(c.Fin.Material))
	}
	if c.Fin.ConductivityWmK != 0 {
		put(fm, "conductivity", qty(c.Fin.ConductivityWmK, units.Conductivity))
	}
	put(g, "fin", fm)
	put(g, "transverse_pitch", qty(c.TransversePitchM, units.Length))
	put(g, "longitudinal_pitch", qty(c.LongitudinalPitchM, units.Length))
	put(g, "layout", text(c.Layout.String()))
	if c.ReturnBendK != 0 {
		put(g, "return_bend_k", num(c.ReturnBendK))
	}
	return g
}
