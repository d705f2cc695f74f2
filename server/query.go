package server

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/encoding/wkt"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
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
	f := strings.ToLower(strings.TrimSpace(r.URL.Query().Get("f")))
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
	return 0, "", problem(CodeUnsupportedFormat, "f=%q: this query answers %s", r.URL.Query().Get("f"), strings.Join(names, ", ")).withParam("f")
}

// parseCoords parses the coords WKT (longitude first, as EDR specifies).
func parseCoords(r *http.Request) (orb.Geometry, error) {
	c := strings.TrimSpace(r.URL.Query().Get("coords"))
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

// datasetAndCoords are the dataset the path names and the geometry of the
// query's coords.
func (s *server) datasetAndCoords(r *http.Request) (*dataset, orb.Geometry, error) {
	d, err := s.datasetFromPath(r)
	if err != nil {
		return nil, nil, err
	}
	g, err := parseCoords(r)
	return d, g, err
}

// asMultiPolygon returns a Polygon or MultiPolygon as a MultiPolygon; ok is
// false for any other geometry.
func asMultiPolygon(g orb.Geometry) (mp orb.MultiPolygon, ok bool) {
	switch t := g.(type) {
	case orb.Polygon:
		return orb.MultiPolygon{t}, true
	case orb.MultiPolygon:
		return t, true
	}
	return nil, false
}

func countVertices(g orb.Geometry) int {
	n := 0
	visit(g, func(orb.Point) { n++ })
	return n
}

func (s *server) checkVertices(g orb.Geometry) error {
	if n := countVertices(g); n > s.limits.MaxVertices {
		return limitProblem(http.StatusUnprocessableEntity, "max_vertices", int64(s.limits.MaxVertices),
			"the geometry has %d vertices; the limit is %d", n, s.limits.MaxVertices).withParam("coords")
	}
	return nil
}

// ---- position ----

func (s *server) position(w http.ResponseWriter, r *http.Request) error {
	d, g, err := s.datasetAndCoords(r)
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
	if len(pts) > s.limits.MaxPositions {
		return limitProblem(http.StatusUnprocessableEntity, "max_positions", int64(s.limits.MaxPositions),
			"%d positions asked; the limit is %d", len(pts), s.limits.MaxPositions).withParam("coords")
	}
	format, covType, err := negotiate(r, fmtCovJSON, fmtGeoJSON, fmtCSV)
	if err != nil {
		return err
	}
	o, err := s.parseQueryOpts(r, d)
	if err != nil {
		return err
	}
	lons, lats := make([]float64, len(pts)), make([]float64, len(pts))
	for i, p := range pts {
		lons[i], lats[i] = geo.LonTo180(p[0]), p[1]
	}
	values, err := s.sampleAt(r.Context(), d, o, lons, lats)
	if err != nil {
		return err
	}
	inside := false
	for i := range lons {
		if !math.IsNaN(float64(d.Age.SampleBilinear(lons[i], lats[i]))) {
			inside = true
			break
		}
	}
	if !inside {
		return problem(CodeNoData, "no position of coords lies on dataset %q's age grid (%s)", d.Row.ID, boundString(d.Age.Bounds()))
	}
	return s.writePoints(w, format, covType, d, o, lons, lats, nil, values, "position")
}

func boundString(b orb.Bound) string {
	return fmt.Sprintf("longitude %g to %g, latitude %g to %g", b.Min[0], b.Max[0], b.Min[1], b.Max[1])
}

// sampleAt evaluates the parameters at each position; values[param][point].
func (s *server) sampleAt(ctx context.Context, d *dataset, o queryOpts, lons, lats []float64) ([][]float64, error) {
	sc, err := s.sedimentCorrector(o.Sediment, o.Model)
	if err != nil {
		return nil, err
	}
	values := make([][]float64, len(o.Params))
	for i := range values {
		values[i] = make([]float64, len(lons))
	}
	row := make([]float64, len(o.Params))
	for j := range lons {
		if j%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		s.pointValues(d, o, sc, lons[j], lats[j], row)
		for i := range row {
			values[i][j] = row[i]
		}
	}
	s.metrics.cells.Add(float64(len(lons)))
	return values, nil
}

// writePoints answers a position or trajectory query.
func (s *server) writePoints(w http.ResponseWriter, format outFormat, covType string, d *dataset, o queryOpts, lons, lats, distKm []float64, values [][]float64, kind string) error {
	prov := s.provenanceFor(d, o)
	prov.setHeaders(w)
	switch format {
	case fmtGeoJSON:
		return writeJSON(w, http.StatusOK, MediaGeoJSON, pointsGeoJSON(o.Params, lons, lats, distKm, values, prov))
	case fmtCSV:
		header := []string{"longitude", "latitude"}
		cols := [][]float64{lons, lats}
		if distKm != nil {
			header = append(header, "distance_km")
			cols = append(cols, distKm)
		}
		for i, p := range o.Params {
			header = append(header, p.ID+"_"+unitSuffix(p.Unit))
			cols = append(cols, values[i])
		}
		return writeCSV(w, d.Row.ID+"-"+kind+".csv", prov.Caution, header, cols...)
	}
	c := pointCoverage(lons, lats, o.Params, values)
	c.Provenance = &prov
	c.Caution = prov.Caution
	if distKm != nil {
		c.Extra = map[string]any{"distance_km": floats(distKm)}
	}
	return writeJSON(w, http.StatusOK, covType, c)
}

func unitSuffix(u string) string {
	switch u {
	case "mW/m2":
		return "mw_m2"
	}
	return strings.ToLower(strings.ReplaceAll(u, "/", "_"))
}

func pointsGeoJSON(ps []paramInfo, lons, lats, distKm []float64, values [][]float64, prov Provenance) map[string]any {
	feats := make([]map[string]any, len(lons))
	for j := range lons {
		props := map[string]any{}
		if distKm != nil {
			props["distance_km"] = jsonFloat(distKm[j])
		}
		for i, p := range ps {
			props[p.ID] = jsonFloat(values[i][j])
		}
		feats[j] = map[string]any{
			"type":       "Feature",
			"geometry":   map[string]any{"type": "Point", "coordinates": []jsonFloat{jsonFloat(lons[j]), jsonFloat(lats[j])}},
			"properties": props,
		}
	}
	units := map[string]string{}
	for _, p := range ps {
		units[p.ID] = p.Unit
	}
	out := map[string]any{"type": "FeatureCollection", "features": feats, "units": units, "provenance": prov}
	if prov.Caution != "" {
		out["caution"] = prov.Caution
	}
	return out
}

// ---- trajectory ----

func (s *server) trajectory(w http.ResponseWriter, r *http.Request) error {
	d, g, err := s.datasetAndCoords(r)
	if err != nil {
		return err
	}
	ls, ok := g.(orb.LineString)
	if !ok {
		return problem(CodeInvalidCoords, "trajectory queries take LINESTRING, not %s", g.GeoJSONType()).withParam("coords")
	}
	if err := s.checkVertices(ls); err != nil {
		return err
	}
	wps := make([]geo.Waypoint, len(ls))
	for i, p := range ls {
		wps[i] = geo.Waypoint{Lon: p[0], Lat: p[1]}
	}
	return s.answerTrajectory(w, r, d, wps)
}

// trajectoryPost takes the track as a GeoJSON body (LineString geometry or
// Feature), for tracks too long for a URL.
func (s *server) trajectoryPost(w http.ResponseWriter, r *http.Request) error {
	d, err := s.datasetFromPath(r)
	if err != nil {
		return err
	}
	ct := r.Header.Get("Content-Type")
	if ct != "" && !strings.Contains(ct, "json") {
		return problem(CodeUnsupportedMedia, "send the track as GeoJSON (application/geo+json), not %q", ct)
	}
	body, err := io.ReadAll(r.Body)
	if err != nil {
		return err
	}
	wps, err := geo.ParseTrackGeoJSON(body, s.limits.MaxVertices)
	if err != nil {
		if errors.Is(err, geo.ErrInvalidTrack) && strings.Contains(err.Error(), "limit") {
			return limitProblem(http.StatusUnprocessableEntity, "max_vertices", int64(s.limits.MaxVertices), "%v", err).withCause(err)
		}
		return problem(CodeInvalidGeoJSON, "%v", err).withCause(err)
	}
	return s.answerTrajectory(w, r, d, wps)
}

func (s *server) answerTrajectory(w http.ResponseWriter, r *http.Request, d *dataset, wps []geo.Waypoint) error {
	format, covType, err := negotiate(r, fmtCovJSON, fmtGeoJSON, fmtCSV)
	if err != nil {
		return err
	}
	o, err := s.parseQueryOpts(r, d)
	if err != nil {
		return err
	}
	// Sample spacing: spacing-km, or the age grid's row spacing at a nominal
	// 111.32 km per degree (2π × 6378.137 km / 360, the WGS84 equatorial
	// radius; worked by hand).
	spacingKm := d.Age.DY * 111.32
	if v := r.URL.Query().Get("spacing-km"); v != "" {
		f, err := strconv.ParseFloat(v, 64)
		if err != nil || !(f > 0) || math.IsInf(f, 0) {
			return problem(CodeInvalidParameter, "spacing-km=%q must be a positive number", v).withParam("spacing-km")
		}
		spacingKm = f
	}
	samples, err := geo.Densify(gdal.WGS84(), wps, spacingKm*1000, s.limits.MaxTrackSamples)
	if err != nil {
		if msg := err.Error(); strings.Contains(msg, "would need more than") || strings.Contains(msg, "samples") && strings.Contains(msg, "limit") {
			return limitProblem(http.StatusUnprocessableEntity, "max_track_samples", int64(s.limits.MaxTrackSamples),
				"%v; raise spacing-km", err).withCause(err)
		}
		return problem(CodeInvalidCoords, "%v", err).withCause(err)
	}
	lons, lats, dist := make([]float64, len(samples)), make([]float64, len(samples)), make([]float64, len(samples))
	for i, sm := range samples {
		lons[i], lats[i], dist[i] = sm.Lon, sm.Lat, sm.DistanceKm
	}
	values, err := s.sampleAt(r.Context(), d, o, lons, lats)
	if err != nil {
		return err
	}
	return s.writePoints(w, format, covType, d, o, lons, lats, dist, values, "trajectory")
}
