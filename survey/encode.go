package survey

import (
	"bufio"
	"fmt"
	"io"
	"reflect"
	"ridgeflank/csvfacts"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/numjson"
)

// Format is an encoding of a check's answer. The CLI and the HTTP API write every format
// through Write, so that a plan checked either way gives the same file.
type Format string

// Formats of Write. The printable report (PDF, PNG) is package report's.
const (
	FormatJSON    Format = "json"
	FormatCSV     Format = "csv"
	FormatGeoJSON Format = "geojson"
)

// MediaType is the IANA media type of f.
func (f Format) MediaType() string {
	switch f {
	case FormatCSV:
		return "text/csv; charset=utf-8" // RFC 4180, header=present
	case FormatGeoJSON:
		return "application/geo+json" // RFC 7946 §12
	}
	return "application/json"
}

// Write encodes c in format f (see WriteJSON, WriteCSV and WriteGeoJSON).
func Write(w io.Writer, c *Check, f Format) error {
	switch f {
	case FormatJSON:
		return WriteJSON(w, c)
	case FormatCSV:
		return WriteCSV(w, c)
	case FormatGeoJSON:
		return WriteGeoJSON(w, c)
	}
	return fault.New(fault.InvalidParameter, "f", "unknown check format %q (want json, csv or geojson)", string(f))
}

// WriteJSON writes c as JSON under the json tags of Check, numbers by numjson's rule (seven
// significant digits; NaN, meaning no value, as null), followed by a newline. Lists the check
// left empty (no transits for one line, no hazards) are written [] rather than null.
func WriteJSON(w io.Writer, c *Check) error {
	cc := *c
	if cc.Lines == nil {
		cc.Lines = []LineResult{}
	}
	if cc.Transits == nil {
		cc.Transits = []Transit{}
	}
	if cc.Hazards == nil {
		cc.Hazards = []Hazard{}
	}
	if cc.Gaps == nil {
		cc.Gaps = []Gap{}
	}
	b, err := numjson.Marshal(&cc)
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// sampleColumn is one column of Samples as the CSV writes it.
type sampleColumn struct {
	header string
	field  int // index in Samples
}

// csvRename gives the CSV header of Samples columns whose JSON name carries no unit.
var csvRename = map[string]string{"lon": "lon_deg", "lat": "lat_deg"}

// sampleColumns lists every column of Samples in field order (so a column added to Samples is
// written without a change here).
func sampleColumns() []sampleColumn {
	t := reflect.TypeFor[Samples]()
	cols := make([]sampleColumn, 0, t.NumField())
	for i := range t.NumField() {
		name, _, _ := strings.Cut(t.Field(i).Tag.Get("json"), ",")
		if name == "" || name == "-" {
			continue
		}
		if r, ok := csvRename[name]; ok {
			name = r
		}
		cols = append(cols, sampleColumn{header: name, field: i})
	}
	return cols
}

// CSVFacts are what the check's CSV says about itself (csvfacts.Facts, the rule every CSV
// answer follows): dataset, model and data label on every row, the caution on the first.
func (c *Check) CSVFacts() csvfacts.Facts {
	return csvfacts.Facts{Dataset: c.Plan.Settings.Dataset, Model: c.Model, Label: c.Label, Caution: c.Caution}
}

// CSVHeader is the header row WriteCSV writes for c: the line's index ("line", 0-based, as in
// Plan.Lines) and name ("line_name"), the sample's index along the line ("sample"), then every
// column of Samples in order (lon_deg, lat_deg, leg, distance_km, …; the leg is the 0-based
// index of the leg), and last the fact columns of c.CSVFacts() (dataset, model, data_label when
// synthetic, caution).
func CSVHeader(c *Check) []string {
	h := []string{"line", "line_name", "sample"}
	for _, col := range sampleColumns() {
		h = append(h, col.header)
	}
	fs, _ := c.CSVFacts().Columns() // no provenance: nothing to encode, no error
	for _, f := range fs {
		h = append(h, f.Name)
	}
	return h
}

// WriteCSV writes c's samples as CSV (RFC 4180): the header row of CSVHeader first, then one row
// per sample, lines in order. There are no comment lines, so that any CSV reader (GDAL's, a
// spreadsheet's, Python's csv.DictReader) reads the file as it is; what the file says about
// itself follows csvfacts: dataset and model on every row, the caution that expected depths are
// not for navigation on the first data row only. Numbers follow numjson.CSV (seven significant
// digits, no value as an empty cell); units are in the headers (_m metres positive down, _km,
// _nmi, _h hours, _deg degrees, _ma million years, _m_s metres per second, _s seconds, _hz
// hertz).
func WriteCSV(w io.Writer, c *Check) error {
	bw := bufio.NewWriterSize(w, 64<<10)
	cols := sampleColumns()
	header := CSVHeader(c)
	fs, err := c.CSVFacts().Columns()
	if err != nil {
		return err
	}
	facts := make([]string, len(fs))
	for k, f := range fs {
		facts[k] = csvField(f.Value)
	}
	bw.WriteString(strings.Join(quoteAll(header), ",") + "\n")
	var row []byte
	r := 0
	for li := range c.Lines {
		l := &c.Lines[li]
		cells := columnWriters(&l.Samples, cols)
		name := csvField(l.Name)
		for i := range l.Samples.Lon {
			row = strconv.AppendInt(row[:0], int64(li), 10)
			row = append(row, ',')
			row = append(row, name...)
			row = append(row, ',')
			row = strconv.AppendInt(row, int64(i), 10)
			for _, cell := range cells {
				row = append(row, ',')
				row = cell(row, i)
			}
			for k, f := range fs {
				row = append(row, ',')
				if !f.FirstRowOnly || r == 0 {
					row = append(row, facts[k]...)
				}
			}
			r++
			row = append(row, '\n')
			if _, err := bw.Write(row); err != nil {
				return err
			}
		}
	}
	return bw.Flush()
}

// cellWriter appends the CSV cell of sample i of one column.
type cellWriter func(b []byte, i int) []byte

// columnWriters returns a writer for each column of s (a column shorter than the samples gives
// empty cells).
func columnWriters(s *Samples, cols []sampleColumn) []cellWriter {
	sv := reflect.ValueOf(s).Elem()
	out := make([]cellWriter, len(cols))
	for k, col := range cols {
		switch x := sv.Field(col.field).Interface().(type) {
		case []float64:
			out[k] = func(b []byte, i int) []byte {
				if i >= len(x) {
					return b
				}
				return numjson.AppendCSV(b, x[i])
			}
		case []int:
			out[k] = func(b []byte, i int) []byte {
				if i >= len(x) {
					return b
				}
				return strconv.AppendInt(b, int64(x[i]), 10)
			}
		case []string:
			out[k] = func(b []byte, i int) []byte {
				if i >= len(x) {
					return b
				}
				return append(b, csvField(x[i])...)
			}
		default:
			panic(fmt.Sprintf("survey: Samples column %s of type %T has no CSV rule", col.header, x))
		}
	}
	return out
}

// csvField quotes a cell as RFC 4180 §2 asks, by encoding/csv.Writer's rule: in double quotes,
// inner quotes doubled, when it holds a comma, a quote, CR or LF, starts with white space, or is
// `\.`. Records end in LF, as encoding/csv.Writer writes them.
func csvField(s string) string {
	if s == "" {
		return s
	}
	if r, _ := utf8.DecodeRuneInString(s); !(strings.ContainsAny(s, ",\"\r\n") || unicode.IsSpace(r) || s == `\.`) {
		return s
	}
	return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
}

func quoteAll(fields []string) []string {
	out := make([]string, len(fields))
	for i, f := range fields {
		out[i] = csvField(f)
	}
	return out
}

// GeoJSON members. Coordinates are longitude, latitude (RFC 7946 §3.1.1).
type gjCollection struct {
	Type     string      `json:"type"`
	Name     string      `json:"name,omitempty"`
	Caution  string      `json:"caution"`
	Totals   Totals      `json:"totals"`
	Settings Settings    `json:"settings"`
	Notes    []string    `json:"notes,omitempty"`
	Features []gjFeature `json:"features"`
}

type gjFeature struct {
	Type       string         `json:"type"`
	Geometry   gjGeometry     `json:"geometry"`
	Properties map[string]any `json:"properties"`
}

type gjGeometry struct {
	Type        string `json:"type"`
	Coordinates any    `json:"coordinates"`
}

func position(lon, lat float64) [2]float64 { return [2]float64{lon, lat} }

// WriteGeoJSON writes c as an RFC 7946 FeatureCollection:
//   - each line's sampled points (what the check sampled: WGS84 geodesics between the waypoints,
//     not straight map segments) as a LineString feature with properties feature_kind "line",
//     line (index), name and the line's totals (LineResult without its samples and legs, plus
//     legs, the number of legs). A line that crosses the antimeridian is cut there into a
//     MultiLineString, as RFC 7946 §3.1.9 asks (geo.SplitAtAntimeridian); longitudes are always
//     within −180..180;
//   - each waypoint as a Point feature (feature_kind "waypoint", line, waypoint index, name);
//   - each hazard as a Point feature at its worst sample (feature_kind "hazard" and the Hazard's
//     fields);
//
// and, as foreign members of the collection (RFC 7946 §6.1), "name" (the plan's), "caution",
// "totals" (Totals), "settings" (the settings checked under) and "notes" (Check.Notes). Numbers follow numjson (NaN
// as null).
func WriteGeoJSON(w io.Writer, c *Check) error {
	fc := gjCollection{Type: "FeatureCollection", Name: c.Plan.Name, Caution: c.Caution, Totals: c.Totals,
		Settings: c.Plan.Settings, Notes: c.Notes, Features: []gjFeature{}}
	for li := range c.Lines {
		l := &c.Lines[li]
		ls := make(orb.LineString, len(l.Samples.Lon))
		for i := range ls {
			ls[i] = orb.Point{l.Samples.Lon[i], l.Samples.Lat[i]}
		}
		props := map[string]any{
			"feature_kind": "line", "line": li, "name": l.Name, "length_km": l.LengthKm, "length_nmi": l.LengthNmi,
			"time_on_line_h": l.TimeOnLineH, "min_depth_m": l.MinDepthM, "mean_depth_m": l.MeanDepthM,
			"max_depth_m": l.MaxDepthM, "min_swath_width_m": l.MinSwathM, "line_spacing_m": l.LineSpacingM,
			"area_covered_km2": l.AreaKm2, "legs": len(l.Legs), "samples": len(ls),
		}
		fc.Features = append(fc.Features, gjFeature{Type: "Feature", Geometry: lineGeometry(ls), Properties: props})
	}
	for li, l := range c.Plan.Lines {
		name := ""
		if li < len(c.Lines) {
			name = c.Lines[li].Name
		}
		for k, wp := range l.Waypoints {
			fc.Features = append(fc.Features, gjFeature{Type: "Feature",
				Geometry:   gjGeometry{Type: "Point", Coordinates: position(geo.LonTo180(wp.Lon), wp.Lat)},
				Properties: map[string]any{"feature_kind": "waypoint", "line": li, "line_name": name, "waypoint": k, "name": wp.Name}})
		}
	}
	for _, hz := range c.Hazards {
		fc.Features = append(fc.Features, gjFeature{Type: "Feature",
			Geometry: gjGeometry{Type: "Point", Coordinates: position(hz.Lon, hz.Lat)},
			Properties: map[string]any{"feature_kind": "hazard", "kind": hz.Kind, "line": hz.Line, "line_name": hz.LineName,
				"from_sample": hz.FromSample, "to_sample": hz.ToSample, "distance_km": hz.DistanceKm, "length_km": hz.LengthKm,
				"depth_m": hz.DepthM, "value": hz.Value, "limit": hz.Limit, "reason": hz.Reason}})
	}
	b, err := numjson.Marshal(fc)
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// lineGeometry is a LineString, or a MultiLineString when the line crosses the antimeridian.
func lineGeometry(ls orb.LineString) gjGeometry {
	parts := geo.SplitAtAntimeridian(ls)
	coords := func(l orb.LineString) [][2]float64 {
		out := make([][2]float64, len(l))
		for i, p := range l {
			out[i] = position(p[0], p[1])
		}
		return out
	}
	if len(parts) == 1 {
		return gjGeometry{Type: "LineString", Coordinates: coords(parts[0])}
	}
	mc := make([][][2]float64, len(parts))
	for i, p := range parts {
		mc[i] = coords(p)
	}
	return gjGeometry{Type: "MultiLineString", Coordinates: mc}
}
