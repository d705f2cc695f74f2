package evaluate

import (
	"context"
	"errors"
	"math"
	"runtime"
	"strings"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/raster"
	"ridgeflank/store"
)

// StatsResult are area-weighted statistics of a question's parameters over a region, without
// the gridded values.
type StatsResult struct {
	Query  *Query
	Region geo.PreparedRegion
	// Lattice is the shape (no Data) of the lattice the statistics were computed on over the
	// region's bound: the age grid's, coarsened to the asked resolution.
	Lattice geo.Grid
	Cells   int64       // lattice cells inside the region (valid or not)
	Stats   []geo.Stats // one per parameter, in Query.Params order
	Flags   []Flag      // values refused as physically impossible, by cause
	// MeanUncertainty is, per parameter (Query.Params order), the uncertainty of its mean from
	// the seafloor-age uncertainty; nil for parameters without one (inputs, corrected depth,
	// 600 °C isotherm, ridge push, the uncertainty parameters themselves) or when the question has
	// no age uncertainty (no grid, no single value).
	MeanUncertainty []*MeanUncertainty
}

// MeanUncertainty is the uncertainty of a region's area-weighted mean of one parameter, from
// the per-cell uncertainties σ (one standard deviation) that the seafloor-age uncertainty
// gives it (the parameter's _uncertainty companion), in the parameter's unit.
type MeanUncertainty struct {
	// Independent is √(Σw²σ²)/Σw: the uncertainty of the mean if the cells' errors were
	// independent (σ/√n for equal weights and σ). OPTIMISTIC: age errors are correlated over
	// tens to hundreds of km (they come from interpolating between magnetic isochrons), so the
	// true value lies between this and Correlated.
	Independent float64
	// Correlated is Σwσ/Σw, the area-weighted mean σ: the uncertainty of the mean if every
	// cell's error were the same (fully correlated); the conservative bound.
	Correlated float64
}

// uncertaintyParam maps a parameter to the parameter carrying its age uncertainty.
var uncertaintyParam = map[string]string{
	PPredictedDepth:   PPredictedDepthUncertainty,
	PHeatFlow:         PHeatFlowUncertainty,
	PThermalThickness: PThermalThicknessUncertainty,
	PResidualDepth:    PResidualDepthUncertainty,
}

// withUncertainties returns q's parameters followed by the age-uncertainty parameters its
// parameters need for MeanUncertainty and are not already asked for, and for each of q's
// parameters the index of its uncertainty parameter in that list (−1: none). Without an age
// uncertainty for the question it returns q's parameters and nil.
func withUncertainties(q *Query) ([]Parameter, []int) {
	if q.AgeSigmaMa == 0 && !q.Dataset.HasAgeUncertainty() {
		return q.Params, nil
	}
	ps := append([]Parameter(nil), q.Params...)
	idx := make([]int, len(q.Params))
	for i, p := range q.Params {
		idx[i] = -1
		u, ok := uncertaintyParam[p.ID]
		if !ok {
			continue
		}
		for j, o := range ps {
			if o.ID == u {
				idx[i] = j
			}
		}
		if idx[i] < 0 {
			up, _ := ParameterByID(u)
			idx[i] = len(ps)
			ps = append(ps, up)
		}
	}
	return ps, idx
}

// statsKeepCells is the number of lattice cells (all parameters together) up to which a
// statistics question keeps its evaluated bands between the two passes instead of computing
// them again: 16 M float32 values, 64 MB.
const statsKeepCells = 16 << 20

// Statistics computes area-weighted statistics (geo.StatsStream: mean, standard deviation,
// minimum, maximum, median and percentiles with their stated error bound, histogram: 50 m
// bins for parameters in metres, else 50 bins) of o's parameters over region r on the lattice
// Area would answer (resX, resY degrees; 0: full resolution), without ever holding the whole
// lattice: the region's window is evaluated in bands of rows, twice (moments, then histograms),
// reading blocks without filling the cache. More lattice cells read than
// Limits.MaxStatisticsCells is fault.Over("max_statistics_cells"); a region with no value of
// some parameter is fault.NoData. progress, if not nil, is called with the fraction done.
func (s *Service) Statistics(ctx context.Context, datasetID string, o Options, r geo.PreparedRegion, resX, resY float64, progress func(float64)) (*StatsResult, error) {
	q, err := s.load(ctx, datasetID, o)
	if err != nil {
		return nil, err
	}
	return s.statistics(ctx, q, r, resX, resY, progress, false)
}

// RegionStatistics is Statistics over the stored region regionID.
func (s *Service) RegionStatistics(ctx context.Context, datasetID, regionID string, o Options, resX, resY float64, progress func(float64)) (*StatsResult, store.Region, error) {
	q, err := s.load(ctx, datasetID, o)
	if err != nil {
		return nil, store.Region{}, err
	}
	rg, r, err := s.storedRegion(ctx, regionID)
	if err != nil {
		return nil, rg, err
	}
	res, err := s.statistics(ctx, q, r, resX, resY, progress, false)
	return res, rg, err
}

// storedRegion reads and prepares a stored region (fault.NotFound when there is none).
func (s *Service) storedRegion(ctx context.Context, regionID string) (store.Region, geo.PreparedRegion, error) {
	rg, err := s.st.GetRegion(ctx, regionID)
	if err != nil {
		if errors.Is(err, store.ErrNotFound) {
			return rg, geo.PreparedRegion{}, fault.New(fault.NotFound, "", "no location (region) %q%w", regionID, quiet(err))
		}
		return rg, geo.PreparedRegion{}, err
	}
	r, err := s.PrepareRegion(rg.Geometry, "geometry")
	return rg, r, err
}

// StatisticsCells is the number of cells Statistics would read (at the level it reads), for
// choosing between an answer now and a job.
func (s *Service) StatisticsCells(ctx context.Context, datasetID string, r geo.PreparedRegion, resX, resY float64) (int64, error) {
	d, err := s.Dataset(ctx, datasetID)
	if err != nil {
		return 0, err
	}
	plan, err := planArea(d, r.Bound, resX, resY)
	if err != nil {
		return 0, err
	}
	return plan.readCells(), nil
}

// statistics answers a statistics question; job says it runs as a job (limit
// MaxStatisticsJobCells) rather than in a request (MaxStatisticsCells).
func (s *Service) statistics(ctx context.Context, q *Query, r geo.PreparedRegion, resX, resY float64, progress func(float64), job bool) (*StatsResult, error) {
	d := q.Dataset
	plan, err := planArea(d, r.Bound, resX, resY)
	if err != nil {
		return nil, err
	}
	if err := s.statisticsLimit(plan.readCells(), job); err != nil {
		return nil, err
	}
	if progress == nil {
		progress = func(float64) {}
	}
	bands, err := rowBands(d.Files.Age, r.Bound, plan)
	if err != nil {
		if isEmptyWindow(err) {
			return nil, fault.New(fault.NoData, "coords", "the area does not overlap dataset %q", d.Row.ID)
		}
		return nil, err
	}
	// The uncertainty parameters MeanUncertainty needs are evaluated with the others.
	asked := q
	all, uncIdx := withUncertainties(q)
	if len(all) > len(q.Params) {
		qe := *q
		qe.Params = all
		q = &qe
	}
	streams := make([]*geo.StatsStream, len(q.Params))
	for i, p := range q.Params {
		if streams[i], err = geo.NewStatsStream(statsOptions(p), 0); err != nil {
			return nil, err
		}
	}
	fl := newFlagger(q.Params)
	res := &StatsResult{Query: asked, Region: r}
	keep := plan.outCells()*int64(len(q.Params)) <= statsKeepCells
	var kept []*AreaResult
	scan := s.scans(plan)
	steps := float64(2 * len(bands))
	workers := bandWorkers(bands, &plan, d.Files.Age)
	err = s.bandsInOrder(ctx, q, r, bands, plan, scan, workers, func(i int, ar *AreaResult, bf *flagger) error {
		fl.merge(bf)
		if res.Lattice.NX == 0 {
			res.Lattice = *ar.Lattice
			res.Lattice.Data = nil
		}
		res.Cells += int64(ar.Mask.Count())
		for k, g := range ar.Grids {
			if err := streams[k].AddMoments(g, ar.Mask); err != nil {
				return err
			}
		}
		if keep {
			kept = append(kept, ar)
		}
		progress(float64(i+1) / steps)
		return nil
	})
	if err != nil {
		return nil, err
	}
	if res.Cells == 0 {
		return nil, fault.New(fault.NoData, "coords", "no cell centre of dataset %q lies inside the area; try a larger area or a finer resolution", d.Row.ID)
	}
	for _, st := range streams {
		if err := st.BeginHistogram(); err != nil {
			return nil, err
		}
	}
	second := func(ar *AreaResult) error {
		for k, g := range ar.Grids {
			if err := streams[k].AddHistogram(g, ar.Mask); err != nil {
				return err
			}
		}
		return nil
	}
	if keep {
		for _, ar := range kept {
			if err := second(ar); err != nil {
				return nil, err
			}
		}
	} else {
		// refusals were counted in the first pass: the bands' own flaggers are dropped
		err := s.bandsInOrder(ctx, q, r, bands, plan, scan, workers, func(i int, ar *AreaResult, _ *flagger) error {
			if err := second(ar); err != nil {
				return err
			}
			progress(float64(len(bands)+i+1) / steps)
			return nil
		})
		if err != nil {
			return nil, err
		}
	}
	for i, p := range q.Params {
		st, err := streams[i].Result()
		if err != nil {
			return nil, err
		}
		if i >= len(asked.Params) {
			res.Stats = append(res.Stats, st) // an uncertainty companion: read below
			continue
		}
		if st.Count == 0 {
			return nil, fault.New(fault.NoData, "", "no cell of the region has a %s value in dataset %q", p.ID, d.Row.ID)
		}
		res.Stats = append(res.Stats, st)
	}
	if uncIdx != nil {
		aq := *asked
		aq.meanUnc = true
		res.Query = &aq
		res.MeanUncertainty = make([]*MeanUncertainty, len(asked.Params))
		for i, j := range uncIdx {
			if j >= 0 && res.Stats[j].Count > 0 {
				res.MeanUncertainty[i] = &MeanUncertainty{Independent: res.Stats[j].QuadratureMean, Correlated: res.Stats[j].Mean}
			}
		}
	}
	res.Stats = res.Stats[:len(asked.Params)]
	flags := fl.flags()
	res.Flags = flags[:0]
	for _, f := range flags {
		if _, ok := asked.param(f.Parameter); ok {
			res.Flags = append(res.Flags, f)
		}
	}
	progress(1)
	return res, nil
}

// maxBandWorkers bounds the bands a statistics question evaluates at once, and
// maxBandCellsInFlight the lattice cells of the bands evaluated, waiting or being fed to the
// streams at once (each band holds about 16 bytes a cell while it is evaluated: its age, depth
// and sediment windows and the answer), so a wide region's bands are evaluated one at a time,
// as before.
const (
	maxBandWorkers       = 2
	maxBandCellsInFlight = 6 << 20
)

// bandWorkers is the number of bands of plan held at once (evaluated, waiting or being fed):
// up to GOMAXPROCS and maxBandWorkers, fewer when the bands are so wide that more would hold
// over maxBandCellsInFlight cells.
func bandWorkers(bands []orb.Bound, plan *areaPlan, age *raster.File) int {
	if len(bands) < 2 {
		return 1
	}
	lv := age.Levels()[plan.lvl].Grid
	sp, err := lv.WindowSpec(bands[0])
	if err != nil {
		return 1
	}
	cells := max(1, sp.Out.NX*sp.Out.NY)
	return max(1, min(runtime.GOMAXPROCS(0), maxBandWorkers, maxBandCellsInFlight/cells))
}

// bandsInOrder evaluates q over each of bands (evalWindow, each band with a flagger of its
// own), up to workers bands at once, and calls fn with each band's answer in band order, never
// concurrently, so whatever fn accumulates is accumulated in the order of a sequential pass. At
// most workers bands are held at once, the one fn is given included (with one worker, one band
// at a time, as a plain loop).
// Bands outside the dataset or with no cell in the region are passed over (fn is not called);
// another error, or fn's, stops the evaluation and is returned.
func (s *Service) bandsInOrder(ctx context.Context, q *Query, r geo.PreparedRegion, bands []orb.Bound, plan areaPlan, scan bool, workers int,
	fn func(i int, ar *AreaResult, fl *flagger) error) error {
	type out struct {
		ar  *AreaResult
		fl  *flagger
		err error
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	results := make([]chan out, len(bands))
	for i := range results {
		results[i] = make(chan out, 1)
	}
	// A band starts when a slot is free; the slot is given back once fn has returned (or the
	// band is passed over).
	slots := make(chan struct{}, max(1, workers))
	go func() {
		for i, b := range bands {
			select {
			case slots <- struct{}{}:
			case <-ctx.Done():
				return
			}
			go func() {
				fl := newFlagger(q.Params)
				ar, err := s.evalWindow(ctx, q, r, b, plan, fl, scan)
				results[i] <- out{ar, fl, err}
			}()
		}
	}()
	for i := range bands {
		var o out
		select {
		case o = <-results[i]:
		case <-ctx.Done():
			return ctx.Err()
		}
		if o.err != nil {
			if isEmptyWindow(o.err) || fault.KindOf(o.err) == fault.NoData {
				<-slots
				continue
			}
			return o.err
		}
		if o.ar != nil {
			if err := fn(i, o.ar, o.fl); err != nil {
				return err
			}
		}
		<-slots
	}
	return nil
}

// statisticsLimit refuses a statistics question reading cells cells: over
// Limits.MaxStatisticsJobCells as a job, over Limits.MaxStatisticsCells at once.
func (s *Service) statisticsLimit(cells int64, job bool) error {
	if job && cells > s.limits.MaxStatisticsJobCells {
		return fault.Over("max_statistics_job_cells", s.limits.MaxStatisticsJobCells, cells, "coords",
			"the statistics would read about %d cells; the limit of a statistics job is %d: ask for a coarser resolution (resolution-x, resolution-y) or a smaller area",
			cells, s.limits.MaxStatisticsJobCells)
	}
	if !job && cells > int64(s.limits.MaxStatisticsCells) {
		return fault.Over("max_statistics_cells", int64(s.limits.MaxStatisticsCells), cells, "coords",
			"the statistics would read about %d cells; the limit is %d: ask for a coarser resolution (resolution-x, resolution-y) or a smaller area",
			cells, s.limits.MaxStatisticsCells)
	}
	return nil
}

// scans reports whether a question reading plan's cells should read without filling the
// block cache: when its blocks (every grid of the dataset) would take more than half of the
// cache, so they would push out what other questions use and not stay for the next one.
func (s *Service) scans(plan areaPlan) bool {
	blocks, _ := BudgetShares(s.budget)
	return plan.readCells()*4*4 > blocks/2
}

// rowBands splits bound into bands of rows of the age file at the plan's level: whole
// multiples of the plan's further coarsening ry, about one block (raster.BlockSize rows) each,
// so the bands' lattices join into the lattice Area answers. Statistics and large exports
// evaluate them one at a time.
func rowBands(age *raster.File, bound orb.Bound, plan areaPlan) ([]orb.Bound, error) {
	lv := age.Levels()[plan.lvl].Grid
	sp, err := lv.WindowSpec(bound)
	if err != nil {
		return nil, err
	}
	rows := plan.ry * max(1, int(math.Ceil(float64(raster.BlockSize)/float64(plan.ry))))
	if sp.Out.NY <= rows {
		return []orb.Bound{bound}, nil
	}
	var out []orb.Bound
	for r := 0; r < sp.Out.NY; r += rows {
		n := min(rows, sp.Out.NY-r)
		north := lv.Lat(sp.Row0 + r)
		south := lv.Lat(sp.Row0 + r + n - 1)
		out = append(out, orb.Bound{Min: orb.Point{bound.Min[0], south}, Max: orb.Point{bound.Max[0], north}})
	}
	return out, nil
}

// statsOptions are the statistics options of parameter p: a histogram of 50 m bins (edges at
// whole multiples of 50 m) for parameters in metres, else 50 equal bins over the data's range.
func statsOptions(p Parameter) geo.StatsOptions {
	if p.Unit == "m" {
		return geo.StatsOptions{HistogramBinWidth: 50}
	}
	return geo.StatsOptions{HistogramBins: 50}
}

// MaxCompareModels is the most models a side-by-side statistics question may name.
const MaxCompareModels = 6

// StatisticsByModel is Statistics once per model of models (o.Model is ignored), in the order
// given, over the same region and lattice, so the answers compare side by side: each is the
// answer Statistics gives with that model. No model, a model named twice, or more than
// MaxCompareModels are faults naming field "models".
func (s *Service) StatisticsByModel(ctx context.Context, datasetID string, models []string, o Options, r geo.PreparedRegion, resX, resY float64) ([]*StatsResult, error) {
	if err := checkCompareModels(models); err != nil {
		return nil, err
	}
	out := make([]*StatsResult, 0, len(models))
	for _, m := range models {
		om := o
		om.Model = m
		res, err := s.Statistics(ctx, datasetID, om, r, resX, resY, nil)
		if err != nil {
			return nil, err
		}
		out = append(out, res)
	}
	return out, nil
}

// RegionStatisticsByModel is StatisticsByModel over the stored region regionID.
func (s *Service) RegionStatisticsByModel(ctx context.Context, datasetID, regionID string, models []string, o Options, resX, resY float64) ([]*StatsResult, store.Region, error) {
	if err := checkCompareModels(models); err != nil {
		return nil, store.Region{}, err
	}
	rg, r, err := s.storedRegion(ctx, regionID)
	if err != nil {
		return nil, rg, err
	}
	out, err := s.StatisticsByModel(ctx, datasetID, models, o, r, resX, resY)
	return out, rg, err
}

func checkCompareModels(models []string) error {
	if len(models) == 0 {
		return fault.New(fault.InvalidParameter, "models", "models= names no model: give a comma-separated list such as psm,gdh1,halfspace")
	}
	if len(models) > MaxCompareModels {
		return fault.Over("max_compare_models", MaxCompareModels, int64(len(models)), "models",
			"%d models were asked side by side; the limit is %d", len(models), MaxCompareModels)
	}
	seen := map[string]bool{}
	for _, m := range models {
		if m == "" || seen[m] {
			return fault.New(fault.InvalidParameter, "models", "models=%q: each model once, none empty", strings.Join(models, ","))
		}
		seen[m] = true
	}
	return nil
}
