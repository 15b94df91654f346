// Package wire encodes Go values exactly, for the messages between the page
// and its analysis worker (two copies of the same program): every float
// keeps its bits (NaN, ±Inf and -0 included), a nil slice, map or pointer
// stays nil and an empty one empty, a pointer to a zero value stays a
// pointer. JSON cannot do this (no NaN or Inf, and the engine's Result
// writes them as null), nor can encoding/gob (it leaves zero values out,
// so a pointer to 0 comes back nil and an empty slice nil).
//
// The encoding carries no type information: both ends must decode into the
// type that was encoded, which holds for two copies of one program. It
// walks the value by reflection, every exported field of every struct in
// order; a struct with an unexported field, an interface, a channel or a
// function is an error, since it could not be rebuilt exactly.
package wire

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"reflect"
)

// version starts every message; a message of another version (another
// build of the program) is refused.
const version = 1

// ErrVersion is returned for a message written by another version of the
// encoding.
var ErrVersion = errors.New("wire: a message of another version")

// Marshal returns v's encoding.
func Marshal(v any) ([]byte, error) {
	e := encoder{buf: make([]byte, 0, 1024)}
	e.buf = append(e.buf, version)
	if err := e.value(reflect.ValueOf(v)); err != nil {
		return nil, err
	}
	return e.buf, nil
}

// Unmarshal decodes data, as Marshal wrote it for a value of the same type,
// into the value p points to. Data that is cut short or otherwise not such
// an encoding gives an error, never a panic.
func Unmarshal(data []byte, p any) error {
	rv := reflect.ValueOf(p)
	if rv.Kind() != reflect.Pointer || rv.IsNil() {
		return fmt.Errorf("wire: Unmarshal needs a non-nil pointer, not %T", p)
	}
	if len(data) == 0 || data[0] != version {
		return ErrVersion
	}
	d := decoder{buf: data[1:]}
	if err := d.value(rv.Elem()); err != nil {
		return err
	}
	if len(d.buf) != 0 {
		return fmt.Errorf("wire: %d bytes left over after the value", len(d.buf))
	}
	return nil
}

// The slice types with a fast path: the engine's plots are mostly these.
var (
	floatsType = reflect.TypeFor[[]float64]()
	pairsType  = reflect.TypeFor[[][2]float64]()
)

type encoder struct{ buf []byte }

func (e *encoder) uvarint(u uint64) { e.buf = binary.AppendUvarint(e.buf, u) }

func (e *encoder) float(f float64) {
	e.buf = binary.LittleEndian.AppendUint64(e.buf, math.Float64bits(f))
}

func (e *encoder) value(v reflect.Value) error {
	switch v.Kind() {
	case reflect.Bool:
		b := byte(0)
		if v.Bool() {
			b = 1
		}
		e.buf = append(e.buf, b)
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		e.buf = binary.AppendVarint(e.buf, v.Int())
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64, reflect.Uintptr:
		e.uvarint(v.Uint())
	case reflect.Float32:
		e.buf = binary.LittleEndian.AppendUint32(e.buf, math.Float32bits(float32(v.Float())))
	case reflect.Float64:
		e.float(v.Float())
	case reflect.String:
		e.uvarint(uint64(v.Len()))
		e.buf = append(e.buf, v.String()...)
	case reflect.Pointer:
		if v.IsNil() {
			e.buf = append(e.buf, 0)
			return nil
		}
		e.buf = append(e.buf, 1)
		return e.value(v.Elem())
	case reflect.Slice:
		if v.IsNil() {
			e.uvarint(0)
			return nil
		}
		e.uvarint(uint64(v.Len()) + 1)
		switch v.Type() {
		case floatsType:
			for _, f := range v.Interface().([]float64) {
				e.float(f)
			}
			return nil
		case pairsType:
			for _, p := range v.Interface().([][2]float64) {
				e.float(p[0])
				e.float(p[1])
			}
			return nil
		}
		if v.Type().Elem().Kind() == reflect.Uint8 {
			e.buf = append(e.buf, v.Bytes()...)
			return nil
		}
		return e.elems(v)
	case reflect.Array:
		return e.elems(v)
	case reflect.Map:
		if v.IsNil() {
			e.uvarint(0)
			return nil
		}
		e.uvarint(uint64(v.Len()) + 1)
		it := v.MapRange()
		for it.Next() {
			if err := e.value(it.Key()); err != nil {
				return err
			}
			if err := e.value(it.Value()); err != nil {
				return err
			}
		}
	case reflect.Struct:
		t := v.Type()
		for i := 0; i < t.NumField(); i++ {
			if !t.Field(i).IsExported() {
				return fmt.Errorf("wire: %s has an unexported field %s", t, t.Field(i).Name)
			}
			if err := e.value(v.Field(i)); err != nil {
				return err
			}
		}
	default:
		return fmt.Errorf("wire: cannot encode a %s (%s)", v.Kind(), v.Type())
	}
	return nil
}

func (e *encoder) elems(v reflect.Value) error {
	for i := 0; i < v.Len(); i++ {
		if err := e.value(v.Index(i)); err != nil {
			return err
		}
	}
	return nil
}

type decoder struct{ buf []byte }

var errShort = errors.New("wire: the message is cut short")

func (d *decoder) uvarint() (uint64, error) {
	u, n := binary.Uvarint(d.buf)
	if n <= 0 {
		return 0, errShort
	}
	d.buf = d.buf[n:]
	return u, nil
}

func (d *decoder) take(n int) ([]byte, error) {
	if n < 0 || n > len(d.buf) {
		return nil, errShort
	}
	b := d.buf[:n]
	d.buf = d.buf[n:]
	return b, nil
}

func (d *decoder) float() (float64, error) {
	b, err := d.take(8)
	if err != nil {
		return 0, err
	}
	return math.Float64frombits(binary.LittleEndian.Uint64(b)), nil
}

// length reads a slice's or map's length (nil reports a nil one). Every
// element takes at least min bytes, so a length the rest of the message
// cannot hold is refused before anything is allocated.
func (d *decoder) length(min int) (n int, isNil bool, err error) {
	u, err := d.uvarint()
	if err != nil {
		return 0, false, err
	}
	if u == 0 {
		return 0, true, nil
	}
	u--
	if min > 0 && u > uint64(len(d.buf)/min) || min == 0 && u > 1<<20 {
		return 0, false, errShort
	}
	return int(u), false, nil
}

func (d *decoder) value(v reflect.Value) error {
	switch v.Kind() {
	case reflect.Bool:
		b, err := d.take(1)
		if err != nil {
			return err
		}
		if b[0] > 1 {
			return errors.New("wire: a bool that is neither 0 nor 1")
		}
		v.SetBool(b[0] == 1)
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		x, n := binary.Varint(d.buf)
		if n <= 0 {
			return errShort
		}
		d.buf = d.buf[n:]
		if v.OverflowInt(x) {
			return fmt.Errorf("wire: %d overflows a %s", x, v.Type())
		}
		v.SetInt(x)
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64, reflect.Uintptr:
		x, err := d.uvarint()
		if err != nil {
			return err
		}
		if v.OverflowUint(x) {
			return fmt.Errorf("wire: %d overflows a %s", x, v.Type())
		}
		v.SetUint(x)
	case reflect.Float32:
		b, err := d.take(4)
		if err != nil {
			return err
		}
		v.SetFloat(float64(math.Float32frombits(binary.LittleEndian.Uint32(b))))
	case reflect.Float64:
		f, err := d.float()
		if err != nil {
			return err
		}
		v.SetFloat(f)
	case reflect.String:
		n, err := d.uvarint()
		if err != nil {
			return err
		}
		if n > uint64(len(d.buf)) {
			return errShort
		}
		b, _ := d.take(int(n))
		v.SetString(string(b))
	case reflect.Pointer:
		b, err := d.take(1)
		if err != nil {
			return err
		}
		switch b[0] {
		case 0:
			v.SetZero()
			return nil
		case 1:
		default:
			return errors.New("wire: a pointer mark that is neither 0 nor 1")
		}
		p := reflect.New(v.Type().Elem())
		if err := d.value(p.Elem()); err != nil {
			return err
		}
		v.Set(p)
	case reflect.Slice:
		return d.slice(v)
	case reflect.Array:
		for i := 0; i < v.Len(); i++ {
			if err := d.value(v.Index(i)); err != nil {
				return err
			}
		}
	case reflect.Map:
		n, isNil, err := d.length(2)
		if err != nil {
			return err
		}
		if isNil {
			v.SetZero()
			return nil
		}
		m := reflect.MakeMapWithSize(v.Type(), n)
		for range n {
			k, x := reflect.New(v.Type().Key()).Elem(), reflect.New(v.Type().Elem()).Elem()
			if err := d.value(k); err != nil {
				return err
			}
			if err := d.value(x); err != nil {
				return err
			}
			m.SetMapIndex(k, x)
		}
		v.Set(m)
	case reflect.Struct:
		t := v.Type()
		for i := 0; i < t.NumField(); i++ {
			if !t.Field(i).IsExported() {
				return fmt.Errorf("wire: %s has an unexported field %s", t, t.Field(i).Name)
			}
			if err := d.value(v.Field(i)); err != nil {
				return err
			}
		}
	default:
		return fmt.Errorf("wire: cannot decode a %s (%s)", v.Kind(), v.Type())
	}
	return nil
}

func (d *decoder) slice(v reflect.Value) error {
	min := 1
	if v.Type().Elem().Size() == 0 {
		min = 0 // elements of no size take no bytes
	}
	switch v.Type() {
	case floatsType:
		min = 8
	case pairsType:
		min = 16
	}
	n, isNil, err := d.length(min)
	if err != nil {
		return err
	}
	if isNil {
		v.SetZero()
		return nil
	}
	switch v.Type() {
	case floatsType:
		s := make([]float64, n)
		for i := range s {
			s[i] = math.Float64frombits(binary.LittleEndian.Uint64(d.buf[8*i:]))
		}
		d.buf = d.buf[8*n:]
		v.Set(reflect.ValueOf(s))
		return nil
	case pairsType:
		s := make([][2]float64, n)
		for i := range s {
			s[i][0] = math.Float64frombits(binary.LittleEndian.Uint64(d.buf[16*i:]))
			s[i][1] = math.Float64frombits(binary.LittleEndian.Uint64(d.buf[16*i+8:]))
		}
		d.buf = d.buf[16*n:]
		v.Set(reflect.ValueOf(s))
		return nil
	}
	if v.Type().Elem().Kind() == reflect.Uint8 {
		b, err := d.take(n)
		if err != nil {
			return err
		}
		s := reflect.MakeSlice(v.Type(), n, n)
		reflect.Copy(s, reflect.ValueOf(b))
		v.Set(s)
		return nil
	}
	s := reflect.MakeSlice(v.Type(), n, n)
	for i := range n {
		if err := d.value(s.Index(i)); err != nil {
			return err
		}
	}
	v.Set(s)
	return nil
}
