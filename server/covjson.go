package server

import (
	"bytes"
	"encoding/json"
	"sync"

	"ridgeflank/evaluate"
	"ridgeflank/geo"
)

// CoverageJSON 1.0 (OGC Community Standard 21-069r2) documents, built as
// plain structs so encoding is predictable. Custom members carry the
// "ridgeflank:" prefix, as the standard recommends for extensions.

type covI18n map[string]string

type covUnit struct {
	Label  covI18n   `json:"label"`
	Symbol covSymbol `json:"symbol"`
}

type covSymbol struct {
	Value string `json:"value"`
	Type  string `json:"type"`
}

type covObservedProperty struct {
	ID          string  `json:"id,omitempty"`
	Label       covI18n `json:"label"`
	Description covI18n `json:"description,omitempty"`
}

type covParameter struct {
	Type             string              `json:"type"`
	Description      covI18n             `json:"description,omitempty"`
	ObservedProperty covObservedProperty `json:"observedProperty"`
	Unit             covUnit             `json:"unit"`
	// Field is the parameter's name, with its unit, in CSV columns and GeoJSON properties.
	Field string `json:"ridgeflank:field,omitempty"`
	// encoded is the JSON of the fields above, made once by covParameterOf for the coverage
	// encoder (every answer repeats a parameter's description). encoding/json ignores it.
	encoded []byte
}

// encode is p's JSON as writeJSON's encoder writes it.
func (p covParameter) encode() ([]byte, error) {
	if p.encoded != nil {
		return p.encoded, nil
	}
	return marshalNoEscape(p)
}

// marshalNoEscape is json.Marshal without HTML escaping, as writeJSON writes.
func marshalNoEscape(v any) ([]byte, error) {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(v); err != nil {
		return nil, err
	}
	return bytes.TrimSuffix(b.Bytes(), []byte("\n")), nil
}

type covRefSystem struct {
	Type string `json:"type"`
	ID   string `json:"id"`
}

type covReferencing struct {
	Coordinates []string     `json:"coordinates"`
	System      covRefSystem `json:"system"`
}

type covAxis struct {
	Values      any      `json:"values,omitempty"`
	DataType    string   `json:"dataType,omitempty"`
	Coordinates []string `json:"coordinates,omitempty"`
	Start       *float64 `json:"start,omitempty"`
	Stop        *float64 `json:"stop,omitempty"`
	Num         int      `json:"num,omitempty"`
}

type covDomain struct {
	Type        string             `json:"type"`
	DomainType  string             `json:"domainType"`
	Axes        map[string]covAxis `json:"axes"`
	Referencing []covReferencing   `json:"referencing"`
}

type covNdArray struct {
	Type      string   `json:"type"`
	DataType  string   `json:"dataType"`
	AxisNames []string `json:"axisNames,omitempty"`
	Shape     []int    `json:"shape,omitempty"`
	Values    ndValues `json:"values"`
}

type coverage struct {
	Type       string                  `json:"type"`
	Domain     covDomain               `json:"domain"`
	Parameters map[string]covParameter `json:"parameters"`
	Ranges     map[string]covNdArray   `json:"ranges"`
	Provenance *Provenance             `json:"ridgeflank:provenance,omitempty"`
	Caution    string                  `json:"ridgeflank:caution,omitempty"`
	Stats      map[string]unitStats    `json:"ridgeflank:statistics,omitempty"`
	Extra      map[string]any          `json:"ridgeflank:samples,omitempty"`
	// Flags lists values refused as physically impossible, by parameter, input and reason.
	Flags []evaluate.Flag `json:"ridgeflank:flags,omitempty"`
	// Repairs says what was repaired to make the query's polygon valid.
	Repairs []string `json:"ridgeflank:repairs,omitempty"`
	// Waypoints are a trajectory's waypoints with their names and distance along the track.
	Waypoints []evaluate.WaypointAt `json:"ridgeflank:waypoints,omitempty"`
	// Resolution states the spacing an area answer was given at when it is not the one asked.
	Resolution *resolutionUsed `json:"ridgeflank:resolution,omitempty"`

	grids []*gridValues // the gridded ranges' values, for writeJSON to write itself
}

// valueGrids lists the gridded values of a coverage (writeJSON's streamedValues).
func (c coverage) valueGrids() []*gridValues { return c.grids }

// resolutionUsed is the CoverageJSON member ridgeflank:resolution: the spacing used and why it
// differs from the one asked (evaluate.AreaResult.ResolutionNote).
type resolutionUsed struct {
	XDeg float64 `json:"x_deg"`
	YDeg float64 `json:"y_deg"`
	Note string  `json:"note"`
}

// unitStats is geo.Stats as the API writes it (CoverageJSON member
// ridgeflank:statistics, one per parameter): every field that carries the
// parameter's unit has the unit in its name, e.g. mean_m, p95_ma,
// median_mw_m2, max_km and the histogram's edges_m. count, no_data and the
// histogram's counts are cell counts; weight_sum (Σ cos latitude, the weight
// regionStats uses) and area_fractions are dimensionless.
type unitStats struct {
	Unit  string // name suffix, unitSuffix of the parameter's UCUM unit
	Stats geo.Stats
	// MeanUnc is the uncertainty of the mean from the age uncertainty (nil: none), written as
	// mean_uncertainty_independent_<unit> and mean_uncertainty_correlated_<unit>.
	MeanUnc *evaluate.MeanUncertainty
}

func newUnitStats(st geo.Stats, p evaluate.Parameter) unitStats {
	return unitStats{Unit: evaluate.UnitSuffix(p.Unit), Stats: st}
}

// MarshalJSON writes the fields in a fixed order, with unit-suffixed names
// where they carry the unit. Values are as computed (not rounded).
func (u unitStats) MarshalJSON() ([]byte, error) {
	s, sfx := u.Stats, "_"+u.Unit
	obj := orderedJSON{
		{"count", s.Count}, {"no_data", s.NoData}, {"weight_sum", s.WeightSum},
		{"mean" + sfx, s.Mean}, {"std" + sfx, s.Std}, {"min" + sfx, s.Min}, {"max" + sfx, s.Max},
		{"median" + sfx, s.Median}, {"p05" + sfx, s.P05}, {"p25" + sfx, s.P25}, {"p75" + sfx, s.P75}, {"p95" + sfx, s.P95},
		{"percentile_error_bound" + sfx, s.PercentileErrorBound},
	}
	if m := u.MeanUnc; m != nil {
		obj = append(obj, member{"mean_uncertainty_independent" + sfx, m.Independent}, member{"mean_uncertainty_correlated" + sfx, m.Correlated})
	}
	if h := s.Histogram; h != nil {
		obj = append(obj, member{"histogram", orderedJSON{
			{"edges" + sfx, h.Edges}, {"counts", h.Counts}, {"area_fractions", h.AreaFractions},
			{"below", h.Below}, {"above", h.Above},
		}})
	}
	return obj.MarshalJSON()
}

// member is one name and value of an orderedJSON object.
type member struct {
	Name  string
	Value any
}

// orderedJSON is a JSON object whose members keep their order.
type orderedJSON []member

func (o orderedJSON) MarshalJSON() ([]byte, error) {
	var b bytes.Buffer
	b.WriteByte('{')
	for i, m := range o {
		if i > 0 {
			b.WriteByte(',')
		}
		k, err := json.Marshal(m.Name)
		if err != nil {
			return nil, err
		}
		v, err := json.Marshal(m.Value)
		if err != nil {
			return nil, err
		}
		b.Write(k)
		b.WriteByte(':')
		b.Write(v)
	}
	b.WriteByte('}')
	return b.Bytes(), nil
}

// crs84 is the lon/lat WGS84 CRS with longitude first.
var crs84 = []covReferencing{{
	Coordinates: []string{"x", "y"},
	System:      covRefSystem{Type: "GeographicCRS", ID: "http://www.opengis.net/def/crs/OGC/1.3/CRS84"},
}}

func covParameters(ps []evaluate.Parameter) map[string]covParameter {
	out := make(map[string]covParameter, len(ps))
	for _, p := range ps {
		out[p.ID] = covParameterOf(p)
	}
	return out
}

// covParams holds each parameter's description, made once (its maps are only read afterwards).
var covParams sync.Map // evaluate.Parameter → covParameter

func covParameterOf(p evaluate.Parameter) covParameter {
	if v, ok := covParams.Load(p); ok {
		return v.(covParameter)
	}
	c := covParameter{
		Type:             "Parameter",
		Description:      covI18n{"en": p.Description},
		ObservedProperty: covObservedProperty{ID: p.ID, Label: covI18n{"en": p.Label}},
		Unit:             covUnit{Label: covI18n{"en": p.UnitLabel}, Symbol: covSymbol{Value: p.Unit, Type: "http://www.opengis.net/def/uom/UCUM/"}},
		Field:            evaluate.FieldName(p),
	}
	c.encoded, _ = c.encode()
	covParams.Store(p, c)
	return c
}

func f64(v float64) *float64 { return &v }

// pointCoverage is a Point (one position) or MultiPoint coverage; values[i]
// holds parameter i's value at every position.
func pointCoverage(lons, lats []float64, ps []evaluate.Parameter, values [][]float64) coverage {
	c := coverage{Type: "Coverage", Parameters: covParameters(ps), Ranges: map[string]covNdArray{}}
	if len(lons) == 1 {
		c.Domain = covDomain{Type: "Domain", DomainType: "Point", Referencing: crs84, Axes: map[string]covAxis{
			"x": {Values: []jsonFloat{jsonFloat(lons[0])}},
			"y": {Values: []jsonFloat{jsonFloat(lats[0])}},
		}}
		for i, p := range ps {
			c.Ranges[p.ID] = covNdArray{Type: "NdArray", DataType: "float", Values: ndValues{points: values[i]}}
		}
		return c
	}
	tuples := make([][2]jsonFloat, len(lons))
	for i := range lons {
		tuples[i] = [2]jsonFloat{jsonFloat(lons[i]), jsonFloat(lats[i])}
	}
	c.Domain = covDomain{Type: "Domain", DomainType: "MultiPoint", Referencing: crs84, Axes: map[string]covAxis{
		"composite": {DataType: "tuple", Coordinates: []string{"x", "y"}, Values: tuples},
	}}
	for i, p := range ps {
		c.Ranges[p.ID] = covNdArray{Type: "NdArray", DataType: "float", AxisNames: []string{"composite"}, Shape: []int{len(lons)}, Values: ndValues{points: values[i]}}
	}
	return c
}

// gridCoverage is a Grid coverage on g's lattice with one grid per parameter.
func gridCoverage(lattice *geo.Grid, ps []evaluate.Parameter, grids []*geo.Grid) coverage {
	c := coverage{Type: "Coverage", Parameters: covParameters(ps), Ranges: map[string]covNdArray{}}
	west, east := geo.LonTo180(lattice.Lon(0)), lattice.Lon(lattice.NX-1)
	east = west + (east - lattice.Lon(0)) // keep x monotonic across the antimeridian
	c.Domain = covDomain{Type: "Domain", DomainType: "Grid", Referencing: crs84, Axes: map[string]covAxis{
		"x": {Start: f64(roundSig(west)), Stop: f64(roundSig(east)), Num: lattice.NX},
		"y": {Start: f64(roundSig(lattice.Lat(0))), Stop: f64(roundSig(lattice.Lat(lattice.NY - 1))), Num: lattice.NY},
	}}
	for i, p := range ps {
		g := &gridValues{data: grids[i].Data}
		c.grids = append(c.grids, g)
		c.Ranges[p.ID] = covNdArray{Type: "NdArray", DataType: "float", AxisNames: []string{"y", "x"}, Shape: []int{lattice.NY, lattice.NX}, Values: ndValues{grid: g}}
	}
	return c
}
