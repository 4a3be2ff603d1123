package bacnet

import (
	"context"
	_ "embed"
	"fmt"
	"regexp"

	"gopkg.in/yaml.v3"

	"risewatch/collector/bacnet/wire"
)

//go:embed roles.yaml
var rolesYAML []byte

// RoleGuesser guesses a point's role from its object name with the pattern
// table in roles.yaml (data, not code).
type RoleGuesser struct {
	rules []roleRule
}

type roleRule struct {
	role string
	res  []*regexp.Regexp
}

// NewRoleGuesser compiles the embedded table, or table when it is non-nil.
func NewRoleGuesser(table []byte) (*RoleGuesser, error) {
	if table == nil {
		table = rolesYAML
	}
	var raw []struct {
		Role     string   `yaml:"role"`
		Patterns []string `yaml:"patterns"`
	}
	if err := yaml.Unmarshal(table, &raw); err != nil {
		return nil, fmt.Errorf("role patterns: %w", err)
	}
	g := &RoleGuesser{}
	for i, r := range raw {
		rr := roleRule{role: r.Role}
		for _, p := range r.Patterns {
			re, err := regexp.Compile("(?i)" + p)
			if err != nil {
				return nil, fmt.Errorf("role patterns: entry %d (%s): %w", i+1, r.Role, err)
			}
			rr.res = append(rr.res, re)
		}
		g.rules = append(g.rules, rr)
	}
	return g, nil
}

// Guess returns the role for an object name, or "" when nothing matches.
func (g *RoleGuesser) Guess(name string) string {
	for _, r := range g.rules {
		for _, re := range r.res {
			if re.MatchString(name) {
				return r.role
			}
		}
	}
	return ""
}

// SurveyObject is one object found on a device.
type SurveyObject struct {
	ID      wire.ObjectID
	Name    string
	Units   EngineeringUnit
	HasUnit bool
	Value   string
	Role    string // guessed
}

// SurveyDevice is one discovered device with its objects.
type SurveyDevice struct {
	Device  *Device
	Name    string
	Objects []SurveyObject
	Err     error // the device was found but its objects could not all be read
}

// Survey reads each device's name and object list (whole, or entry by entry
// when the whole list does not fit), then object-name, units and
// present-value of every analog, binary and multi-state object and the
// names of trend logs.
func Survey(ctx context.Context, c *Client, d *Device, g *RoleGuesser) SurveyDevice {
	sd := SurveyDevice{Device: d}
	devObj := wire.ObjectID{Type: wire.ObjectDevice, Instance: d.Instance}
	if vs, err := c.ReadProperty(ctx, d, devObj, wire.PropertyRef{Prop: wire.PropObjectName, Index: wire.NoIndex}); err == nil && len(vs) == 1 {
		sd.Name = vs[0].S
	}
	list, err := objectList(ctx, c, d, devObj)
	if err != nil {
		sd.Err = err
		return sd
	}
	var reads []Read
	var objs []wire.ObjectID
	for _, o := range list {
		switch o.Type {
		case wire.ObjectAnalogInput, wire.ObjectAnalogOutput, wire.ObjectAnalogValue:
			reads = append(reads, Read{o, ref(wire.PropObjectName)}, Read{o, ref(wire.PropUnits)}, Read{o, ref(wire.PropPresentValue)})
		case wire.ObjectBinaryInput, wire.ObjectBinaryOutput, wire.ObjectBinaryValue,
			wire.ObjectMultiStateInput, wire.ObjectMultiStateOutput, wire.ObjectMultiStateValue, wire.ObjectTrendLog:
			reads = append(reads, Read{o, ref(wire.PropObjectName)})
			if o.Type != wire.ObjectTrendLog {
				reads = append(reads, Read{o, ref(wire.PropPresentValue)})
			}
		default:
			continue
		}
		objs = append(objs, o)
	}
	res := c.ReadMany(ctx, d, reads)
	k := 0
	for _, o := range objs {
		so := SurveyObject{ID: o}
		for ; k < len(reads) && reads[k].Object == o; k++ {
			r := res[k]
			if r.Err != nil || len(r.Values) == 0 {
				continue
			}
			switch reads[k].Prop.Prop {
			case wire.PropObjectName:
				so.Name = r.Values[0].S
			case wire.PropUnits:
				so.Units, so.HasUnit = EngineeringUnit(r.Values[0].U), true
			case wire.PropPresentValue:
				so.Value = r.Values[0].String()
			}
		}
		if g != nil && o.Type != wire.ObjectTrendLog {
			so.Role = g.Guess(so.Name)
		}
		sd.Objects = append(sd.Objects, so)
	}
	return sd
}

func ref(p wire.PropertyID) wire.PropertyRef { return wire.PropertyRef{Prop: p, Index: wire.NoIndex} }

func objectList(ctx context.Context, c *Client, d *Device, devObj wire.ObjectID) ([]wire.ObjectID, error) {
	vs, err := c.ReadProperty(ctx, d, devObj, ref(wire.PropObjectList))
	if err != nil && !tooBig(err) {
		return nil, err
	}
	if err != nil {
		// Too long for one answer: read its length, then each entry (ASHRAE 135 clause 15.5, array index).
		n, err := c.ReadProperty(ctx, d, devObj, wire.PropertyRef{Prop: wire.PropObjectList, Index: 0})
		if err != nil || len(n) != 1 {
			return nil, fmt.Errorf("device %d: object-list length: %w", d.Instance, err)
		}
		reads := make([]Read, n[0].U)
		for i := range reads {
			reads[i] = Read{devObj, wire.PropertyRef{Prop: wire.PropObjectList, Index: uint32(i + 1)}}
		}
		vs = vs[:0]
		for i, r := range c.ReadMany(ctx, d, reads) {
			if r.Err != nil || len(r.Values) != 1 {
				return nil, fmt.Errorf("device %d: object-list[%d]: %v", d.Instance, i+1, r.Err)
			}
			vs = append(vs, r.Values[0])
		}
	}
	out := make([]wire.ObjectID, 0, len(vs))
	for _, v := range vs {
		if v.Tag == wire.TagObjectID {
			out = append(out, v.Obj)
		}
	}
	return out, nil
}
