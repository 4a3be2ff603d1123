package site

import (
	"fmt"
	"os"
	"slices"
	"strings"
	"time"
	_ "time/tzdata" // time zones work on hosts without /usr/share/zoneinfo

	"gopkg.in/yaml.v3"

	"risewatch/coilmodel"
	"risewatch/units"
)

// maxFileBytes bounds what Parse reads; a 2,000-terminal campus in one-line
// form is well under 1 MB.
const maxFileBytes = 64 << 20

// Load reads and checks a site file. On any problem it returns an
// ErrorList with every error found (file:line:col: message).
func Load(path string) (*Site, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("site: %w", err)
	}
	return Parse(path, data)
}

// Parse decodes a site file held in memory; name is used in messages. It
// never panics. When the error is non-nil it is an ErrorList; the Site
// returned beside it holds what could be decoded and must not be run.
func Parse(name string, data []byte) (*Site, error) {
	e := newErrs(name)
	s := &Site{File: name, Location: time.UTC}
	if len(data) > maxFileBytes {
		e.atPos(1, 1, fmt.Sprintf("file is %d bytes; a site file may be at most %d", len(data), maxFileBytes))
		return s, e.err()
	}
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		e.syntax(err, data)
		return s, e.err()
	}
	root := resolve(&doc)
	if root == nil || isNull(root) {
		e.atPos(1, 1, "the file is empty; expected a site description starting with site:")
		return s, e.err()
	}
	d := &decoder{e: e, site: s, calib: map[calibKey]calibResult{}, templates: map[string]*yaml.Node{}, ahuDefaults: map[string]*yaml.Node{}, ids: map[string]idUse{}, broken: map[string]bool{}}
	d.decode(root)
	d.index()
	return s, e.err()
}

// decoder holds the state of one Parse call (no package state).
type decoder struct {
	e           *errs
	site        *Site
	sources     []SourceConfig
	partial     bool // decoding a template or defaults: skip required checks
	calib       map[calibKey]calibResult
	templates   map[string]*yaml.Node
	ahuDefaults map[string]*yaml.Node
	siteDefault *yaml.Node
	siteFrom    []string
	siteFromN   []*yaml.Node
	ids         map[string]idUse
	broken      map[string]bool // sources that failed to decode
}

type idUse struct {
	kind string
	line int
}

var topKeys = []string{"site", "sources", "points_from", "terminal_defaults", "templates", "loops", "ahus", "terminals", "daemon"}

func (d *decoder) decode(root *yaml.Node) {
	m := mapping(d.e, root, "the file", topKeys...)
	if m.node == nil {
		return
	}
	if !m.has("site") {
		d.e.at(m.pos(), "site: is required (name and time_zone)")
	}
	d.decodeSite(m.val("site"))
	d.decodeSources(m.val("sources"), d.site.Location)
	d.site.Sources = d.sources
	d.siteFrom, d.siteFromN = m.strList("points_from")
	d.checkFrom(&entity{kind: "top-level", id: "points_from", from: d.siteFrom, fromNode: d.siteFromN}, true)
	d.decodeSitePoints(m.val("site"))
	d.decodeLoops(m.val("loops"))
	d.decodeAHUs(m.val("ahus"))
	d.decodeTemplates(m.val("terminal_defaults"), m.val("templates"))
	d.decodeTerminals(m.val("terminals"))
	if dn := m.val("daemon"); dn != nil && !isNull(resolve(dn)) {
		d.site.Daemon = dn // decoded by package daemon
	}
	if len(d.site.Terminals) == 0 && m.node != nil && !m.has("terminals") {
		d.e.at(m.pos(), "terminals: is required: at least one terminal unit")
	}
}

func (d *decoder) decodeSite(n *yaml.Node) {
	m := mapping(d.e, n, "site", "name", "time_zone", "elevation", "energy", "design_heating_outdoor", "points")
	if m.node == nil {
		return
	}
	s := d.site
	s.Name = m.str("name", true, "the site's name")
	if z := m.str("time_zone", true, "an IANA zone such as America/Chicago"); z != "" {
		if loc, err := time.LoadLocation(z); err != nil || z == "Local" {
			d.e.at(m.at("time_zone"), "site: time_zone %q: expected an IANA zone name such as America/Chicago or Europe/Berlin", z)
		} else {
			s.Location = loc
		}
	}
	if v, ok := m.quantity("elevation", units.Length, false, ""); ok {
		// Dead Sea shore to the highest inhabited towns (about 5,100 m).
		if v < -450 || v > 5500 {
			d.e.at(m.at("elevation"), "site: elevation %.0f m is impossible for a building; expected -450 m to 5500 m", v)
		} else {
			s.ElevationM = v
		}
	}
	if v, ok := m.quantity("design_heating_outdoor", units.Temperature, false, ""); ok {
		// Coldest published 99.6 % design dry bulbs are near -50 °C; above
		// 20 °C no heating design is meaningful.
		if v < -60 || v > 20 {
			d.e.at(m.at("design_heating_outdoor"), "site: design_heating_outdoor %.1f °C is outside -60 to 20 °C (-76 to 68 °F)", v)
		} else {
			s.DesignOutdoorC = &v
		}
	}
	em := mapping(d.e, m.val("energy"), "site energy", "currency", "heat_per_kwh", "heat_per_therm", "cooling_per_kwh", "heating_efficiency", "cooling_cop")
	if em.node == nil {
		return
	}
	en := &s.Energy
	en.Currency = em.str("currency", true, `an ISO 4217 code such as "USD" or "EUR"`)
	if em.has("heat_per_kwh") && em.has("heat_per_therm") {
		d.e.at(em.at("heat_per_therm"), "site energy: give heat_per_kwh or heat_per_therm, not both")
	}
	if v, ok := em.number("heat_per_kwh", false, 0, 10); ok {
		en.HeatPerKWh = v
	}
	if v, ok := em.number("heat_per_therm", false, 0, 100); ok {
		en.HeatPerKWh = v / units.KWhPerTherm // 1 therm = 100,000 Btu_IT
	}
	if v, ok := em.number("cooling_per_kwh", false, 0, 10); ok {
		en.CoolingPerKWh = v
	}
	if v, ok := em.number("heating_efficiency", false, 0.3, 6); ok {
		en.HeatingPlantEff = v
	}
	if v, ok := em.number("cooling_cop", false, 0.5, 15); ok {
		en.CoolingPlantCOP = v
	}
}

// decodeSitePoints decodes the site's own points (outdoor air) once the
// sources and the top-level points_from are known. A source pattern for
// outdoor_air gives the point when the site lists no explicit one.
func (d *decoder) decodeSitePoints(n *yaml.Node) {
	var pn *yaml.Node
	if n != nil {
		if rn := resolve(n); rn != nil && rn.Kind == yaml.MappingNode {
			for i := 0; i+1 < len(rn.Content); i += 2 {
				if rn.Content[i].Value == "points" {
					pn = rn.Content[i+1]
				}
			}
		}
	}
	en := &entity{kind: "site", id: SiteEntity, node: n, from: d.siteFrom, fromNode: d.siteFromN,
		vars: map[string]string{"id": SiteEntity}}
	d.checkFrom(en, false)
	d.decodePoints(en, pn, siteRoles, d.site.Ref)
}

// claimID records an entity ID; IDs are unique across loops, AHUs and
// terminals because point names are built from them.
func (d *decoder) claimID(n *yaml.Node, kind, id string) bool {
	if !validID(id) {
		d.e.at(n, "%s id %q: must be %s", kind, id, idRule)
		return false
	}
	if prev, dup := d.ids[id]; dup {
		if prev.kind == kind {
			d.e.at(n, "duplicate %s id %q (first at line %d)", kind, id, prev.line)
		} else {
			d.e.at(n, "%s id %q is already used by the %s at line %d; IDs must be unique across loops, AHUs and terminals", kind, id, prev.kind, prev.line)
		}
		return false
	}
	d.ids[id] = idUse{kind, n.Line}
	return true
}

func (d *decoder) entityHeader(m *mapReader, kind string) *entity {
	en := &entity{kind: kind, node: m.node}
	en.id = m.str("id", true, "a unique name")
	if en.id != "" && !d.claimID(m.at("id"), kind, en.id) {
		return nil
	}
	if x, ok := m.integer("device", false, 0, maxInstance); ok {
		u := uint32(x)
		en.device = &u
	}
	if m.has("points_from") {
		en.from, en.fromNode = m.strList("points_from")
	} else {
		en.from, en.fromNode = d.siteFrom, d.siteFromN
	}
	d.checkFrom(en, m.has("points_from"))
	en.vars = map[string]string{"id": en.id}
	return en
}

func (d *decoder) decodeLoops(n *yaml.Node) {
	for _, item := range seqItems(d.e, n, "loops") {
		m := mapping(d.e, item, "loop", "id", "device", "points_from", "points", "design_supply", "design_delta_t", "branch_dp")
		if m.node == nil {
			continue
		}
		en := d.entityHeader(m, "loop")
		if en == nil || en.id == "" {
			continue
		}
		m.what = en.what()
		en.vars["loop"] = en.id
		l := Loop{ID: en.id, Device: en.device, Line: m.node.Line}
		d.decodePoints(en, m.val("points"), loopRoles, l.Ref)
		if v, ok := m.quantity("design_supply", units.Temperature, false, ""); ok {
			// From low-temperature heat-pump loops to medium-temperature hot water.
			if v < 25 || v > 130 {
				d.e.at(m.at("design_supply"), "loop %s: design_supply %.1f °C is outside 25 to 130 °C (77 to 266 °F) for a heating-water loop", en.id, v)
			} else {
				l.DesignSupplyC = v
			}
		} else if !l.SupplyTemp.Defined() && !m.has("design_supply") {
			d.e.at(m.pos(), "loop %s: give design_supply (e.g. 180 F) or a supply_temp point", en.id)
		}
		// 20 °F design ΔT is the usual reheat design figure (common practice).
		l.DesignDeltaK = units.DeltaFToK(20)
		if v, ok := m.quantity("design_delta_t", units.TempDiff, false, ""); ok {
			if v < 1 || v > 60 {
				d.e.at(m.at("design_delta_t"), "loop %s: design_delta_t %.1f K is outside 1 to 60 K", en.id, v)
			} else {
				l.DesignDeltaK = v
			}
		}
		if v, ok := m.quantity("branch_dp", units.Pressure, true, ""); ok {
			if v <= 0 || v > 1e6 {
				d.e.at(m.at("branch_dp"), "loop %s: branch_dp must be above 0 and at most 1000 kPa (145 psi)", en.id)
			} else {
				l.BranchDPPa = v
			}
		}
		d.site.Loops = append(d.site.Loops, l)
	}
}

func (d *decoder) decodeAHUs(n *yaml.Node) {
	for _, item := range seqItems(d.e, n, "ahus") {
		m := mapping(d.e, item, "AHU", "id", "device", "points_from", "points", "duct_gain", "terminal_defaults")
		if m.node == nil {
			continue
		}
		en := d.entityHeader(m, "AHU")
		if en == nil || en.id == "" {
			continue
		}
		m.what = en.what()
		en.vars["ahu"] = en.id
		a := AHU{ID: en.id, Device: en.device, Line: m.node.Line}
		given := d.decodePoints(en, m.val("points"), ahuRoles, a.Ref)
		if !a.SupplyAir.Defined() && !en.brokenFrom && !given[RoleSupplyAir] {
			d.e.at(m.pos(), "AHU %s: required point supply_air (supply air temperature) is missing; give points: supply_air: ... or list a source with a supply_air pattern in points_from", en.id)
		}
		if v, ok := m.quantity("duct_gain", units.TempDiff, false, ""); ok {
			if v < -5 || v > 10 {
				d.e.at(m.at("duct_gain"), "AHU %s: duct_gain %.1f K is outside -5 to 10 K", en.id, v)
			} else {
				a.DuctGainK = v
			}
		}
		if m.has("terminal_defaults") {
			d.ahuDefaults[en.id] = m.val("terminal_defaults")
		}
		d.site.AHUs = append(d.site.AHUs, a)
	}
}

// index fills the index maps.
func (d *decoder) index() {
	s := d.site
	if cap(s.Terminals) > len(s.Terminals) {
		// Appending left up to a quarter of the array unused (a terminal
		// is about a kilobyte; the site is kept for the daemon's life).
		s.Terminals = slices.Clone(s.Terminals)
	}
	s.LoopIndex = make(map[string]int, len(s.Loops))
	for i, l := range s.Loops {
		s.LoopIndex[l.ID] = i
	}
	s.AHUIndex = make(map[string]int, len(s.AHUs))
	for i, a := range s.AHUs {
		s.AHUIndex[a.ID] = i
	}
	s.TerminalIndex = make(map[string]int, len(s.Terminals))
	for i, t := range s.Terminals {
		s.TerminalIndex[t.ID] = i
	}
}

// Index fills LoopIndex, AHUIndex and TerminalIndex for a Site built in
// code (Load fills them itself).
func (s *Site) Index() {
	(&decoder{site: s}).index()
}

type calibKey struct {
	c coilmodel.Coil
	r coilmodel.RatedPoint
}

type calibResult struct {
	c   coilmodel.Coil
	err error
}

func joinKeys(ks []string) string { return strings.Join(ks, ", ") }
