package server

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/jobs"
)

// statisticsAnswer is the JSON answer of the statistics queries: area-weighted statistics of
// each parameter over an area or a stored region, for one model; the gridded values only when
// asked (grid=true).
type statisticsAnswer struct {
	Dataset        string               `json:"dataset"`
	Region         string               `json:"region,omitempty"`
	Model          string               `json:"model"`
	ResolutionX    float64              `json:"resolution_x_deg"`
	ResolutionY    float64              `json:"resolution_y_deg"`
	Cells          int64                `json:"cells"`
	Statistics     map[string]unitStats `json:"statistics"`
	Grid           *coverage            `json:"grid,omitempty"`
	Provenance     *Provenance          `json:"ridgeflank:provenance,omitempty"`
	Caution        string               `json:"ridgeflank:caution,omitempty"`
	Flags          []evaluate.Flag      `json:"ridgeflank:flags,omitempty"`
	Repairs        []string             `json:"ridgeflank:repairs,omitempty"`
	Weighting      string               `json:"weighting"`
	PercentileNote string               `json:"percentile_method"`
}

// valueGrids lists the gridded values of the attached grid (writeJSON's streamedValues).
func (a statisticsAnswer) valueGrids() []*gridValues {
	if a.Grid == nil {
		return nil
	}
	return a.Grid.grids
}

// valueGrids lists the gridded values of every block (writeJSON's streamedValues).
func (c comparisonAnswer) valueGrids() []*gridValues {
	var out []*gridValues
	for _, b := range c.Blocks {
		out = append(out, b.valueGrids()...)
	}
	return out
}

// comparisonAnswer is the answer of a statistics query with models=: one statistics answer
// per model, in the order asked, each the answer the same query with model= gives.
type comparisonAnswer struct {
	Dataset string             `json:"dataset"`
	Region  string             `json:"region,omitempty"`
	Models  []string           `json:"models"`
	Blocks  []statisticsAnswer `json:"comparison"`
	Caution string             `json:"ridgeflank:caution,omitempty"`
}

// statisticsQuery is what the statistics queries read from the query string.
type statisticsQuery struct {
	resX, resY float64
	options    evaluate.Options
	models     []string // models= (nil: one model, options.Model)
	grid       bool     // grid=true: attach the gridded values
}

func parseStatisticsQuery(r *http.Request) (q statisticsQuery, err error) {
	if q.resX, err = parseResolution(r, "resolution-x"); err != nil {
		return
	}
	if q.resY, err = parseResolution(r, "resolution-y"); err != nil {
		return
	}
	q.options = queryOptions(r)
	v := queryOf(r)
	if g := v.Get("grid"); g != "" {
		if q.grid, err = strconv.ParseBool(g); err != nil {
			return q, problem(CodeInvalidParameter, "grid=%q must be true or false", g).withParam("grid")
		}
	}
	if v.Has("models") {
		if v.Get("model") != "" {
			return q, problem(CodeInvalidParameter, "give model= or models=, not both").withParam("models")
		}
		q.models = []string{}
		for _, m := range strings.Split(v.Get("models"), ",") {
			q.models = append(q.models, strings.TrimSpace(m))
		}
	}
	return q, nil
}

// areaStatistics answers GET /api/collections/{id}/statistics?coords=WKT: statistics over any
// polygon (no stored region, no editor token), streamed over the grids at the asked
// resolution. A one-model question without the grid reading more than
// Limits.MaxStatisticsCells cells is answered as a statistics job (202 and the job's link) when
// the server runs a job queue.
func (s *server) areaStatistics(w http.ResponseWriter, r *http.Request) error {
	coords, region, err := s.areaParam(r)
	if err != nil {
		return err
	}
	q, err := parseStatisticsQuery(r)
	if err != nil {
		return err
	}
	if q.models == nil && !q.grid {
		req := evaluate.StatisticsRequest{Dataset: chi.URLParam(r, "datasetId"), Coords: coords, Options: q.options, ResX: q.resX, ResY: q.resY}
		if queued, err := s.statisticsAsJob(w, r, req); queued || err != nil {
			return err
		}
	}
	return s.answerStatistics(w, r, region, q)
}

// areaStatisticsPost answers POST /api/collections/{id}/statistics with a GeoJSON Polygon or
// MultiPolygon (bare or as a Feature) in the body: the same answer as the GET with coords=,
// for geometries too long for a URL; a read, so a reader token suffices.
func (s *server) areaStatisticsPost(w http.ResponseWriter, r *http.Request) error {
	q, err := parseStatisticsQuery(r)
	if err != nil {
		return err
	}
	body, err := readAllLimited(r)
	if err != nil {
		return err
	}
	region, err := s.ev.PrepareRegionGeoJSON(body, "geometry")
	if err != nil {
		return err
	}
	return s.answerStatistics(w, r, region, q)
}

func (s *server) answerStatistics(w http.ResponseWriter, r *http.Request, region geo.PreparedRegion, q statisticsQuery) error {
	id := chi.URLParam(r, "datasetId")
	if q.models != nil {
		res, err := s.ev.StatisticsByModel(r.Context(), id, q.models, q.options, region, q.resX, q.resY)
		if err != nil {
			return err
		}
		return s.writeComparison(w, r, id, "", q, res)
	}
	res, err := s.ev.Statistics(r.Context(), id, q.options, region, q.resX, q.resY, nil)
	if err != nil {
		return err
	}
	return s.writeStatistics(w, r, id, "", q, res)
}

// locationStatistics answers GET /api/collections/{id}/locations/{regionId}/statistics; as
// areaStatistics, a one-model question without the grid over Limits.MaxStatisticsCells cells
// becomes a job.
func (s *server) locationStatistics(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "datasetId")
	q, err := parseStatisticsQuery(r)
	if err != nil {
		return err
	}
	if q.models != nil {
		res, rg, err := s.ev.RegionStatisticsByModel(r.Context(), id, chi.URLParam(r, "regionId"), q.models, q.options, q.resX, q.resY)
		if err != nil {
			return err
		}
		return s.writeComparison(w, r, id, rg.ID, q, res)
	}
	req := evaluate.StatisticsRequest{Dataset: id, Region: chi.URLParam(r, "regionId"), Options: q.options, ResX: q.resX, ResY: q.resY}
	if !q.grid {
		if queued, err := s.statisticsAsJob(w, r, req); queued || err != nil {
			return err
		}
	}
	res, rg, err := s.ev.RegionStatistics(r.Context(), id, req.Region, q.options, q.resX, q.resY, nil)
	if err != nil {
		return err
	}
	return s.writeStatistics(w, r, id, rg.ID, q, res)
}

// statisticsBlock builds one model's statistics answer (statisticsBody); with grid, the gridded
// values of the same lattice (evaluate.Service.Area over the same region and resolution) are
// attached.
func (s *server) statisticsBlock(r *http.Request, id, region string, q statisticsQuery, res *evaluate.StatsResult) (statisticsAnswer, error) {
	s.metrics.cells.Add(float64(res.Cells))
	a := statisticsBody(s.ev, id, region, res)
	if q.grid {
		o := q.options
		o.Model = a.Model
		ar, err := s.ev.Area(r.Context(), id, o, res.Region, q.resX, q.resY)
		if err != nil {
			return a, err
		}
		c := gridCoverage(ar.Lattice, ar.Query.Params, ar.Grids)
		a.Grid = &c
	}
	return a, nil
}

func (s *server) writeStatistics(w http.ResponseWriter, r *http.Request, id, region string, q statisticsQuery, res *evaluate.StatsResult) error {
	a, err := s.statisticsBlock(r, id, region, q, res)
	if err != nil {
		return err
	}
	setProvenance(w, *a.Provenance)
	setAnswerHeaders(w, res.Flags, res.Region.Repairs)
	return writeJSON(w, http.StatusOK, "", a)
}

func (s *server) writeComparison(w http.ResponseWriter, r *http.Request, id, region string, q statisticsQuery, res []*evaluate.StatsResult) error {
	c := comparisonAnswer{Dataset: id, Region: region}
	for _, sr := range res {
		a, err := s.statisticsBlock(r, id, region, q, sr)
		if err != nil {
			return err
		}
		c.Models = append(c.Models, a.Model)
		c.Blocks = append(c.Blocks, a)
		if c.Caution == "" {
			c.Caution = a.Caution
		}
	}
	if c.Caution != "" {
		w.Header().Set("Ridgeflank-Caution", c.Caution)
	}
	return writeJSON(w, http.StatusOK, "", c)
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

// statisticsBody is the JSON answer of a statistics question, the same whether it is answered
// at once or by a job.
func statisticsBody(ev *evaluate.Service, id, region string, res *evaluate.StatsResult) statisticsAnswer {
	prov := ev.Provenance(res.Query)
	a := statisticsAnswer{Dataset: id, Region: region, Model: res.Query.Model.Params().ID, ResolutionX: res.Lattice.DX, ResolutionY: res.Lattice.DY, Cells: res.Cells,
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
