package server

import (
	"net/http"

	"github.com/go-chi/chi/v5"

	"ridgeflank/evaluate"
)

// statisticsAnswer is the JSON answer of the statistics queries: area-weighted statistics of
// each parameter over an area or a stored region, without the gridded values.
type statisticsAnswer struct {
	Dataset        string               `json:"dataset"`
	Region         string               `json:"region,omitempty"`
	ResolutionX    float64              `json:"resolution_x_deg"`
	ResolutionY    float64              `json:"resolution_y_deg"`
	Cells          int64                `json:"cells"`
	Statistics     map[string]unitStats `json:"statistics"`
	Provenance     *Provenance          `json:"ridgeflank:provenance,omitempty"`
	Caution        string               `json:"ridgeflank:caution,omitempty"`
	Flags          []evaluate.Flag      `json:"ridgeflank:flags,omitempty"`
	Repairs        []string             `json:"ridgeflank:repairs,omitempty"`
	Weighting      string               `json:"weighting"`
	PercentileNote string               `json:"percentile_method"`
}

// areaStatistics answers GET /api/collections/{id}/statistics?coords=WKT: statistics over any
// polygon (no stored region, no token needed), streamed over the grids at the asked
// resolution.
func (s *server) areaStatistics(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "datasetId")
	_, region, err := s.areaParam(r)
	if err != nil {
		return err
	}
	resX, resY, o, err := parseStatisticsQuery(r)
	if err != nil {
		return err
	}
	res, err := s.ev.Statistics(r.Context(), id, o, region, resX, resY, nil)
	if err != nil {
		return err
	}
	return s.writeStatistics(w, id, "", res)
}

// locationStatistics answers GET /api/collections/{id}/locations/{regionId}/statistics.
func (s *server) locationStatistics(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "datasetId")
	resX, resY, o, err := parseStatisticsQuery(r)
	if err != nil {
		return err
	}
	res, rg, err := s.ev.RegionStatistics(r.Context(), id, chi.URLParam(r, "regionId"), o, resX, resY, nil)
	if err != nil {
		return err
	}
	return s.writeStatistics(w, id, rg.ID, res)
}

func parseStatisticsQuery(r *http.Request) (resX, resY float64, o evaluate.Options, err error) {
	if resX, err = parseResolution(r, "resolution-x"); err != nil {
		return
	}
	if resY, err = parseResolution(r, "resolution-y"); err != nil {
		return
	}
	return resX, resY, queryOptions(r), nil
}

func (s *server) writeStatistics(w http.ResponseWriter, id, region string, res *evaluate.StatsResult) error {
	s.metrics.cells.Add(float64(res.Cells))
	prov := s.ev.Provenance(res.Query)
	setProvenance(w, prov)
	setAnswerHeaders(w, res.Flags, res.Region.Repairs)
	a := statisticsAnswer{Dataset: id, Region: region, ResolutionX: res.Lattice.DX, ResolutionY: res.Lattice.DY, Cells: res.Cells,
		Statistics: map[string]unitStats{}, Provenance: &prov, Caution: prov.Caution, Flags: res.Flags, Repairs: res.Region.Repairs,
		Weighting: "cos(latitude) of each cell's centre", PercentileNote: percentileMethod}
	for i, p := range res.Query.Params {
		us := newUnitStats(res.Stats[i], p)
		if res.MeanUncertainty != nil {
			us.MeanUnc = res.MeanUncertainty[i]
		}
		a.Statistics[p.ID] = us
	}
	return writeJSON(w, http.StatusOK, "", a)
}

// percentileMethod says how the statistics' percentiles are found (geo.StatsStream).
const percentileMethod = "weighted empirical percentile (smallest value whose area weight at or below it reaches p of the total), located in a " +
	"65536-bin histogram over the data's range; each is within percentile_error_bound of the exact value"
