package site

import (
	"math"
	"strings"

	"gopkg.in/yaml.v3"

	"risewatch/coilmodel"
	"risewatch/units"
)

// CoilPreset is the short coil form: common-practice geometry for a VAV box
// by inlet size (coilmodel.Preset).
type CoilPreset struct {
	InletIn   float64
	Rows      int
	FPI       float64 // 0 → coilmodel's default (10)
	Oversized bool
}

var coilKeys = []string{"inlet", "rows", "fpi", "oversized", "geometry", "rated", "ua_multiplier"}

func (d *decoder) decodeCoil(n *yaml.Node, what string, t *Terminal) {
	w := what + " coil"
	m := mapping(d.e, n, w, coilKeys...)
	if m.node == nil {
		return
	}
	full := !d.partial
	if v, ok := m.quantity("inlet", units.Length, false, "in"); ok {
		t.InletIn = math.Round(units.MToIn(v)*1e6) / 1e6 // 6 in stays 6, not 5.999999999999999
	}
	var c coilmodel.Coil
	haveGeom := false
	if m.has("geometry") {
		for _, k := range []string{"rows", "fpi"} {
			if m.has(k) {
				d.e.at(m.at(k), "%s: %s belongs to the preset form; with geometry give rows and fins inside geometry", w, k)
			}
		}
		c, haveGeom = d.decodeGeometry(m.val("geometry"), w+" geometry")
		// With geometry, oversized only says the face is larger than the
		// inlet's usual one (labels; readiness does not offer it again).
		if b, ok := m.boolean("oversized"); ok {
			t.Oversized = b
		}
	} else {
		p := CoilPreset{InletIn: t.InletIn}
		rows, okR := m.integer("rows", full, 1, coilmodel.MaxRows)
		p.Rows = int(rows)
		if v, ok := m.quantity("fpi", units.FinDensity, false, "fpi"); ok {
			p.FPI = units.PerMToFPI(v)
		}
		if b, ok := m.boolean("oversized"); ok {
			p.Oversized = b
		}
		if !m.has("inlet") && full {
			m.missing("inlet", "the box inlet size, e.g. 8 in, for the preset; or give geometry")
		}
		if full && okR && m.has("inlet") && t.InletIn > 0 {
			pc, err := coilmodel.Preset(p.InletIn, p.Rows, p.FPI, p.Oversized)
			if err != nil {
				d.e.at(m.at("inlet"), "%s: preset: %v", w, err)
			} else {
				c, haveGeom = pc, true
				t.CoilPreset = &p
				t.Oversized = p.Oversized
			}
		}
	}
	if m.has("ua_multiplier") && m.has("rated") {
		d.e.at(m.at("ua_multiplier"), "%s: give ua_multiplier or rated, not both: the rated point sets the multiplier", w)
	}
	if v, ok := m.number("ua_multiplier", false, 0.01, 100); ok {
		c.UAMultiplier = v
	}
	if m.has("rated") {
		rp, ok := d.decodeRated(m.val("rated"), w+" rated")
		if ok {
			t.Rated = &rp
			if haveGeom {
				c = d.calibrate(m.at("rated"), w, c, rp)
			}
		}
	}
	if haveGeom {
		t.Coil = c
	}
}

// calibrate fits the coil's UA multiplier to the rated point (cached: a
// campus repeats a few coil types many times).
func (d *decoder) calibrate(n *yaml.Node, what string, c coilmodel.Coil, rp coilmodel.RatedPoint) coilmodel.Coil {
	c.UAMultiplier = 0
	key := calibKey{c, rp}
	res, ok := d.calib[key]
	if !ok {
		out, _, err := coilmodel.Calibrate(c, rp)
		res = calibResult{out, err}
		d.calib[key] = res
	}
	if res.err != nil {
		d.e.at(n, "%s: the coil cannot match this rated point: %v", what, res.err)
		return c
	}
	return res.c
}

func (d *decoder) decodeRated(n *yaml.Node, w string) (coilmodel.RatedPoint, bool) {
	m := mapping(d.e, n, w, "capacity", "airflow", "entering_air", "water_flow", "entering_water")
	if m.node == nil {
		return coilmodel.RatedPoint{}, false
	}
	var rp coilmodel.RatedPoint
	var ok [5]bool
	rp.CapacityW, ok[0] = m.quantity("capacity", units.Power, true, "")
	rp.AirflowM3s, ok[1] = m.quantity("airflow", units.VolumeFlow, true, "")
	rp.EnteringAirC, ok[2] = m.quantity("entering_air", units.Temperature, true, "")
	rp.WaterFlowM3s, ok[3] = m.quantity("water_flow", units.VolumeFlow, true, "")
	rp.EnteringWaterC, ok[4] = m.quantity("entering_water", units.Temperature, true, "")
	if !(ok[0] && ok[1] && ok[2] && ok[3] && ok[4]) {
		return rp, false
	}
	if err := rp.Validate(); err != nil {
		d.e.at(m.pos(), "%s: %v", w, err)
		return rp, false
	}
	return rp, true
}

func (d *decoder) decodeGeometry(n *yaml.Node, w string) (coilmodel.Coil, bool) {
	m := mapping(d.e, n, w, "face_width", "face_height", "rows", "circuits", "tubes_per_row", "tube", "fin", "transverse_pitch", "longitudinal_pitch", "layout", "return_bend_k")
	if m.node == nil {
		return coilmodel.Coil{}, false
	}
	req := !d.partial
	reported := d.e.n
	var c coilmodel.Coil
	c.FaceWidthM, _ = m.quantity("face_width", units.Length, req, "")
	c.FaceHeightM, _ = m.quantity("face_height", units.Length, req, "")
	rows, _ := m.integer("rows", req, 1, coilmodel.MaxRows)
	c.Rows = int(rows)
	circ, _ := m.integer("circuits", req, 1, 500)
	c.Circuits = int(circ)
	tpr, _ := m.integer("tubes_per_row", false, 1, 500)
	c.TubesPerRow = int(tpr)
	c.TransversePitchM, _ = m.quantity("transverse_pitch", units.Length, req, "")
	c.LongitudinalPitchM, _ = m.quantity("longitudinal_pitch", units.Length, req, "")
	if m.oneOf("layout", "staggered", "staggered", "inline") == "inline" {
		c.Layout = coilmodel.Inline
	}
	c.ReturnBendK, _ = m.number("return_bend_k", false, 0, 50)

	tm := mapping(d.e, m.val("tube"), w+" tube", "od", "wall", "material", "conductivity")
	if tm.node == nil && req {
		m.missing("tube", "tube: {od: 0.5 in, wall: 0.016 in}")
	}
	c.Tube.OuterDiaM, _ = tm.quantity("od", units.Length, req && tm.node != nil, "")
	c.Tube.WallM, _ = tm.quantity("wall", units.Length, req && tm.node != nil, "")
	c.Tube.ConductivityWmK = d.material(tm, w+" tube", "copper")

	fm := mapping(d.e, m.val("fin"), w+" fin", "fpi", "thickness", "material", "conductivity")
	if fm.node == nil && req {
		m.missing("fin", "fin: {fpi: 10, thickness: 0.0045 in}")
	}
	c.Fin.PerM, _ = fm.quantity("fpi", units.FinDensity, req && fm.node != nil, "fpi")
	c.Fin.ThicknessM, _ = fm.quantity("thickness", units.Length, req && fm.node != nil, "")
	c.Fin.Material = fm.oneOf("material", "aluminum", "aluminum", "copper")
	c.Fin.ConductivityWmK = d.material(fm, w+" fin", c.Fin.Material)
	if d.partial {
		return c, false
	}
	if d.e.n != reported {
		// A field is already reported (here or, deduplicated, in the
		// template): checking the whole geometry would only add an error
		// about the zero left in its place ("rows 0").
		return c, false
	}
	if err := c.Validate(); err != nil {
		for _, line := range strings.Split(err.Error(), "\n") {
			d.e.at(m.pos(), "%s: %s", w, line)
		}
		return c, false
	}
	return c, true
}

// material returns the conductivity given, or the material's default.
func (d *decoder) material(m *mapReader, w, def string) float64 {
	if v, ok := m.quantity("conductivity", units.Conductivity, false, "W/(m.K)"); ok {
		return v
	}
	mat := def
	if m.has("material") && strings.HasSuffix(w, "tube") {
		mat = m.oneOf("material", def, "copper", "cupronickel")
	}
	switch mat {
	case "aluminum":
		return coilmodel.DefaultAluminiumFinConductivity
	case "cupronickel":
		return 50 // 90/10 Cu-Ni, about 50 W/(m·K) (common handbook value, from memory)
	}
	if strings.HasSuffix(w, "fin") {
		return coilmodel.DefaultCopperFinConductivity
	}
	return coilmodel.DefaultTubeConductivity
}

func (d *decoder) decodeValve(tm *mapReader, what string, t *Terminal) {
	full := !d.partial
	w := what + " valve"
	if !tm.has("valve") {
		if full {
			d.e.at(tm.pos(), "%s: valve is required: valve: {cv: 1.0} (the Cv from the valve schedule; kv also accepted)", what)
		}
		return
	}
	m := mapping(d.e, tm.val("valve"), w, "cv", "kv", "characteristic", "rangeability", "leakage")
	if m.node == nil {
		return
	}
	v := &t.Valve
	switch {
	case m.has("cv") && m.has("kv"):
		d.e.at(m.at("kv"), "%s: give cv or kv, not both", w)
	case m.has("kv"):
		if kv, ok := m.number("kv", false, 1e-3, 1e4); ok {
			v.Cv = units.KvToCv(kv)
		}
	case m.has("cv"):
		v.Cv, _ = m.number("cv", false, 1e-3, 1e4)
	case full:
		m.missing("cv", "the valve's flow coefficient Cv (gpm at 1 psi), or kv (m³/h at 1 bar)")
	}
	if m.oneOf("characteristic", "equal-percentage", "equal-percentage", "linear") == "linear" {
		v.Characteristic = coilmodel.Linear
	}
	v.Rangeability, _ = m.number("rangeability", false, 2, 1e4)
	if f, ok := m.quantity("leakage", units.Fraction, false, ""); ok {
		if f < 0 || f > 0.2 {
			d.e.at(m.at("leakage"), "%s: leakage %g %% of full-open flow is outside 0 to 20 %%", w, f*100)
		} else {
			v.LeakageFrac = f
		}
	}
}

func (d *decoder) decodeAirflow(tm *mapReader, what string, t *Terminal) {
	full := !d.partial
	w := what + " airflow"
	if !tm.has("airflow") {
		if full {
			d.e.at(tm.pos(), "%s: airflow is required: airflow: {min: 150 cfm, cooling_max: 600 cfm, heating_max: 300 cfm}", what)
		}
		return
	}
	m := mapping(d.e, tm.val("airflow"), w, "min", "cooling_max", "heating_max")
	if m.node == nil {
		return
	}
	get := func(k string) (float64, bool) {
		v, ok := m.quantity(k, units.VolumeFlow, full, "")
		if ok && (v < 0 || v > 20) {
			d.e.at(m.at(k), "%s: %s %s is impossible for a terminal unit (0 to 20 m³/s)", w, k, units.FormatAirflow(v, true))
			return 0, false
		}
		return v, ok
	}
	var okMin, okC, okH bool
	t.MinAirflowM3s, okMin = get("min")
	t.MaxAirflowM3s, okC = get("cooling_max")
	t.HeatingAirflowM3s, okH = get("heating_max")
	for _, k := range []struct {
		ok  bool
		key string
		v   float64
	}{{okC, "cooling_max", t.MaxAirflowM3s}, {okH, "heating_max", t.HeatingAirflowM3s}} {
		if k.ok && k.v <= 0 {
			d.e.at(m.at(k.key), "%s: %s must be above zero", w, k.key)
		} else if k.ok && okMin && t.MinAirflowM3s > k.v {
			at := m.at("min") // blame the later line: the terminal's own value, not its template's
			if n := m.at(k.key); n != nil && at != nil && n.Line > at.Line {
				at = n
			}
			d.e.at(at, "%s: min (%s) exceeds %s (%s)", w, units.FormatAirflow(t.MinAirflowM3s, true), k.key, units.FormatAirflow(k.v, true))
		}
	}
}
