package store

import (
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"strings"
)

// The evidence types use NaN for "not available", which encoding/json
// rejects. marshalNaN and unmarshalNaN are encoding/json with one change:
// a NaN float is written as null and a null read into a float becomes NaN;
// ±Inf are written as the strings "+Inf" and "-Inf". Field names and tags
// follow encoding/json, so the snapshots stay readable with any JSON tool.

var (
	marshalerType   = reflect.TypeFor[json.Marshaler]()
	unmarshalerType = reflect.TypeFor[json.Unmarshaler]()
)

func marshalNaN(v any) ([]byte, error) {
	tree, err := toTree(reflect.ValueOf(v))
	if err != nil {
		return nil, err
	}
	return json.Marshal(tree)
}

func unmarshalNaN(data []byte, v any) error {
	rv := reflect.ValueOf(v)
	if rv.Kind() != reflect.Pointer || rv.IsNil() {
		return fmt.Errorf("unmarshal: need a non-nil pointer, got %T", v)
	}
	return fromJSON(data, rv.Elem())
}

// toTree converts v to a value encoding/json can marshal without NaN.
func toTree(v reflect.Value) (any, error) {
	if !v.IsValid() {
		return nil, nil
	}
	if v.Type().Implements(marshalerType) && (v.Kind() != reflect.Pointer || !v.IsNil()) {
		b, err := v.Interface().(json.Marshaler).MarshalJSON()
		return json.RawMessage(b), err
	}
	switch v.Kind() {
	case reflect.Float32, reflect.Float64:
		f := v.Float()
		switch {
		case math.IsNaN(f):
			return nil, nil
		case math.IsInf(f, 1):
			return "+Inf", nil
		case math.IsInf(f, -1):
			return "-Inf", nil
		}
		return f, nil
	case reflect.Pointer, reflect.Interface:
		if v.IsNil() {
			return nil, nil
		}
		return toTree(v.Elem())
	case reflect.Struct:
		out := make(map[string]any, v.NumField())
		t := v.Type()
		for i := range t.NumField() {
			f := t.Field(i)
			name, ok := jsonName(f)
			if !ok {
				continue
			}
			x, err := toTree(v.Field(i))
			if err != nil {
				return nil, fmt.Errorf("%s: %w", f.Name, err)
			}
			out[name] = x
		}
		return out, nil
	case reflect.Slice:
		if v.IsNil() {
			return nil, nil
		}
		if v.Type().Elem().Kind() == reflect.Uint8 {
			return v.Interface(), nil
		}
		fallthrough
	case reflect.Array:
		out := make([]any, v.Len())
		for i := range out {
			x, err := toTree(v.Index(i))
			if err != nil {
				return nil, err
			}
			out[i] = x
		}
		return out, nil
	case reflect.Map:
		if v.IsNil() {
			return nil, nil
		}
		if v.Type().Key().Kind() != reflect.String {
			return v.Interface(), nil
		}
		out := make(map[string]any, v.Len())
		it := v.MapRange()
		for it.Next() {
			x, err := toTree(it.Value())
			if err != nil {
				return nil, err
			}
			out[it.Key().String()] = x
		}
		return out, nil
	}
	return v.Interface(), nil
}

// fromJSON decodes data into v, turning null floats into NaN.
func fromJSON(data []byte, v reflect.Value) error {
	null := string(data) == "null"
	if v.CanAddr() && v.Addr().Type().Implements(unmarshalerType) {
		if null {
			return nil
		}
		return v.Addr().Interface().(json.Unmarshaler).UnmarshalJSON(data)
	}
	switch v.Kind() {
	case reflect.Float32, reflect.Float64:
		switch {
		case null:
			v.SetFloat(math.NaN())
			return nil
		case len(data) > 0 && data[0] == '"':
			var s string
			if err := json.Unmarshal(data, &s); err != nil {
				return err
			}
			switch s {
			case "+Inf":
				v.SetFloat(math.Inf(1))
			case "-Inf":
				v.SetFloat(math.Inf(-1))
			default:
				return fmt.Errorf("float field holds string %q", s)
			}
			return nil
		}
		var f float64
		if err := json.Unmarshal(data, &f); err != nil {
			return err
		}
		v.SetFloat(f)
		return nil
	case reflect.Pointer:
		if null {
			v.SetZero()
			return nil
		}
		if v.IsNil() {
			v.Set(reflect.New(v.Type().Elem()))
		}
		return fromJSON(data, v.Elem())
	case reflect.Struct:
		if null {
			return nil
		}
		var fields map[string]json.RawMessage
		if err := json.Unmarshal(data, &fields); err != nil {
			return err
		}
		t := v.Type()
		for i := range t.NumField() {
			f := t.Field(i)
			name, ok := jsonName(f)
			if !ok {
				continue
			}
			raw, ok := fields[name]
			if !ok {
				continue
			}
			if err := fromJSON(raw, v.Field(i)); err != nil {
				return fmt.Errorf("%s: %w", f.Name, err)
			}
		}
		return nil
	case reflect.Slice:
		if null || v.Type().Elem().Kind() == reflect.Uint8 {
			break
		}
		var items []json.RawMessage
		if err := json.Unmarshal(data, &items); err != nil {
			return err
		}
		s := reflect.MakeSlice(v.Type(), len(items), len(items))
		for i, raw := range items {
			if err := fromJSON(raw, s.Index(i)); err != nil {
				return fmt.Errorf("[%d]: %w", i, err)
			}
		}
		v.Set(s)
		return nil
	case reflect.Array:
		var items []json.RawMessage
		if err := json.Unmarshal(data, &items); err != nil {
			return err
		}
		for i := 0; i < len(items) && i < v.Len(); i++ {
			if err := fromJSON(items[i], v.Index(i)); err != nil {
				return fmt.Errorf("[%d]: %w", i, err)
			}
		}
		return nil
	case reflect.Map:
		if null || v.Type().Key().Kind() != reflect.String {
			break
		}
		var items map[string]json.RawMessage
		if err := json.Unmarshal(data, &items); err != nil {
			return err
		}
		m := reflect.MakeMapWithSize(v.Type(), len(items))
		for k, raw := range items {
			e := reflect.New(v.Type().Elem()).Elem()
			if err := fromJSON(raw, e); err != nil {
				return fmt.Errorf("[%q]: %w", k, err)
			}
			m.SetMapIndex(reflect.ValueOf(k).Convert(v.Type().Key()), e)
		}
		v.Set(m)
		return nil
	}
	return json.Unmarshal(data, v.Addr().Interface())
}

// jsonName returns the JSON name of an exported field, following the json tag.
func jsonName(f reflect.StructField) (string, bool) {
	if !f.IsExported() {
		return "", false
	}
	tag := f.Tag.Get("json")
	if tag == "-" {
		return "", false
	}
	if name, _, _ := strings.Cut(tag, ","); name != "" {
		return name, true
	}
	return f.Name, true
}
