package server

import (
	"bytes"
	"io"
	"math"
	"mime"
	"net/http"
	"strings"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/encoding/wkt"

	"github.com/go-chi/chi/v5"

	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/geo"
)

// outFormat is a response format of the EDR queries.
type outFormat int

const (
	fmtCovJSON outFormat = iota
	fmtGeoJSON
	fmtCSV
	fmtCOG
	fmtNetCDF
	fmtPNG
)

var formatNames = map[outFormat]string{fmtCovJSON: "CoverageJSON", fmtGeoJSON: "GeoJSON", fmtCSV: "CSV", fmtCOG: "COG", fmtNetCDF: "NetCDF", fmtPNG: "PNG"}

// negotiate reads f= (or, without it, the Accept header). The media type
// returned for CoverageJSON is the older one when the client asked for it.
func negotiate(r *http.Request, allowed ...outFormat) (outFormat, string, error) {
	f := strings.ToLower(strings.TrimSpace(queryOf(r).Get("f")))
	covType := MediaCovJSON
	var got outFormat = -1
	switch f {
	case "":
		acc := r.Header.Get("Accept")
		switch {
		case strings.Contains(acc, MediaCovJSONOld):
			got, covType = fmtCovJSON, MediaCovJSONOld
		case strings.Contains(acc, MediaCovJSON):
			got = fmtCovJSON
		case strings.Contains(acc, MediaGeoJSON):
			got = fmtGeoJSON
		case strings.Contains(acc, "text/csv"):
			got = fmtCSV
		default:
			got = fmtCovJSON
		}
	case "coveragejson", "covjson", MediaCovJSON:
		got = fmtCovJSON
	case MediaCovJSONOld:
		got, covType = fmtCovJSON, MediaCovJSONOld
	case "geojson", MediaGeoJSON:
		got = fmtGeoJSON
	case "csv", "text/csv":
		got = fmtCSV
	case "cog", "geotiff", "tiff", "image/tiff":
		got = fmtCOG
	case "netcdf", "nc", "cf-netcdf", MediaNetCDF:
		got = fmtNetCDF
	case "png", MediaPNG:
		got = fmtPNG
	}
	var names []string
	for _, a := range allowed {
		if a == got {
			return got, covType, nil
		}
		names = append(names, formatNames[a])
	}
	return 0, "", problem(CodeUnsupportedFormat, "f=%q: this query answers %s", queryOf(r).Get("f"), strings.Join(names, ", ")).withParam("f")
}

// parseCoords parses the coords WKT (longitude first, as EDR specifies).
func parseCoords(r *http.Request) (orb.Geometry, error) {
	c := strings.TrimSpace(queryOf(r).Get("coords"))
	if c == "" {
		return nil, problem(CodeInvalidCoords, "coords= is required (WKT, longitude first)").withParam("coords")
	}
	g, err := wkt.Unmarshal(c)
	if err != nil {
		return nil, problem(CodeInvalidCoords, "coords is not valid WKT: %v", err).withParam("coords").withCause(err)
	}
	if err := checkLonLat(g); err != nil {
		return nil, err
	}
	return g, nil
}

func checkLonLat(g orb.Geometry) error {
	var bad error
	visit(g, func(p orb.Point) {
		if bad != nil {
			return
		}
		if math.IsNaN(p[0]) || math.IsNaN(p[1]) || p[1] < -90 || p[1] > 90 || p[0] < -180 || p[0] > 360 {
			bad = problem(CodeInvalidCoords, "position (%g %g) is outside longitude −180..360, latitude −90..90 (WKT is longitude first)", p[0], p[1]).withParam("coords")
		}
	})
	return bad
}

func visit(g orb.Geometry, fn func(orb.Point)) {
	switch t := g.(type) {
	case orb.Point:
		fn(t)
	case orb.MultiPoint:
		for _, p := range t {
			fn(p)
		}
	case orb.LineString:
		for _, p := range t {
			fn(p)
		}
	case orb.Polygon:
		for _, r := range t {
			for _, p := range r {
				fn(p)
			}
		}
	case orb.MultiPolygon:
		for _, pg := range t {
			visit(pg, fn)
		}
	case orb.Ring:
		for _, p := range t {
			fn(p)
		}
	case orb.MultiLineString:
		for _, l := range t {
			visit(l, fn)
		}
	case orb.Collection:
		for _, x := range t {
			visit(x, fn)
		}
	}
}

// ---- position ----

func (s *server) position(w http.ResponseWriter, r *http.Request) error {
	g, err := parseCoords(r)
	if err != nil {
		return err
	}
	var pts []orb.Point
	switch t := g.(type) {
	case orb.Point:
		pts = []orb.Point{t}
	case orb.MultiPoint:
		pts = t
	default:
		return problem(CodeInvalidCoords, "position queries take POINT or MULTIPOINT, not %s", g.GeoJSONType()).withParam("coords")
	}
	if len(pts) == 0 {
		return problem(CodeInvalidCoords, "MULTIPOINT is empty").withParam("coords")
	}
	format, covType, err := negotiate(r, fmtCovJSON, fmtGeoJSON, fmtCSV)
	if err != nil {
		return err
	}
	lons, lats := make([]float64, len(pts)), make([]float64, len(pts))
	for i, p := range pts {
		lons[i], lats[i] = p[0], p[1]
	}
	res, err := s.ev.Points(r.Context(), chi.URLParam(r, "datasetId"), queryOptions(r), lons, lats)
	if err != nil {
		return err
	}
	return s.writePoints(w, format, covType, res, nil, nil, nil, "position")
}

// writePoints answers a position, trajectory or corridor query: distKm (distance along the
// track) for a trajectory or corridor, offsetKm (across the track) for a corridor, nil otherwise.
func (s *server) writePoints(w http.ResponseWriter, format outFormat, covType string, res *evaluate.PointsResult, distKm, offsetKm []float64, wps []evaluate.WaypointAt, kind string) error {
	s.metrics.cells.Add(float64(len(res.Lons)))
	prov := s.ev.Provenance(res.Query)
	setProvenance(w, prov)
	setAnswerHeaders(w, res.Flags, nil)
	ps, lons, lats, values := res.Query.Params, res.Lons, res.Lats, res.Values
	switch format {
	case fmtGeoJSON:
		fc := pointsGeoJSON(ps, lons, lats, distKm, offsetKm, values, prov)
		if len(res.Flags) > 0 {
			fc["ridgeflank:flags"] = res.Flags
		}
		if wps != nil {
			fc["ridgeflank:waypoints"] = wps
		}
		return writeJSON(w, http.StatusOK, MediaGeoJSON, fc)
	case fmtCSV:
		cols := []evaluate.CSVColumn{numCol("longitude", lons), numCol("latitude", lats)}
		if distKm != nil {
			cols = append(cols, numCol("distance_km", distKm))
		}
		if offsetKm != nil {
			cols = append(cols, numCol("offset_km", offsetKm))
		}
		for i, p := range ps {
			cols = append(cols, numCol(evaluate.FieldName(p), values[i]))
		}
		if wps != nil && offsetKm == nil {
			// A trajectory names its waypoints on the samples that are waypoints (the first sample
			// at a waypoint's distance along the track).
			names := make([]string, len(lons))
			k := 0
			for _, wp := range wps {
				for k < len(distKm) && distKm[k] < wp.DistanceKm {
					k++
				}
				if k < len(distKm) {
					names[k] = wp.Name
				}
			}
			cols = append(cols, evaluate.CSVColumn{Name: "waypoint", Text: names})
		}
		return writeCSV(w, evaluate.FileName(res.Query, kind, "csv"), evaluate.FactsOf(prov), cols...)
	}
	c := pointCoverage(lons, lats, ps, values)
	c.Provenance = &prov
	c.Caution = prov.Caution
	c.Flags = res.Flags
	c.Waypoints = wps
	if distKm != nil {
		c.Extra = map[string]any{"distance_km": floats(distKm)}
	}
	if offsetKm != nil {
		c.Extra["offset_km"] = floats(offsetKm)
	}
	return writeJSON(w, http.StatusOK, covType, c)
}

func pointsGeoJSON(ps []evaluate.Parameter, lons, lats, distKm, offsetKm []float64, values [][]float64, prov Provenance) map[string]any {
	feats := make([]map[string]any, len(lons))
	for j := range lons {
		props := map[string]any{}
		if distKm != nil {
			props["distance_km"] = jsonFloat(distKm[j])
		}
		if offsetKm != nil {
			props["offset_km"] = jsonFloat(offsetKm[j])
		}
		for i, p := range ps {
			props[evaluate.FieldName(p)] = jsonFloat(values[i][j])
		}
		feats[j] = map[string]any{
			"type":       "Feature",
			"geometry":   map[string]any{"type": "Point", "coordinates": []jsonFloat{jsonFloat(lons[j]), jsonFloat(lats[j])}},
			"properties": props,
		}
	}
	units := map[string]string{}
	for _, p := range ps {
		units[evaluate.FieldName(p)] = p.Unit
	}
	out := map[string]any{"type": "FeatureCollection", "features": feats, "units": units, "provenance": prov}
	if prov.Caution != "" {
		out["caution"] = prov.Caution
	}
	return out
}

// ---- trajectory ----

func (s *server) trajectory(w http.ResponseWriter, r *http.Request) error {
	g, err := parseCoords(r)
	if err != nil {
		return err
	}
	ls, ok := g.(orb.LineString)
	if !ok {
		return problem(CodeInvalidCoords, "trajectory queries take LINESTRING, not %s", g.GeoJSONType()).withParam("coords")
	}
	wps := make([]geo.Waypoint, len(ls))
	for i, p := range ls {
		wps[i] = geo.Waypoint{Lon: p[0], Lat: p[1]}
	}
	return s.answerTrajectory(w, r, wps)
}

// trackFormats maps the media types a trajectory POST accepts to geo.ParseTrack's formats.
var trackFormats = map[string]string{
	"text/csv":             "csv",
	"application/csv":      "csv",
	"text/plain":           "",
	"application/gpx+xml":  "gpx",
	"application/xml":      "gpx",
	"text/xml":             "gpx",
	"application/geo+json": "geojson",
	"application/json":     "geojson",
}

// trajectoryPost takes the track file itself as the body: CSV (decimal degrees or degrees and
// decimal minutes), GPX or GeoJSON, read once by geo.ParseTrack (waypoint names kept).
func (s *server) trajectoryPost(w http.ResponseWriter, r *http.Request) error {
	wps, err := readTrackBody(r)
	if err != nil {
		return err
	}
	return s.answerTrajectory(w, r, wps)
}

// readTrackBody reads a track sent as the request body (trajectoryPost's formats).
func readTrackBody(r *http.Request) ([]geo.Waypoint, error) {
	ct := r.Header.Get("Content-Type")
	format := ""
	if ct != "" {
		mt, _, err := mime.ParseMediaType(ct)
		f, ok := trackFormats[strings.ToLower(mt)]
		if err != nil || !ok {
			return nil, problem(CodeUnsupportedMedia, "send the track as CSV (text/csv), GPX (application/gpx+xml) or GeoJSON (application/geo+json), not %q", ct)
		}
		format = f
	}
	body, err := io.ReadAll(r.Body)
	if err != nil {
		return nil, err
	}
	if format == "" {
		t := bytes.TrimLeft(bytes.TrimPrefix(body, []byte("\ufeff")), " \t\r\n")
		if len(t) > 0 && t[0] == '{' {
			format = "geojson"
		}
	}
	// The waypoint limit is checked by the evaluate service (max_vertices); the body limit bounds
	// what is parsed.
	wps, err := geo.ParseTrack(body, format, math.MaxInt32)
	if err != nil {
		if f, ok := fault.As(err); ok && !(format == "geojson" && f.Kind == fault.InvalidTrack) {
			return nil, err
		}
		if format == "geojson" { // a JSON body that is no GeoJSON track
			return nil, problem(CodeInvalidGeoJSON, "%v", err).withParam("track").withCause(err)
		}
		return nil, problem(CodeInvalidTrack, "%v", err).withParam("track").withCause(err)
	}
	return wps, nil
}

func (s *server) answerTrajectory(w http.ResponseWriter, r *http.Request, wps []geo.Waypoint) error {
	format, covType, err := negotiate(r, fmtCovJSON, fmtGeoJSON, fmtCSV)
	if err != nil {
		return err
	}
	km, err := spacingKm(r)
	if err != nil {
		return err
	}
	res, err := s.ev.Track(r.Context(), chi.URLParam(r, "datasetId"), queryOptions(r), wps, km)
	if err != nil {
		return err
	}
	return s.writePoints(w, format, covType, &res.PointsResult, res.DistanceKm, nil, res.Waypoints, "trajectory")
}
