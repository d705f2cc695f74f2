package server

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"

	"github.com/go-chi/chi/v5"

	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/jobs"
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
// resolution. A question reading more than Limits.MaxStatisticsCells cells is answered as a
// statistics job (202 and the job's link) when the server runs a job queue.
func (s *server) areaStatistics(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "datasetId")
	coords, region, err := s.areaParam(r)
	if err != nil {
		return err
	}
	resX, resY, o, err := parseStatisticsQuery(r)
	if err != nil {
		return err
	}
	req := evaluate.StatisticsRequest{Dataset: id, Coords: coords, Options: o, ResX: resX, ResY: resY}
	if queued, err := s.statisticsAsJob(w, r, req); queued || err != nil {
		return err
	}
	res, err := s.ev.Statistics(r.Context(), id, o, region, resX, resY, nil)
	if err != nil {
		return err
	}
	return writeJSON(w, s.statisticsHeaders(w, res), "", statisticsBody(s.ev, id, "", res))
}

// locationStatistics answers GET /api/collections/{id}/locations/{regionId}/statistics; as
// areaStatistics, a question over Limits.MaxStatisticsCells cells becomes a job.
func (s *server) locationStatistics(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "datasetId")
	resX, resY, o, err := parseStatisticsQuery(r)
	if err != nil {
		return err
	}
	req := evaluate.StatisticsRequest{Dataset: id, Region: chi.URLParam(r, "regionId"), Options: o, ResX: resX, ResY: resY}
	if queued, err := s.statisticsAsJob(w, r, req); queued || err != nil {
		return err
	}
	res, rg, err := s.ev.RegionStatistics(r.Context(), id, req.Region, o, resX, resY, nil)
	if err != nil {
		return err
	}
	return writeJSON(w, s.statisticsHeaders(w, res), "", statisticsBody(s.ev, id, rg.ID, res))
}

// statisticsAsJob queues req as a statistics job and answers 202 with the job's link when it
// reads more than Limits.MaxStatisticsCells cells and the server runs a job queue (without
// one, such a question is refused by the evaluate service with that limit's name).
func (s *server) statisticsAsJob(w http.ResponseWriter, r *http.Request, req evaluate.StatisticsRequest) (bool, error) {
	if s.deps.Jobs == nil {
		return false, nil
	}
	job, cells, err := s.ev.StatisticsAsJob(r.Context(), req)
	if !job || err != nil {
		return false, err
	}
	raw, err := json.Marshal(req)
	if err != nil {
		return false, err
	}
	id, err := s.deps.Jobs.EnqueueStatistics(r.Context(), jobs.StatisticsArgs{Request: raw})
	if err != nil {
		return false, err
	}
	st, err := s.deps.Jobs.Get(r.Context(), id)
	if err != nil {
		return false, err
	}
	w.Header().Set("Location", fmt.Sprintf("%s/api/jobs/%d", s.baseURL(r), id))
	body := jobJSON(s.baseURL(r), st)
	body["message"] = fmt.Sprintf("the statistics read about %d cells, more than %d, so they are computed as a job; its result (also at /api/jobs/%d/result when it has succeeded) is the statistics answer",
		cells, s.limits.MaxStatisticsCells, id)
	return true, writeJSON(w, http.StatusAccepted, "", body)
}

// StatisticsWorker returns the job handler for statistics jobs: it decodes the evaluate
// request the job carries, answers it with the evaluate service (deps.Evaluate, or one built
// from deps) under the job's limit, reporting progress, and returns the statistics answer the
// request would have had. Bad requests fail permanently.
func StatisticsWorker(deps Deps) func(ctx context.Context, a jobs.StatisticsArgs, progress jobs.Progress) (any, error) {
	ev := deps.Evaluate
	if ev == nil {
		ev = NewEvaluate(deps)
	}
	return func(ctx context.Context, a jobs.StatisticsArgs, progress jobs.Progress) (any, error) {
		var req evaluate.StatisticsRequest
		if err := json.Unmarshal(a.Request, &req); err != nil {
			return nil, jobs.Permanent(err)
		}
		progress(0.01, "computing statistics over "+req.Dataset)
		res, rg, err := ev.AnswerStatistics(ctx, req, func(f float64) { progress(f, "computing statistics") })
		if _, ok := fault.As(err); ok {
			return nil, jobs.Permanent(err)
		}
		if err != nil {
			return nil, err
		}
		return statisticsBody(ev, req.Dataset, rg.ID, res), nil
	}
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

// statisticsHeaders records the answer's cells and sets its provenance and flag headers; it
// returns the status of the answer.
func (s *server) statisticsHeaders(w http.ResponseWriter, res *evaluate.StatsResult) int {
	s.metrics.cells.Add(float64(res.Cells))
	setProvenance(w, s.ev.Provenance(res.Query))
	setAnswerHeaders(w, res.Flags, res.Region.Repairs)
	return http.StatusOK
}

// statisticsBody is the JSON answer of a statistics question, the same whether it is answered
// at once or by a job.
func statisticsBody(ev *evaluate.Service, id, region string, res *evaluate.StatsResult) statisticsAnswer {
	prov := ev.Provenance(res.Query)
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
	return a
}

// percentileMethod says how the statistics' percentiles are found (geo.StatsStream).
const percentileMethod = "weighted empirical percentile (smallest value whose area weight at or below it reaches p of the total), located in a " +
	"65536-bin histogram over the data's range; each is within percentile_error_bound of the exact value"
