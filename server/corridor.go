package server

import (
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"
	"github.com/paulmach/orb"

	"ridgeflank/geo"
)

// corridorWidthUnits are the width-units a corridor query accepts, with their length in km:
// kilometre and metre (SI), and the international nautical mile of exactly 1852 m (BIPM, The
// International System of Units, 9th ed. 2019, Table 8).
var corridorWidthUnits = map[string]float64{"km": 1, "m": 0.001, "nmi": 1.852}

// corridor answers the OGC API–EDR 1.1 corridor query (2-D): coords=LINESTRING (the centre
// line), corridor-width with width-units (km, m or nmi), our spacing-km, and the usual
// parameter-name, model, sediment and f. Our collections have no vertical axis, so
// corridor-height and height-units are refused, not ignored. evaluate.Service.Corridor samples
// and evaluates.
func (s *server) corridor(w http.ResponseWriter, r *http.Request) error {
	q := queryOf(r)
	for _, name := range []string{"corridor-height", "height-units"} {
		if q.Get(name) != "" {
			return problem(CodeInvalidParameter, "%s does not apply: the collections are two-dimensional (no vertical axis); leave it out", name).withParam(name)
		}
	}
	g, err := parseCoords(r)
	if err != nil {
		return err
	}
	ls, ok := g.(orb.LineString)
	if !ok {
		return problem(CodeInvalidCoords, "corridor queries take a LINESTRING centre line, not %s", g.GeoJSONType()).withParam("coords")
	}
	wv := q.Get("corridor-width")
	width, err := strconv.ParseFloat(wv, 64)
	if wv == "" || err != nil || !(width > 0) || math.IsInf(width, 0) {
		return problem(CodeInvalidParameter, "corridor-width=%q must be a positive number (the whole width, in width-units)", wv).withParam("corridor-width")
	}
	uv := q.Get("width-units")
	perKm, ok := corridorWidthUnits[strings.ToLower(uv)]
	if !ok {
		return problem(CodeInvalidParameter, "width-units=%q must be one of km, m, nmi", uv).withParam("width-units")
	}
	format, covType, err := negotiate(r, fmtCovJSON, fmtGeoJSON, fmtCSV)
	if err != nil {
		return err
	}
	spacingKm := 0.0
	if v := q.Get("spacing-km"); v != "" {
		f, err := strconv.ParseFloat(v, 64)
		if err != nil || !(f > 0) || math.IsInf(f, 0) {
			return problem(CodeInvalidParameter, "spacing-km=%q must be a positive number", v).withParam("spacing-km")
		}
		spacingKm = f
	}
	wps := make([]geo.Waypoint, len(ls))
	for i, p := range ls {
		wps[i] = geo.Waypoint{Lon: p[0], Lat: p[1]}
	}
	res, err := s.ev.Corridor(r.Context(), chi.URLParam(r, "datasetId"), queryOptions(r), wps, width*perKm, spacingKm)
	if err != nil {
		return err
	}
	return s.writePoints(w, format, covType, &res.PointsResult, res.DistanceKm, res.OffsetKm, res.Waypoints, "corridor")
}

// corridorQuery adds the width units a corridor query takes to its data_queries entry (EDR
// 1.1: variables.width_units).
func corridorQuery(q map[string]any) map[string]any {
	v := q["link"].(map[string]any)["variables"].(map[string]any)
	v["width_units"] = []string{"km", "m", "nmi"}
	return q
}
