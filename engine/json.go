package engine

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strconv"
	"strings"
)

// MarshalJSON writes the result as JSON with every non-finite number (NaN,
// +Inf, -Inf) as null: a quantity that does not exist or is infinite has no
// JSON number. It walks the value by reflection, honouring the json tags
// (name, omitempty, "-") of every struct inside; nil pointers, slices and
// maps are null unless omitted.
func (r Result) MarshalJSON() ([]byte, error) {
	var b bytes.Buffer
	if err := writeJSON(&b, reflect.ValueOf(r)); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

// nullJSON is implemented by the parts of the Result whose JSON is not the
// reflection of their fields; they write it with the same conventions.
type nullJSON interface {
	writeJSON(b *bytes.Buffer) error
}

var nullJSONType = reflect.TypeFor[nullJSON]()

func writeJSON(b *bytes.Buffer, v reflect.Value) error {
	if k := v.Kind(); k != reflect.Pointer && k != reflect.Interface && v.Type().Implements(nullJSONType) {
		return v.Interface().(nullJSON).writeJSON(b)
	}
	switch v.Kind() {
	case reflect.Float32, reflect.Float64:
		f := v.Float()
		if math.IsNaN(f) || math.IsInf(f, 0) {
			b.WriteString("null")
			return nil
		}
		bits := 64
		if v.Kind() == reflect.Float32 {
			bits = 32
		}
		b.Write(formatFloat(f, bits))
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		b.WriteString(strconv.FormatInt(v.Int(), 10))
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		b.WriteString(strconv.FormatUint(v.Uint(), 10))
	case reflect.Bool:
		b.WriteString(strconv.FormatBool(v.Bool()))
	case reflect.String:
		s, err := json.Marshal(v.String())
		if err != nil {
			return err
		}
		b.Write(s)
	case reflect.Pointer, reflect.Interface:
		if v.IsNil() {
			b.WriteString("null")
			return nil
		}
		return writeJSON(b, v.Elem())
	case reflect.Slice:
		if v.IsNil() {
			b.WriteString("null")
			return nil
		}
		return writeArray(b, v)
	case reflect.Array:
		return writeArray(b, v)
	case reflect.Map:
		if v.IsNil() {
			b.WriteString("null")
			return nil
		}
		if v.Type().Key().Kind() != reflect.String {
			return fmt.Errorf("engine: JSON of a map keyed by %s", v.Type().Key())
		}
		keys := v.MapKeys()
		slices.SortFunc(keys, func(x, y reflect.Value) int { return strings.Compare(x.String(), y.String()) })
		b.WriteByte('{')
		for i, k := range keys {
			if i > 0 {
				b.WriteByte(',')
			}
			name, _ := json.Marshal(k.String())
			b.Write(name)
			b.WriteByte(':')
			if err := writeJSON(b, v.MapIndex(k)); err != nil {
				return err
			}
		}
		b.WriteByte('}')
	case reflect.Struct:
		return writeStruct(b, v)
	default:
		return fmt.Errorf("engine: JSON of a %s", v.Kind())
	}
	return nil
}

func writeArray(b *bytes.Buffer, v reflect.Value) error {
	b.WriteByte('[')
	for i := 0; i < v.Len(); i++ {
		if i > 0 {
			b.WriteByte(',')
		}
		if err := writeJSON(b, v.Index(i)); err != nil {
			return err
		}
	}
	b.WriteByte(']')
	return nil
}

func writeStruct(b *bytes.Buffer, v reflect.Value) error {
	b.WriteByte('{')
	if _, err := writeFields(b, v, true); err != nil {
		return err
	}
	b.WriteByte('}')
	return nil
}

// writeFields writes a struct's members without the braces, the first one
// without a leading comma when first is set; it reports whether the next
// member is still the first.
func writeFields(b *bytes.Buffer, v reflect.Value, first bool) (bool, error) {
	t := v.Type()
	for i := 0; i < t.NumField(); i++ {
		sf := t.Field(i)
		if !sf.IsExported() {
			continue
		}
		name := sf.Name
		omitEmpty := false
		if tag, ok := sf.Tag.Lookup("json"); ok {
			if tag == "-" {
				continue
			}
			parts := strings.Split(tag, ",")
			if parts[0] != "" {
				name = parts[0]
			}
			for _, o := range parts[1:] {
				if o == "omitempty" {
					omitEmpty = true
				}
			}
		}
		fv := v.Field(i)
		if omitEmpty && isEmpty(fv) {
			continue
		}
		if !first {
			b.WriteByte(',')
		}
		first = false
		writeKey(b, name)
		if err := writeJSON(b, fv); err != nil {
			return first, err
		}
	}
	return first, nil
}

// writeKey writes an object member's name and the colon.
func writeKey(b *bytes.Buffer, name string) {
	key, _ := json.Marshal(name)
	b.Write(key)
	b.WriteByte(':')
}

// marshalNull returns w's JSON.
func marshalNull(w nullJSON) ([]byte, error) {
	var b bytes.Buffer
	if err := w.writeJSON(&b); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

func (f Fits) writeJSON(b *bytes.Buffer) error {
	b.WriteByte('{')
	for i, m := range Methods {
		if i > 0 {
			b.WriteByte(',')
		}
		writeKey(b, m.Key())
		if err := writeJSON(b, reflect.ValueOf(f[m])); err != nil {
			return err
		}
	}
	b.WriteByte('}')
	return nil
}

// MarshalJSON writes the fits as an object keyed by method, non-finite
// numbers as null.
func (f Fits) MarshalJSON() ([]byte, error) { return marshalNull(f) }

func (m Marginal1D) writeJSON(b *bytes.Buffer) error {
	b.WriteByte('{')
	first, err := writeFields(b, reflect.ValueOf(m), true)
	if err != nil {
		return err
	}
	for _, meth := range Methods {
		if !first {
			b.WriteByte(',')
		}
		first = false
		writeKey(b, meth.Key())
		if err := writeJSON(b, reflect.ValueOf(m.Fits[meth])); err != nil {
			return err
		}
	}
	b.WriteByte('}')
	return nil
}

// MarshalJSON writes the marginal with a member per method, non-finite
// numbers as null.
func (m Marginal1D) MarshalJSON() ([]byte, error) { return marshalNull(m) }

func (e Ellipses) writeJSON(b *bytes.Buffer) error {
	if e == nil {
		b.WriteString("null")
		return nil
	}
	keys := make([]Method, 0, len(e))
	for m := range e {
		keys = append(keys, m)
	}
	slices.SortFunc(keys, func(x, y Method) int { return strings.Compare(x.Key(), y.Key()) })
	b.WriteByte('{')
	for i, m := range keys {
		if i > 0 {
			b.WriteByte(',')
		}
		writeKey(b, m.Key())
		if err := writeJSON(b, reflect.ValueOf(e[m])); err != nil {
			return err
		}
	}
	b.WriteByte('}')
	return nil
}

// MarshalJSON writes the ellipses as an object keyed by method, non-finite
// numbers as null.
func (e Ellipses) MarshalJSON() ([]byte, error) { return marshalNull(e) }

// isEmpty is encoding/json's notion of an empty value for omitempty.
func isEmpty(v reflect.Value) bool {
	switch v.Kind() {
	case reflect.Array, reflect.Map, reflect.Slice, reflect.String:
		return v.Len() == 0
	case reflect.Bool:
		return !v.Bool()
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		return v.Int() == 0
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		return v.Uint() == 0
	case reflect.Float32, reflect.Float64:
		return v.Float() == 0
	case reflect.Interface, reflect.Pointer:
		return v.IsNil()
	}
	return false
}

// formatFloat formats like encoding/json: the shortest representation, in
// exponent form only for very small or large magnitudes.
func formatFloat(f float64, bits int) []byte {
	abs := math.Abs(f)
	fmtByte := byte('f')
	if abs != 0 {
		if bits == 64 && (abs < 1e-6 || abs >= 1e21) || bits == 32 && (float32(abs) < 1e-6 || float32(abs) >= 1e21) {
			fmtByte = 'e'
		}
	}
	out := strconv.AppendFloat(nil, f, fmtByte, -1, bits)
	if fmtByte == 'e' {
		// Clean up e-09 to e-9, as encoding/json does.
		n := len(out)
		if n >= 4 && out[n-4] == 'e' && out[n-3] == '-' && out[n-2] == '0' {
			out[n-2] = out[n-1]
			out = out[:n-1]
		}
	}
	return out
}
