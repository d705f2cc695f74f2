package survey

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"ridgeflank/geo"
	"ridgeflank/numjson"
)

// encodeFixture is a check written out by hand to exercise the encoders (its values are
// placeholders for the round trip, not the result of a check). The second line crosses the
// antimeridian eastward between its 2nd and 3rd samples.
func encodeFixture() *Check {
	nan := math.NaN()
	samples := func(lon, lat []float64, name string) Samples {
		n := len(lon)
		col := func(base float64) []float64 {
			v := make([]float64, n)
			for i := range v {
				v[i] = base + float64(i)*0.5
			}
			return v
		}
		src := make([]string, n)
		for i := range src {
			src[i] = SourcePredicted
		}
		src[0] = SourceObserved
		depth := col(3000)
		depth[n-1] = nan
		src[n-1] = SourceNone
		return Samples{Lon: lon, Lat: lat, Leg: make([]int, n), DistanceKm: col(0), DistanceNmi: col(0.1), TimeH: col(0.2),
			ExpectedDepthM: depth, DepthSource: src, UncertaintyM: col(50), ObservedDepthM: col(3001), PredictedDepthM: col(3002),
			ResidualDepthM: col(-1), AgeMa: col(10), SlopeDeg: col(1), SwathWidthM: col(9000), SoundSpeedMS: col(1500),
			TwoWayTimeS: col(4), TwoWayTimeOuterS: col(5), MaxPingRateHz: col(0.25), SoundingSpacingM: col(16)}
	}
	p := Plan{Name: "Fixture, \"two lines\"", Lines: []Line{
		{Name: "A", Waypoints: []geo.Waypoint{{Lon: -30.5, Lat: 10.25, Name: "A1"}, {Lon: -30, Lat: 10.5, Name: "A2"}}},
		{Name: "B,1", Waypoints: []geo.Waypoint{{Lon: 179.5, Lat: -20}, {Lon: -179.5, Lat: -21}}},
	}, Settings: Settings{Dataset: "demo"}}
	return &Check{
		Plan:    p.WithDefaults(),
		Caution: "Expected depths are model estimates and gridded data, not for navigation.",
		Model:   "gdh1",
		Label:   "SYNTHETIC",
		Lines: []LineResult{
			{Name: "A", LengthKm: 60, LengthNmi: 32.4, MinDepthM: 3000, MeanDepthM: 3000.5, MaxDepthM: 3001, Legs: []Leg{{}},
				Samples: samples([]float64{-30.5, -30.25, -30}, []float64{10.25, 10.375, 10.5}, "A")},
			{Name: "B,1", LengthKm: 110, LengthNmi: 59.4, MinDepthM: nan, MeanDepthM: nan, MaxDepthM: nan, Legs: []Leg{{}},
				Samples: samples([]float64{179.5, 179.9, -179.9, -179.5}, []float64{-20, -20.4, -20.6, -21}, "B")},
		},
		Hazards: []Hazard{{Kind: HazardNoData, Line: 1, LineName: "B,1", FromSample: 3, ToSample: 3, Lon: -179.5, Lat: -21,
			DistanceKm: 1.5, DepthM: nan, Value: nan, Limit: nan, Reason: "no expected depth"}},
		Totals: Totals{LengthKm: 170, Hazards: 1, MinDepthM: 3000, MaxDepthM: 3001, MeanDepthM: 3000.5},
	}
}

// The CSV read back with encoding/csv (RFC 4180) holds, column by column, the check's samples.
func TestWriteCSVRoundTrip(t *testing.T) {
	c := encodeFixture()
	var buf bytes.Buffer
	if err := WriteCSV(&buf, c); err != nil {
		t.Fatal(err)
	}
	if !bytes.HasPrefix(buf.Bytes(), []byte("line,line_name,sample,lon_deg,lat_deg,")) {
		t.Fatalf("header row must come first; got %q", strings.SplitN(buf.String(), "\n", 2)[0])
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatalf("encoding/csv cannot read the CSV: %v", err)
	}
	header := recs[0]
	if !reflect.DeepEqual(header, CSVHeader(c)) {
		t.Fatalf("header %v, want %v", header, CSVHeader(c))
	}
	// Units in every header that carries one: all except indices, names, source and caution.
	unitless := map[string]bool{"line": true, "line_name": true, "sample": true, "leg": true, "depth_source": true, "caution": true,
		"dataset": true, "model": true, "data_label": true}
	units := []string{"_deg", "_km", "_nmi", "_h", "_m", "_ma", "_m_s", "_s", "_hz"}
	for _, h := range header {
		ok := unitless[h]
		for _, u := range units {
			ok = ok || strings.HasSuffix(h, u)
		}
		if !ok {
			t.Errorf("header %q carries no unit", h)
		}
	}
	col := map[string]int{}
	for i, h := range header {
		col[h] = i
	}
	rows := recs[1:]
	if want := len(c.Lines[0].Samples.Lon) + len(c.Lines[1].Samples.Lon); len(rows) != want {
		t.Fatalf("%d data rows, want %d", len(rows), want)
	}
	if rows[0][col["caution"]] != c.Caution {
		t.Errorf("first data row caution %q, want %q", rows[0][col["caution"]], c.Caution)
	}
	for _, r := range rows[1:] {
		if r[col["caution"]] != "" {
			t.Fatalf("caution repeated below the first data row: %v", r)
		}
	}
	for _, r := range rows {
		if r[col["dataset"]] != c.Plan.Settings.Dataset || r[col["model"]] != c.Model || r[col["data_label"]] != c.Label {
			t.Fatalf("row %v: dataset/model/label %q/%q/%q on every row", r, c.Plan.Settings.Dataset, c.Model, c.Label)
		}
	}
	r := 0
	for li, l := range c.Lines {
		sv := reflect.ValueOf(l.Samples)
		for i := range l.Samples.Lon {
			row := rows[r]
			r++
			t.Run(fmt.Sprintf("line%d/sample%d", li, i), func(t *testing.T) {
				if row[col["line"]] != strconv.Itoa(li) || row[col["line_name"]] != l.Name || row[col["sample"]] != strconv.Itoa(i) {
					t.Fatalf("row %v: line/name/sample wrong", row)
				}
				for _, sc := range sampleColumns() {
					got := row[col[sc.header]]
					v := sv.Field(sc.field).Index(i)
					switch v.Kind() {
					case reflect.Float64:
						want := v.Float()
						if math.IsNaN(want) {
							if got != "" {
								t.Errorf("%s: NaN written as %q, want an empty cell", sc.header, got)
							}
							continue
						}
						f, err := strconv.ParseFloat(got, 64)
						if err != nil || math.Abs(f-want) > 1e-6*math.Max(1, math.Abs(want)) { // 7 significant digits
							t.Errorf("%s = %q, want %g", sc.header, got, want)
						}
					default:
						if want := fmt.Sprint(v.Interface()); got != want {
							t.Errorf("%s = %q, want %q", sc.header, got, want)
						}
					}
				}
			})
		}
	}
}

// The JSON answer has null where a value is NaN, and decodes back into a Check.
func TestWriteJSON(t *testing.T) {
	c := encodeFixture()
	var buf bytes.Buffer
	if err := WriteJSON(&buf, c); err != nil {
		t.Fatal(err)
	}
	var back Check
	if err := json.Unmarshal(buf.Bytes(), &back); err != nil {
		t.Fatalf("JSON does not decode: %v", err)
	}
	if !strings.Contains(buf.String(), `"min_depth_m":null`) {
		t.Error("NaN line minimum depth should be null")
	}
	if back.Caution != c.Caution || len(back.Lines) != 2 || back.Lines[1].Samples.Lon[2] != numjson.Round(-179.9) {
		t.Errorf("decoded check differs: %+v", back.Lines)
	}
}

// validateRFC7946 checks the members RFC 7946 requires of a FeatureCollection: "type" (§3.3),
// features each with "type":"Feature", a "geometry" and a "properties" member (§3.2); positions
// of two numbers, longitude first within −180..180 and latitude within −90..90 (§3.1.1, §4); a
// LineString of two or more positions (§3.1.4); no "crs" member (§4, removed from GeoJSON).
func validateRFC7946(t *testing.T, data []byte) {
	t.Helper()
	var fc map[string]json.RawMessage
	if err := json.Unmarshal(data, &fc); err != nil {
		t.Fatalf("not JSON: %v", err)
	}
	if string(fc["type"]) != `"FeatureCollection"` {
		t.Fatalf("type %s", fc["type"])
	}
	if _, ok := fc["crs"]; ok {
		t.Error("RFC 7946 has no crs member")
	}
	var feats []map[string]json.RawMessage
	if err := json.Unmarshal(fc["features"], &feats); err != nil {
		t.Fatalf("features: %v", err)
	}
	pos := func(p []float64) {
		if len(p) < 2 || p[0] < -180 || p[0] > 180 || p[1] < -90 || p[1] > 90 {
			t.Errorf("bad position %v", p)
		}
	}
	for i, f := range feats {
		if string(f["type"]) != `"Feature"` {
			t.Errorf("feature %d type %s", i, f["type"])
		}
		if _, ok := f["properties"]; !ok {
			t.Errorf("feature %d has no properties member", i)
		}
		var g struct {
			Type        string          `json:"type"`
			Coordinates json.RawMessage `json:"coordinates"`
		}
		if err := json.Unmarshal(f["geometry"], &g); err != nil {
			t.Fatalf("feature %d geometry: %v", i, err)
		}
		switch g.Type {
		case "Point":
			var p []float64
			_ = json.Unmarshal(g.Coordinates, &p)
			pos(p)
		case "LineString":
			var l [][]float64
			_ = json.Unmarshal(g.Coordinates, &l)
			if len(l) < 2 {
				t.Errorf("feature %d LineString of %d positions", i, len(l))
			}
			for _, p := range l {
				pos(p)
			}
		case "MultiLineString":
			var ml [][][]float64
			_ = json.Unmarshal(g.Coordinates, &ml)
			for _, l := range ml {
				if len(l) < 2 {
					t.Errorf("feature %d MultiLineString part of %d positions", i, len(l))
				}
				for _, p := range l {
					pos(p)
				}
			}
		default:
			t.Errorf("feature %d: unexpected geometry %q", i, g.Type)
		}
	}
}

func TestWriteGeoJSON(t *testing.T) {
	c := encodeFixture()
	var buf bytes.Buffer
	if err := WriteGeoJSON(&buf, c); err != nil {
		t.Fatal(err)
	}
	validateRFC7946(t, buf.Bytes())
	fc, err := geojson.UnmarshalFeatureCollection(buf.Bytes())
	if err != nil {
		t.Fatalf("orb/geojson cannot read it: %v", err)
	}
	if fc.ExtraMembers["caution"] != c.Caution {
		t.Errorf("caution foreign member %v", fc.ExtraMembers["caution"])
	}
	if tot, ok := fc.ExtraMembers["totals"].(map[string]any); !ok || tot["length_km"] != 170.0 {
		t.Errorf("totals foreign member %v", fc.ExtraMembers["totals"])
	}
	// 2 lines, 4 waypoints, 1 hazard.
	if len(fc.Features) != 7 {
		t.Fatalf("%d features, want 7", len(fc.Features))
	}
	kinds := map[string]int{}
	for _, f := range fc.Features {
		kinds[f.Properties.MustString("feature_kind", "")]++
	}
	if kinds["line"] != 2 || kinds["waypoint"] != 4 || kinds["hazard"] != 1 {
		t.Errorf("feature kinds %v", kinds)
	}
	tests := []struct {
		name  string
		check func(t *testing.T)
	}{
		{"line A is a LineString, lon first", func(t *testing.T) {
			ls, ok := fc.Features[0].Geometry.(orb.LineString)
			if !ok || len(ls) != 3 || ls[0] != (orb.Point{-30.5, 10.25}) {
				t.Errorf("geometry %v", fc.Features[0].Geometry)
			}
			if fc.Features[0].Properties["length_nmi"] != 32.4 || fc.Features[0].Properties["name"] != "A" {
				t.Errorf("properties %v", fc.Features[0].Properties)
			}
		}},
		{"line B is cut at the antimeridian (RFC 7946 §3.1.9)", func(t *testing.T) {
			ml, ok := fc.Features[1].Geometry.(orb.MultiLineString)
			if !ok || len(ml) != 2 {
				t.Fatalf("geometry %v", fc.Features[1].Geometry)
			}
			// Crossing between (179.9, −20.4) and (−179.9, −20.6): halfway in longitude, lat −20.5.
			end, start := ml[0][len(ml[0])-1], ml[1][0]
			if end[0] != 180 || start[0] != -180 || math.Abs(end[1]+20.5) > 1e-6 || math.Abs(start[1]+20.5) > 1e-6 {
				t.Errorf("cut at %v / %v, want (180, −20.5) / (−180, −20.5)", end, start)
			}
			if fc.Features[1].Properties["min_depth_m"] != nil {
				t.Errorf("NaN minimum depth should be null, got %v", fc.Features[1].Properties["min_depth_m"])
			}
		}},
		{"waypoint named", func(t *testing.T) {
			f := fc.Features[2]
			if f.Geometry.(orb.Point) != (orb.Point{-30.5, 10.25}) || f.Properties["name"] != "A1" {
				t.Errorf("waypoint %v %v", f.Geometry, f.Properties)
			}
		}},
		{"hazard", func(t *testing.T) {
			f := fc.Features[6]
			if f.Properties["kind"] != HazardNoData || f.Geometry.(orb.Point) != (orb.Point{-179.5, -21}) {
				t.Errorf("hazard %v %v", f.Geometry, f.Properties)
			}
		}},
	}
	for _, tc := range tests {
		t.Run(tc.name, tc.check)
	}
}

func TestWriteUnknownFormat(t *testing.T) {
	if err := Write(&bytes.Buffer{}, encodeFixture(), Format("xls")); err == nil {
		t.Fatal("an unknown format must fail")
	}
}

// Lists a check leaves empty are [] in JSON, not null.
func TestWriteJSONEmptyLists(t *testing.T) {
	c := encodeFixture()
	c.Hazards, c.Transits, c.Gaps = nil, nil, nil
	var buf bytes.Buffer
	if err := WriteJSON(&buf, c); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{`"transits":[]`, `"hazards":[]`, `"coverage_gaps":[]`} {
		if !strings.Contains(buf.String(), k) {
			t.Errorf("want %s in %s", k, trunc(buf.String()))
		}
	}
}

func trunc(s string) string {
	if len(s) > 300 {
		return s[:300] + "…"
	}
	return s
}

// Cells are quoted exactly as encoding/csv.Writer quotes them (the reference writer of RFC 4180
// records).
func TestCSVFieldQuotingMatchesEncodingCSV(t *testing.T) {
	for _, s := range []string{"", "QX-1", "a,b", `say "hi"`, " lead", "\tlead", "line\nbreak", "cr\r", `\.`, "\u00a0nbsp", "tail ", "ünïcode"} {
		t.Run(fmt.Sprintf("%q", s), func(t *testing.T) {
			var b bytes.Buffer
			w := csv.NewWriter(&b)
			_ = w.Write([]string{s})
			w.Flush()
			if want := strings.TrimSuffix(b.String(), "\n"); csvField(s) != want {
				t.Errorf("csvField(%q) = %q, encoding/csv writes %q", s, csvField(s), want)
			}
		})
	}
}
