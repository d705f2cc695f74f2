package server

import (
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"
	"github.com/paulmach/orb"

	"ridgeflank/evaluate"
	"ridgeflank/geo"
)

// slabPull answers GET /collections/{datasetId}/slab-pull?coords=LINESTRING(...): the slab pull,
// thermal parameter and slab-core depth along the trench line (evaluate.Service.SlabPull).
func (s *server) slabPull(w http.ResponseWriter, r *http.Request) error {
	g, err := parseCoords(r)
	if err != nil {
		return err
	}
	ls, ok := g.(orb.LineString)
	if !ok {
		return problem(CodeInvalidCoords, "slab-pull takes a LINESTRING trench line, not %s", g.GeoJSONType()).withParam("coords")
	}
	wps := make([]geo.Waypoint, len(ls))
	for i, p := range ls {
		wps[i] = geo.Waypoint{Lon: p[0], Lat: p[1]}
	}
	return s.answerSlabPull(w, r, wps)
}

// slabPullPost takes the trench line as the body (a GeoJSON LineString, or CSV or GPX as a
// trajectory POST takes them).
func (s *server) slabPullPost(w http.ResponseWriter, r *http.Request) error {
	wps, err := readTrackBody(r)
	if err != nil {
		return err
	}
	return s.answerSlabPull(w, r, wps)
}

// slabSettings reads convergence-mm-yr, slab-length-km and dip-deg; a missing or unreadable
// value is NaN, refused by evaluate.SlabSettings.Check naming the field.
func slabSettings(r *http.Request) evaluate.SlabSettings {
	q := queryOf(r)
	num := func(name string) float64 {
		v, err := strconv.ParseFloat(strings.TrimSpace(q.Get(name)), 64)
		if err != nil {
			return math.NaN()
		}
		return v
	}
	return evaluate.SlabSettings{ConvergenceMmYr: num("convergence-mm-yr"), SlabLengthKm: num("slab-length-km"), DipDeg: num("dip-deg")}
}

// spacingKm reads spacing-km (0 when absent: the age grid's row spacing).
func spacingKm(r *http.Request) (float64, error) {
	v := queryOf(r).Get("spacing-km")
	if v == "" {
		return 0, nil
	}
	f, err := strconv.ParseFloat(v, 64)
	if err != nil || !(f > 0) || math.IsInf(f, 0) {
		return 0, problem(CodeInvalidParameter, "spacing-km=%q must be a positive number", v).withParam("spacing-km")
	}
	return f, nil
}

func (s *server) answerSlabPull(w http.ResponseWriter, r *http.Request, wps []geo.Waypoint) error {
	asCSV, err := wantCSV(r)
	if err != nil {
		return err
	}
	km, err := spacingKm(r)
	if err != nil {
		return err
	}
	st := slabSettings(r)
	res, err := s.ev.SlabPull(r.Context(), chi.URLParam(r, "datasetId"), queryOptions(r), wps, st, km)
	if err != nil {
		return err
	}
	q := res.Track.Query
	prov := s.ev.SlabProvenance(res)
	setProvenance(w, prov)
	cols := res.SlabColumns()
	if asCSV {
		return writeCSV(w, evaluate.FileName(q, "slab-pull", "csv"), evaluate.FactsOf(prov), cols...)
	}
	samples := make(map[string]any, len(cols))
	for _, c := range cols {
		samples[c.Name] = floats(c.Values)
	}
	mean := res.Mean
	out := map[string]any{
		"dataset":  q.Dataset.Row.ID,
		"model":    q.Model.Params().ID,
		"settings": st,
		"samples":  samples,
		"mean": map[string]any{
			"age_ma":                        jsonFloat(mean.AgeMa),
			evaluate.SlabPullColumn:         jsonFloat(mean.SlabPullNPerM),
			evaluate.ThermalParameterColumn: jsonFloat(mean.ThermalParameterKm),
			evaluate.SlabCoreDepthColumn:    jsonFloat(mean.CoreDepthKm),
		},
		"answered_km":       jsonFloat(res.AnsweredKm),
		"total_slab_pull_n": jsonFloat(res.TotalSlabPullN),
		"provenance":        prov,
	}
	return writeJSON(w, http.StatusOK, "", out)
}
