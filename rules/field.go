package rules

import (
	"fmt"
	"reflect"
	"sort"
	"strings"
	"unsafe"

	"risewatch/fdd"
	"risewatch/units"
)

// fieldKind is how a field's value is read.
type fieldKind uint8

const (
	fieldFloat  fieldKind = iota // float64 at offset
	fieldBool                    // bool at offset
	fieldBit                     // fdd.Gate at offset, test bit mask
	fieldIsBest                  // fdd.Kind at offset equals kind
	fieldInt                     // int at offset (counts)
)

// field is one readable value of an evidence struct, resolved at load time
// from its `rule:"name"` tag by reflection. Reading it at evaluation time is
// a pointer offset and a load: no reflection, no allocation.
type field struct {
	name string
	kind fieldKind
	off  uintptr
	mask fdd.Gate // fieldBit
	best fdd.Kind // fieldIsBest
	dim  units.Dimension
}

// read returns the value as float64 (bools 0/1). p points at the struct.
func (f *field) read(p unsafe.Pointer) float64 {
	switch f.kind {
	case fieldFloat:
		return *(*float64)(unsafe.Add(p, f.off))
	case fieldBool:
		if *(*bool)(unsafe.Add(p, f.off)) {
			return 1
		}
		return 0
	case fieldBit:
		if *(*fdd.Gate)(unsafe.Add(p, f.off))&f.mask != 0 {
			return 1
		}
		return 0
	case fieldIsBest:
		if *(*fdd.Kind)(unsafe.Add(p, f.off)) == f.best {
			return 1
		}
		return 0
	case fieldInt:
		return float64(*(*int)(unsafe.Add(p, f.off)))
	}
	return 0
}

// isBool reports whether the field is a truth value.
func (f *field) isBool() bool { return f.kind != fieldFloat && f.kind != fieldInt }

// schema is the set of fields of one evidence struct (terminal or loop).
type schema struct {
	name   string
	fields map[string]*field
	order  []string // tag order, for messages and evidence maps
}

var (
	gateType = reflect.TypeFor[fdd.Gate]()
	kindType = reflect.TypeFor[fdd.Kind]()
)

// gateBits are the pseudo-fields over Evidence.Gates.
var gateBits = []struct {
	name string
	bit  fdd.Gate
}{
	{"gate_missing", fdd.GateMissing},
	{"gate_range", fdd.GateRange},
	{"gate_stale", fdd.GateStale},
	{"gate_fan_off", fdd.GateFanOff},
	{"gate_no_ahu", fdd.GateNoAHU},
	{"gate_no_loop", fdd.GateNoLoop},
	{"gate_startup", fdd.GateStartup},
	{"gate_unsteady", fdd.GateUnsteady},
}

// buildSchema reflects over t (fdd.Evidence or fdd.LoopEvidence) once.
func buildSchema(t reflect.Type) (*schema, error) {
	s := &schema{name: t.Name(), fields: map[string]*field{}}
	add := func(f *field) error {
		if _, dup := s.fields[f.name]; dup {
			return fmt.Errorf("%s: duplicate rule field %q", t.Name(), f.name)
		}
		s.fields[f.name] = f
		s.order = append(s.order, f.name)
		return nil
	}
	for i := 0; i < t.NumField(); i++ {
		sf := t.Field(i)
		tag := sf.Tag.Get("rule")
		switch {
		case sf.Name == "Gates" && sf.Type == gateType:
			for _, g := range gateBits {
				if err := add(&field{name: g.name, kind: fieldBit, off: sf.Offset, mask: g.bit, dim: units.Binary}); err != nil {
					return nil, err
				}
			}
			continue
		case sf.Name == "Scores" && sf.Type.Kind() == reflect.Array && sf.Type.Elem().Kind() == reflect.Float64:
			for _, k := range fdd.AllKinds() {
				if int(k) >= sf.Type.Len() {
					continue
				}
				off := sf.Offset + uintptr(k)*unsafe.Sizeof(float64(0))
				if err := add(&field{name: "score." + k.String(), kind: fieldFloat, off: off, dim: units.Fraction}); err != nil {
					return nil, err
				}
			}
			continue
		case sf.Name == "Best" && sf.Type == kindType:
			for _, k := range fdd.AllKinds() {
				if err := add(&field{name: "best." + k.String(), kind: fieldIsBest, off: sf.Offset, best: k, dim: units.Binary}); err != nil {
					return nil, err
				}
			}
			continue
		}
		if tag == "" || tag == "-" {
			continue
		}
		f := &field{name: tag, off: sf.Offset, dim: dimensionOf(tag)}
		switch sf.Type.Kind() {
		case reflect.Float64:
			f.kind = fieldFloat
		case reflect.Bool:
			f.kind = fieldBool
			f.dim = units.Binary
		case reflect.Int:
			f.kind = fieldInt
			f.dim = units.NoDimension
		default:
			return nil, fmt.Errorf("%s.%s: rule field %q has type %s; only float64, int and bool can be compared", t.Name(), sf.Name, tag, sf.Type)
		}
		if err := add(f); err != nil {
			return nil, err
		}
	}
	return s, nil
}

// dimensionOf infers the physical dimension of a field from its name suffix,
// so thresholds may be written with units ("5 F", "300 cfm", "2 kW").
func dimensionOf(name string) units.Dimension {
	switch {
	case strings.HasSuffix(name, "_c"):
		return units.Temperature
	case strings.HasSuffix(name, "_k") || name == "cusum_low" || name == "ewma_residual":
		return units.TempDiff
	case strings.HasSuffix(name, "_m3s"):
		return units.VolumeFlow
	case strings.HasSuffix(name, "_w"):
		return units.Power
	case name == "valve" || name == "valve_span" || strings.HasSuffix(name, "_frac") || strings.HasSuffix(name, "_fraction"):
		return units.Fraction
	}
	return units.NoDimension
}

// lookup finds a field; the error lists close names.
func (s *schema) lookup(name string) (*field, error) {
	if f, ok := s.fields[name]; ok {
		return f, nil
	}
	var near []string
	for _, n := range s.order {
		if strings.Contains(n, name) || strings.Contains(name, n) {
			near = append(near, n)
		}
	}
	sort.Strings(near)
	msg := fmt.Sprintf("unknown %s field %q", s.name, name)
	if len(near) > 0 {
		msg += fmt.Sprintf(" (did you mean %s?)", strings.Join(near, ", "))
	}
	return nil, fmt.Errorf("%s", msg)
}

// Schemas are built once per process from the fdd types; they are immutable.
type schemas struct {
	terminal, loop *schema
}

func newSchemas() (*schemas, error) {
	t, err := buildSchema(reflect.TypeFor[fdd.Evidence]())
	if err != nil {
		return nil, err
	}
	l, err := buildSchema(reflect.TypeFor[fdd.LoopEvidence]())
	if err != nil {
		return nil, err
	}
	return &schemas{terminal: t, loop: l}, nil
}

// FieldNames lists the names rule conditions may use for terminal or loop
// evidence, for documentation and editor help.
func FieldNames(loop bool) ([]string, error) {
	s, err := newSchemas()
	if err != nil {
		return nil, err
	}
	if loop {
		return append([]string(nil), s.loop.order...), nil
	}
	return append([]string(nil), s.terminal.order...), nil
}
