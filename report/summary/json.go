package summary

import (
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"strings"
)

// jsonSafe converts v into maps, slices and numbers that encoding/json can
// write, with NaN and infinite floats as null (JSON has no NaN). Struct
// fields use their json tag names and honour omitempty; values with their
// own MarshalJSON are left to it.
func jsonSafe(v any) any {
	return jsonSafeValue(reflect.ValueOf(v))
}

func jsonSafeValue(v reflect.Value) any {
	if !v.IsValid() {
		return nil
	}
	if m, ok := v.Interface().(interface{ MarshalJSON() ([]byte, error) }); ok && v.Kind() != reflect.Pointer {
		return m
	}
	switch v.Kind() {
	case reflect.Pointer, reflect.Interface:
		if v.IsNil() {
			return nil
		}
		return jsonSafeValue(v.Elem())
	case reflect.Float32, reflect.Float64:
		return jsonNum(v.Float())
	case reflect.Struct:
		out := map[string]any{}
		t := v.Type()
		for i := 0; i < t.NumField(); i++ {
			f := t.Field(i)
			if !f.IsExported() {
				continue
			}
			name, opts, _ := strings.Cut(f.Tag.Get("json"), ",")
			if name == "-" {
				continue
			}
			if name == "" {
				name = f.Name
			}
			if strings.Contains(opts, "omitempty") && v.Field(i).IsZero() {
				continue
			}
			out[name] = jsonSafeValue(v.Field(i))
		}
		return out
	case reflect.Slice, reflect.Array:
		if v.Kind() == reflect.Slice && v.IsNil() {
			return []any{}
		}
		out := make([]any, v.Len())
		for i := range out {
			out[i] = jsonSafeValue(v.Index(i))
		}
		return out
	case reflect.Map:
		out := map[string]any{}
		for _, k := range v.MapKeys() {
			out[k.String()] = jsonSafeValue(v.MapIndex(k))
		}
		return out
	}
	return v.Interface()
}

// jsonNum maps NaN and ±Inf to nil so they encode as null.
func jsonNum(v float64) any {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return v
}

// restoreNaNs sets to NaN the float fields of the whitecaps and inception
// blocks that summary.json holds as null (JSON has no NaN; encoding/json
// leaves a float untouched, zero, on null).
func restoreNaNs(raw []byte, s *Summary) error {
	var blocks struct {
		Whitecaps json.RawMessage `json:"whitecaps"`
		Inception json.RawMessage `json:"inception"`
	}
	if err := json.Unmarshal(raw, &blocks); err != nil {
		return err
	}
	if s.Whitecaps != nil {
		if err := nullFloats(blocks.Whitecaps, reflect.ValueOf(s.Whitecaps).Elem()); err != nil {
			return fmt.Errorf("whitecaps block: %w", err)
		}
	}
	if s.Inception != nil {
		if err := nullFloats(blocks.Inception, reflect.ValueOf(s.Inception).Elem()); err != nil {
			return fmt.Errorf("inception block: %w", err)
		}
	}
	return nil
}

var unmarshalerType = reflect.TypeFor[json.Unmarshaler]()

// nullFloats walks a struct (or slice of structs) v decoded from raw and
// sets every float field whose JSON value is null to NaN. Types with their
// own UnmarshalJSON, and maps, are left to themselves.
func nullFloats(raw json.RawMessage, v reflect.Value) error {
	if len(raw) == 0 || string(raw) == "null" {
		return nil
	}
	if reflect.PointerTo(v.Type()).Implements(unmarshalerType) {
		return nil
	}
	switch v.Kind() {
	case reflect.Struct:
		var m map[string]json.RawMessage
		if err := json.Unmarshal(raw, &m); err != nil {
			return err
		}
		t := v.Type()
		for i := 0; i < t.NumField(); i++ {
			f := t.Field(i)
			name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
			if name == "" {
				name = f.Name
			}
			r, ok := m[name]
			if !ok || !f.IsExported() {
				continue
			}
			fv := v.Field(i)
			if (fv.Kind() == reflect.Float64 || fv.Kind() == reflect.Float32) && string(r) == "null" {
				fv.SetFloat(math.NaN())
				continue
			}
			if err := nullFloats(r, fv); err != nil {
				return err
			}
		}
	case reflect.Slice:
		var items []json.RawMessage
		if err := json.Unmarshal(raw, &items); err != nil {
			return err
		}
		for i := 0; i < len(items) && i < v.Len(); i++ {
			if err := nullFloats(items[i], v.Index(i)); err != nil {
				return err
			}
		}
	}
	return nil
}
