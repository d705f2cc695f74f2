package evaluate

import (
	"context"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/store"
)

// StatisticsRequest is a statistics question as a job carries it (as JSON): over a stored
// region (Region) or an area given as WKT (Coords), one of the two.
type StatisticsRequest struct {
	Dataset string  `json:"dataset"`
	Region  string  `json:"region,omitempty"` // a stored region's id
	Coords  string  `json:"coords,omitempty"` // POLYGON or MULTIPOLYGON as WKT, longitude first
	Options Options `json:"options"`
	ResX    float64 `json:"resolution_x,omitempty"` // degrees; 0: the grid's own spacing
	ResY    float64 `json:"resolution_y,omitempty"`
}

// statisticsRegion is the region of req, prepared (fault.NotFound for an unknown stored
// region, fault.InvalidCoords for bad WKT).
func (s *Service) statisticsRegion(ctx context.Context, req StatisticsRequest) (store.Region, geo.PreparedRegion, error) {
	if (req.Region == "") == (req.Coords == "") {
		return store.Region{}, geo.PreparedRegion{}, fault.New(fault.InvalidParameter, "coords", "a statistics question names a stored region or gives coords, one of the two")
	}
	if req.Region != "" {
		return s.storedRegion(ctx, req.Region)
	}
	mp, err := ParseArea(req.Coords)
	if err != nil {
		return store.Region{}, geo.PreparedRegion{}, err
	}
	r, err := s.PrepareRegion(mp, "coords")
	return store.Region{}, r, err
}

// StatisticsAsJob says, before anything is computed, whether req needs more work than a
// request should do: it reads more than Limits.MaxStatisticsCells cells (at the level it reads,
// as StatisticsCells counts them), so it is to be answered as a job (AnswerStatistics). cells
// is that count. Over Limits.MaxStatisticsJobCells it is refused even as a job
// (fault.Over("max_statistics_job_cells")).
func (s *Service) StatisticsAsJob(ctx context.Context, req StatisticsRequest) (job bool, cells int64, err error) {
	_, r, err := s.statisticsRegion(ctx, req)
	if err != nil {
		return false, 0, err
	}
	if cells, err = s.StatisticsCells(ctx, req.Dataset, r, req.ResX, req.ResY); err != nil {
		return false, 0, err
	}
	if s.statisticsLimit(cells, false) == nil {
		return false, cells, nil
	}
	return true, cells, s.statisticsLimit(cells, true)
}

// AnswerStatistics answers req as a statistics job does: Statistics (or RegionStatistics)
// under the job's limit, Limits.MaxStatisticsJobCells ("max_statistics_job_cells"), instead of
// the request's. The numbers are those of Statistics: the same bands, streams and screening.
// progress, if not nil, is called with the fraction done.
func (s *Service) AnswerStatistics(ctx context.Context, req StatisticsRequest, progress func(float64)) (*StatsResult, store.Region, error) {
	q, err := s.load(ctx, req.Dataset, req.Options)
	if err != nil {
		return nil, store.Region{}, err
	}
	rg, r, err := s.statisticsRegion(ctx, req)
	if err != nil {
		return nil, rg, err
	}
	res, err := s.statistics(ctx, q, r, req.ResX, req.ResY, progress, true)
	return res, rg, err
}
