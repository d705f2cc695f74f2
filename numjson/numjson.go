package numjson

import (
	"bytes"
	"encoding"
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strconv"
	"strings"
)

// Digits is the number of significant digits kept: more than any input grid or model
// parameter carries, and it keeps answers small.
const Digits = 7

// Round keeps Digits significant digits of v; 0, NaN and ±Inf are returned as they are.
func Round(v float64) float64 {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v
	}
	f, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', Digits, 64), 64)
	return f
}

// Float is a float64 that encodes as JSON with Round's digits, and NaN and ±Inf as null (JSON
// has no such numbers).
type Float float64

// MarshalJSON implements json.Marshaler.
func (f Float) MarshalJSON() ([]byte, error) { return appendFloat(nil, float64(f)), nil }

// AppendJSON appends v as Float writes it in JSON (Round's digits; null for NaN and ±Inf), for
// writers that encode long runs of values themselves.
func AppendJSON(b []byte, v float64) []byte { return appendFloat(b, v) }

func appendFloat(b []byte, v float64) []byte {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return append(b, "null"...)
	}
	return appendRounded(b, v)
}

// appendRounded appends what strconv.AppendFloat(b, Round(v), 'g', -1, 64) appends, from one
// correctly rounded conversion instead of three: the Digits significant digits of 'e' format,
// trailing zeros dropped (the shortest form of the rounded value), written as 'g' with the
// shortest form's rule (exponent form when the decimal exponent is below −4 or at least 6, as
// strconv decides for the shortest form). v must be finite.
func appendRounded(b []byte, v float64) []byte {
	if a := math.Abs(v); a != 0 && a < 0x1p-1022 {
		// Subnormal: fewer significant bits than Digits need, so the shortest form of the
		// rounded value may have fewer digits; take the long way.
		return strconv.AppendFloat(b, Round(v), 'g', -1, 64)
	}
	var tmp [32]byte
	e := strconv.AppendFloat(tmp[:0], v, 'e', Digits-1, 64) // [-]d.dddddde±XX
	if e[0] == '-' {
		b = append(b, '-')
		e = e[1:]
	}
	i := 0
	for e[i] != 'e' {
		i++
	}
	var dig [Digits]byte
	nd := 0
	for _, c := range e[:i] {
		if c != '.' {
			dig[nd] = c
			nd++
		}
	}
	for nd > 1 && dig[nd-1] == '0' {
		nd--
	}
	// the exponent: a sign and at least two digits, as strconv writes it
	x := 0
	for _, c := range e[i+2:] {
		x = 10*x + int(c-'0')
	}
	if e[i+1] == '-' {
		x = -x
	}
	d := dig[:nd]
	switch {
	case x < -4 || x >= 6: // exponent form, at least two exponent digits, as strconv writes
		b = append(b, d[0])
		if nd > 1 {
			b = append(b, '.')
			b = append(b, d[1:]...)
		}
		b = append(b, 'e')
		if x < 0 {
			b = append(b, '-')
			x = -x
		} else {
			b = append(b, '+')
		}
		if x < 10 {
			b = append(b, '0')
		}
		return strconv.AppendInt(b, int64(x), 10)
	case x < 0:
		b = append(b, '0', '.')
		for range -x - 1 {
			b = append(b, '0')
		}
		return append(b, d...)
	}
	if nd <= x+1 {
		b = append(b, d...)
		for range x + 1 - nd {
			b = append(b, '0')
		}
		return b
	}
	b = append(b, d[:x+1]...)
	b = append(b, '.')
	return append(b, d[x+1:]...)
}

// Floats converts a slice for encoding.
func Floats(v []float64) []Float {
	out := make([]Float, len(v))
	for i, x := range v {
		out[i] = Float(x)
	}
	return out
}

// CSV formats v for a CSV cell: Round's digits, and "" for NaN and ±Inf.
func CSV(v float64) string { return string(AppendCSV(nil, v)) }

// AppendCSV appends CSV(v) to b.
func AppendCSV(b []byte, v float64) []byte {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return b
	}
	return appendRounded(b, v)
}

// Marshal encodes v as encoding/json would (struct fields in order under their json tags,
// omitempty, "-", embedded structs, json.Marshaler and encoding.TextMarshaler values, maps with
// sorted keys), except that every float64 and float32 follows Float's rule, so that values
// holding NaN (no value) encode instead of failing. HTML characters are not escaped.
func Marshal(v any) ([]byte, error) {
	var e encoder
	if err := e.value(reflect.ValueOf(v)); err != nil {
		return nil, err
	}
	return e.buf.Bytes(), nil
}

type encoder struct{ buf bytes.Buffer }

var (
	marshalerType     = reflect.TypeFor[json.Marshaler]()
	textMarshalerType = reflect.TypeFor[encoding.TextMarshaler]()
)

func (e *encoder) str(s string) {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetEscapeHTML(false)
	_ = enc.Encode(s) // a string always encodes
	e.buf.Write(bytes.TrimSuffix(b.Bytes(), []byte("\n")))
}

func (e *encoder) value(v reflect.Value) error {
	if !v.IsValid() {
		e.buf.WriteString("null")
		return nil
	}
	t := v.Type()
	if t.Implements(marshalerType) && (v.Kind() != reflect.Pointer || !v.IsNil()) && t.Kind() != reflect.Interface {
		b, err := json.Marshal(v.Interface())
		if err != nil {
			return err
		}
		e.buf.Write(b)
		return nil
	}
	if t.Kind() != reflect.String && t.Implements(textMarshalerType) && (v.Kind() != reflect.Pointer || !v.IsNil()) {
		b, err := v.Interface().(encoding.TextMarshaler).MarshalText()
		if err != nil {
			return err
		}
		e.str(string(b))
		return nil
	}
	switch v.Kind() {
	case reflect.Float32, reflect.Float64:
		e.buf.Write(appendFloat(e.buf.AvailableBuffer(), v.Float()))
	case reflect.Bool:
		e.buf.WriteString(strconv.FormatBool(v.Bool()))
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		e.buf.WriteString(strconv.FormatInt(v.Int(), 10))
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64, reflect.Uintptr:
		e.buf.WriteString(strconv.FormatUint(v.Uint(), 10))
	case reflect.String:
		e.str(v.String())
	case reflect.Pointer, reflect.Interface:
		if v.IsNil() {
			e.buf.WriteString("null")
			return nil
		}
		return e.value(v.Elem())
	case reflect.Slice:
		if v.IsNil() {
			e.buf.WriteString("null")
			return nil
		}
		if t.Elem() == reflect.TypeFor[float64]() { // the columns of a check: no reflection per value
			e.buf.WriteByte('[')
			for i, x := range v.Interface().([]float64) {
				if i > 0 {
					e.buf.WriteByte(',')
				}
				e.buf.Write(appendFloat(e.buf.AvailableBuffer(), x))
			}
			e.buf.WriteByte(']')
			return nil
		}
		if t.Elem().Kind() == reflect.Uint8 {
			b, err := json.Marshal(v.Interface())
			if err != nil {
				return err
			}
			e.buf.Write(b)
			return nil
		}
		fallthrough
	case reflect.Array:
		e.buf.WriteByte('[')
		for i := range v.Len() {
			if i > 0 {
				e.buf.WriteByte(',')
			}
			if err := e.value(v.Index(i)); err != nil {
				return err
			}
		}
		e.buf.WriteByte(']')
	case reflect.Map:
		if v.IsNil() {
			e.buf.WriteString("null")
			return nil
		}
		if t.Key().Kind() != reflect.String {
			return fmt.Errorf("numjson: map key type %s is not a string", t.Key())
		}
		keys := v.MapKeys()
		slices.SortFunc(keys, func(a, b reflect.Value) int { return strings.Compare(a.String(), b.String()) })
		e.buf.WriteByte('{')
		for i, k := range keys {
			if i > 0 {
				e.buf.WriteByte(',')
			}
			e.str(k.String())
			e.buf.WriteByte(':')
			if err := e.value(v.MapIndex(k)); err != nil {
				return err
			}
		}
		e.buf.WriteByte('}')
	case reflect.Struct:
		e.buf.WriteByte('{')
		first := true
		if err := e.fields(v, &first); err != nil {
			return err
		}
		e.buf.WriteByte('}')
	default:
		return fmt.Errorf("numjson: cannot encode a %s", t)
	}
	return nil
}

// fields writes the fields of struct v (embedded structs' fields inline).
func (e *encoder) fields(v reflect.Value, first *bool) error {
	t := v.Type()
	for i := range t.NumField() {
		f := t.Field(i)
		tag := f.Tag.Get("json")
		if tag == "-" {
			continue
		}
		name, opts, _ := strings.Cut(tag, ",")
		fv := v.Field(i)
		if f.Anonymous && name == "" {
			ft := f.Type
			if ft.Kind() == reflect.Pointer {
				if fv.IsNil() {
					continue
				}
				ft, fv = ft.Elem(), fv.Elem()
			}
			if ft.Kind() == reflect.Struct {
				if err := e.fields(fv, first); err != nil {
					return err
				}
				continue
			}
		}
		if !f.IsExported() {
			continue
		}
		if name == "" {
			name = f.Name
		}
		if strings.Contains(","+opts+",", ",omitempty,") && empty(fv) {
			continue
		}
		if !*first {
			e.buf.WriteByte(',')
		}
		*first = false
		e.str(name)
		e.buf.WriteByte(':')
		if err := e.value(fv); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
	}
	return nil
}

// empty is encoding/json's omitempty test.
func empty(v reflect.Value) bool {
	switch v.Kind() {
	case reflect.Array, reflect.Map, reflect.Slice, reflect.String:
		return v.Len() == 0
	case reflect.Bool:
		return !v.Bool()
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		return v.Int() == 0
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64, reflect.Uintptr:
		return v.Uint() == 0
	case reflect.Float32, reflect.Float64:
		return v.Float() == 0
	case reflect.Interface, reflect.Pointer:
		return v.IsNil()
	}
	return false
}
