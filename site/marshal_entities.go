package site

import (
	"bytes"
	"strconv"

	"gopkg.in/yaml.v3"

	"risewatch/units"
)

func (w *writer) entities(root *yaml.Node) {
	s := w.s
	if len(s.Loops) > 0 {
		seq := &yaml.Node{Kind: yaml.SequenceNode, Tag: "!!seq"}
		for i := range s.Loops {
			l := &s.Loops[i]
			m := w.mapping(false)
			put(m, "id", text(l.ID))
			w.device(m, l.Device)
			w.pointsFor(m, l.ID, loopRoles, l.Ref, map[string]string{"loop": l.ID}, l.Device)
			if l.DesignSupplyC != 0 {
				put(m, "design_supply", qty(l.DesignSupplyC, units.Temperature))
			}
			if l.DesignDeltaK != 0 {
				put(m, "design_delta_t", qty(l.DesignDeltaK, units.TempDiff))
			}
			put(m, "branch_dp", qty(l.BranchDPPa, units.Pressure))
			seq.Content = append(seq.Content, m)
		}
		put(root, "loops", seq)
	}
	if len(s.AHUs) > 0 {
		seq := &yaml.Node{Kind: yaml.SequenceNode, Tag: "!!seq"}
		for i := range s.AHUs {
			a := &s.AHUs[i]
			m := w.mapping(false)
			put(m, "id", text(a.ID))
			w.device(m, a.Device)
			w.pointsFor(m, a.ID, ahuRoles, a.Ref, map[string]string{"ahu": a.ID}, a.Device)
			if a.DuctGainK != 0 {
				put(m, "duct_gain", qty(a.DuctGainK, units.TempDiff))
			}
			seq.Content = append(seq.Content, m)
		}
		put(root, "ahus", seq)
	}
	w.terminals(root)
}

func (w *writer) device(m *yaml.Node, d *uint32) {
	if d != nil {
		put(m, "device", integer(int64(*d)))
	}
}

// typeNodes are the keys of a terminal that templates carry.
func (w *writer) typeNodes(t *Terminal) *yaml.Node {
	m := w.mapping(true)
	put(m, "coil", w.coilNode(t))
	v := w.mapping(true)
	put(v, "cv", num(t.Valve.Cv))
	put(v, "characteristic", text(t.Valve.Characteristic.String()))
	if t.Valve.Rangeability != 0 {
		put(v, "rangeability", num(t.Valve.Rangeability))
	}
	if t.Valve.LeakageFrac != 0 {
		put(v, "leakage", num(t.Valve.LeakageFrac))
	}
	put(m, "valve", v)
	af := w.mapping(true)
	put(af, "min", qty(t.MinAirflowM3s, units.VolumeFlow))
	put(af, "cooling_max", qty(t.MaxAirflowM3s, units.VolumeFlow))
	put(af, "heating_max", qty(t.HeatingAirflowM3s, units.VolumeFlow))
	put(m, "airflow", af)
	if t.DesignLoadW > 0 {
		put(m, "design_load", qty(t.DesignLoadW, units.Power))
	}
	return m
}

func nodeKey(n *yaml.Node) string {
	var b bytes.Buffer
	enc := yaml.NewEncoder(&b)
	_ = enc.Encode(n) // encoding nodes we built cannot fail
	_ = enc.Close()
	return b.String()
}

func (w *writer) terminals(root *yaml.Node) {
	ts := w.s.Terminals
	types := make([]*yaml.Node, len(ts))
	keys := make([]string, len(ts))
	count := map[string]int{}
	for i := range ts {
		types[i] = w.typeNodes(&ts[i])
		keys[i] = nodeKey(types[i])
		count[keys[i]]++
	}
	names := map[string]string{}
	tpl := w.mapping(false)
	for i := range ts {
		k := keys[i]
		if count[k] < 2 || names[k] != "" {
			continue
		}
		name := "type-" + strconv.Itoa(len(names)+1)
		names[k] = name
		n := *types[i]
		n.Style = 0
		put(tpl, name, &n)
	}
	if len(tpl.Content) > 0 {
		put(root, "templates", tpl)
	}
	seq := &yaml.Node{Kind: yaml.SequenceNode, Tag: "!!seq"}
	for i := range ts {
		t := &ts[i]
		name := names[keys[i]]
		m := w.mapping(name != "")
		put(m, "id", text(t.ID))
		if name != "" {
			put(m, "template", text(name))
		}
		put(m, "ahu", text(t.AHU))
		put(m, "loop", text(t.Loop))
		for _, kv := range [][2]string{{"zone", t.Zone}, {"building", t.Building}, {"location", t.Location}} {
			if kv[1] != "" {
				put(m, kv[0], text(kv[1]))
			}
		}
		w.device(m, t.Device)
		w.pointsFor(m, t.ID, terminalRoles, t.Points.Ref, map[string]string{"ahu": t.AHU, "loop": t.Loop, "zone": t.Zone, "building": t.Building}, t.Device)
		if name == "" {
			m.Content = append(m.Content, types[i].Content...)
		}
		seq.Content = append(seq.Content, m)
	}
	put(root, "terminals", seq)
}
