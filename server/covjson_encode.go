package server

import (
	"bytes"
	"encoding/json"
	"slices"
	"strconv"
	"sync"

	"ridgeflank/numjson"
)

// appendJSON appends c as encoding/json encodes it (writeJSON: HTML characters not escaped, a
// newline at the end), byte for byte (TestCoverageEncoding), without reflection over the parts
// every answer has: parameter descriptions come encoded once (covParameterOf), ranges are written
// value by value, and a provenance is encoded once per distinct provenance. Reflection over the
// whole coverage, with the validation encoding/json gives every float's MarshalJSON, took a
// quarter of a position query's CPU time.
func (c *coverage) appendJSON(b []byte) ([]byte, error) {
	var err error
	b = append(b, `{"type":`...)
	b = appendJSONString(b, c.Type)
	b = append(b, `,"domain":`...)
	if b, err = appendDomain(b, &c.Domain); err != nil {
		return b, err
	}
	b = append(b, `,"parameters":`...)
	if b, err = appendMap(b, c.Parameters, func(b []byte, p covParameter) ([]byte, error) {
		enc, err := p.encode()
		return append(b, enc...), err
	}); err != nil {
		return b, err
	}
	b = append(b, `,"ranges":`...)
	if b, err = appendMap(b, c.Ranges, func(b []byte, a covNdArray) ([]byte, error) { return appendNdArray(b, a), nil }); err != nil {
		return b, err
	}
	if c.Provenance != nil {
		b = append(b, `,"ridgeflank:provenance":`...)
		if b, err = appendProvenance(b, c.Provenance); err != nil {
			return b, err
		}
	}
	if c.Caution != "" {
		b = append(b, `,"ridgeflank:caution":`...)
		b = appendJSONString(b, c.Caution)
	}
	// The rest is rare in answers and small: encoding/json writes it.
	rest := []struct {
		name  string
		v     any
		empty bool
	}{
		{"ridgeflank:statistics", c.Stats, len(c.Stats) == 0},
		{"ridgeflank:samples", c.Extra, len(c.Extra) == 0},
		{"ridgeflank:flags", c.Flags, len(c.Flags) == 0},
		{"ridgeflank:repairs", c.Repairs, len(c.Repairs) == 0},
		{"ridgeflank:waypoints", c.Waypoints, len(c.Waypoints) == 0},
		{"ridgeflank:resolution", c.Resolution, c.Resolution == nil},
	}
	for _, f := range rest {
		if f.empty {
			continue
		}
		b = append(b, ',')
		b = appendJSONString(b, f.name)
		b = append(b, ':')
		if b, err = appendEncoded(b, f.v); err != nil {
			return b, err
		}
	}
	return append(b, '}', '\n'), nil
}

// appendEncoded appends v as writeJSON's encoder writes it (without the newline).
func appendEncoded(b []byte, v any) ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(v); err != nil {
		return b, err
	}
	return append(b, bytes.TrimSuffix(buf.Bytes(), []byte("\n"))...), nil
}

func appendDomain(b []byte, d *covDomain) ([]byte, error) {
	b = append(b, `{"type":`...)
	b = appendJSONString(b, d.Type)
	b = append(b, `,"domainType":`...)
	b = appendJSONString(b, d.DomainType)
	b = append(b, `,"axes":`...)
	b, err := appendMap(b, d.Axes, appendAxis)
	if err != nil {
		return b, err
	}
	b = append(b, `,"referencing":`...)
	if len(d.Referencing) == 1 && len(crs84) == 1 && &d.Referencing[0] == &crs84[0] {
		b = append(b, crs84JSON()...)
	} else if b, err = appendEncoded(b, d.Referencing); err != nil {
		return b, err
	}
	return append(b, '}'), nil
}

// crs84JSON is the encoding of crs84, made once.
var crs84JSON = sync.OnceValue(func() []byte {
	b, _ := appendEncoded(nil, crs84)
	return b
})

func appendAxis(b []byte, a covAxis) ([]byte, error) {
	first := true
	sep := func() {
		if !first {
			b = append(b, ',')
		}
		first = false
	}
	b = append(b, '{')
	switch v := a.Values.(type) {
	case nil:
	case []jsonFloat: // a non-nil interface is not omitted, even holding an empty or nil slice
		sep()
		b = appendList(append(b, `"values":`...), v, func(b []byte, x jsonFloat) []byte {
			return numjson.AppendJSON(b, float64(x))
		})
	case [][2]jsonFloat:
		sep()
		b = appendList(append(b, `"values":`...), v, func(b []byte, x [2]jsonFloat) []byte {
			b = numjson.AppendJSON(append(b, '['), float64(x[0]))
			return append(numjson.AppendJSON(append(b, ','), float64(x[1])), ']')
		})
	default:
		// Any other kind of values: encoding/json for the whole axis.
		enc, err := appendEncoded(nil, a)
		if err != nil {
			return b, err
		}
		return append(b[:len(b)-1], enc...), nil
	}
	if a.DataType != "" {
		sep()
		b = append(b, `"dataType":`...)
		b = appendJSONString(b, a.DataType)
	}
	if len(a.Coordinates) > 0 {
		sep()
		b = append(b, `"coordinates":[`...)
		for i, s := range a.Coordinates {
			if i > 0 {
				b = append(b, ',')
			}
			b = appendJSONString(b, s)
		}
		b = append(b, ']')
	}
	if a.Start != nil {
		sep()
		b = append(b, `"start":`...)
		b = appendPlainFloat(b, *a.Start)
	}
	if a.Stop != nil {
		sep()
		b = append(b, `"stop":`...)
		b = appendPlainFloat(b, *a.Stop)
	}
	if a.Num != 0 {
		sep()
		b = append(b, `"num":`...)
		b = strconv.AppendInt(b, int64(a.Num), 10)
	}
	return append(b, '}'), nil
}

// appendPlainFloat appends a float64 as encoding/json does (finite values only reach it: the
// axis bounds of a lattice).
func appendPlainFloat(b []byte, v float64) []byte {
	enc, err := json.Marshal(v)
	if err != nil {
		return append(b, "null"...)
	}
	return append(b, enc...)
}

func appendNdArray(b []byte, a covNdArray) []byte {
	b = append(b, `{"type":`...)
	b = appendJSONString(b, a.Type)
	b = append(b, `,"dataType":`...)
	b = appendJSONString(b, a.DataType)
	if len(a.AxisNames) > 0 {
		b = append(b, `,"axisNames":[`...)
		for i, s := range a.AxisNames {
			if i > 0 {
				b = append(b, ',')
			}
			b = appendJSONString(b, s)
		}
		b = append(b, ']')
	}
	if len(a.Shape) > 0 {
		b = append(b, `,"shape":[`...)
		for i, n := range a.Shape {
			if i > 0 {
				b = append(b, ',')
			}
			b = strconv.AppendInt(b, int64(n), 10)
		}
		b = append(b, ']')
	}
	b = append(b, `,"values":`...)
	switch g := a.Values.grid; {
	case g != nil && g.token != nil: // writeJSON splices the values in
		b = append(b, g.token...)
	case g != nil:
		b = appendValues32(append(b, '['), g.data, true)
	default:
		b = append(b, '[')
		for i, x := range a.Values.points {
			if i > 0 {
				b = append(b, ',')
			}
			b = numjson.AppendJSON(b, x)
		}
		b = append(b, ']')
	}
	return append(b, '}')
}

func appendProvenance(b []byte, p *Provenance) ([]byte, error) {
	e, err := provenanceEntry(p)
	if err != nil {
		return b, err
	}
	return append(b, e.json...), nil
}

// appendJSONString appends s as a JSON string as writeJSON's encoder writes it.
func appendJSONString(b []byte, s string) []byte {
	for i := 0; i < len(s); i++ {
		if c := s[i]; c < 0x20 || c == '"' || c == '\\' || c >= 0x80 {
			enc, _ := appendEncoded(nil, s) // a string always encodes
			return append(b, enc...)
		}
	}
	b = append(b, '"')
	b = append(b, s...)
	return append(b, '"')
}

// appendList appends v as encoding/json encodes a slice (null when nil), each element by val.
func appendList[E any](b []byte, v []E, val func([]byte, E) []byte) []byte {
	if v == nil {
		return append(b, "null"...)
	}
	b = append(b, '[')
	for i, x := range v {
		if i > 0 {
			b = append(b, ',')
		}
		b = val(b, x)
	}
	return append(b, ']')
}

// appendMap appends m as encoding/json encodes a map (null when nil, keys sorted), each value
// by val.
func appendMap[V any](b []byte, m map[string]V, val func([]byte, V) ([]byte, error)) ([]byte, error) {
	if m == nil {
		return append(b, "null"...), nil
	}
	b = append(b, '{')
	var err error
	for i, k := range sortedKeys(m) {
		if i > 0 {
			b = append(b, ',')
		}
		b = appendJSONString(b, k)
		b = append(b, ':')
		if b, err = val(b, m[k]); err != nil {
			return b, err
		}
	}
	return append(b, '}'), nil
}

func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	return keys
}
