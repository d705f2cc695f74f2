package evaluate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/raster"
	"ridgeflank/store"
)

// AreaResult are the parameters of a question on a lattice over a region.
type AreaResult struct {
	Query   *Query
	Region  geo.PreparedRegion
	Lattice *geo.Grid   // the output lattice (its Data are the ages there)
	Grids   []*geo.Grid // one per parameter, on Lattice, NaN outside the region and where refused
	Mask    geo.Mask    // cells of Lattice inside the region
	Flags   []Flag      // values refused as physically impossible, by cause
	Stats   []geo.Stats // area-weighted statistics per parameter (Region answers only)
	// ResolutionNote says how the lattice's spacing differs from the asked resolution (finer
	// than the grid, or not a whole multiple of its spacing); empty when it is the one asked
	// or none was asked. The spacing used is Lattice.DX, Lattice.DY.
	ResolutionNote string
}

// Area evaluates o's parameters over region r on the age grid's lattice inside r.Bound,
// coarsened by whole factors to about resX × resY degrees (0: the grid's own spacing), masked to
// r. Raw input grids on the age lattice are coarsened the same way (area-weighted block means,
// geo.Grid.Resample); others are sampled bilinearly at the output positions. Over
// Limits.MaxAreaCells output cells is fault.Over("max_area_cells"), over Limits.MaxInputCells
// input cells fault.Over("max_input_cells"); an area off the dataset is fault.NoData.
func (s *Service) Area(ctx context.Context, datasetID string, o Options, r geo.PreparedRegion, resX, resY float64) (*AreaResult, error) {
	q, err := s.load(ctx, datasetID, o)
	if err != nil {
		return nil, err
	}
	return s.area(ctx, q, r, resX, resY)
}

// Region evaluates o's parameters over the stored region regionID, as Area does, with
// area-weighted statistics of every parameter computed as Statistics computes them (the same
// streams, here fed the answer's grids). A region with no value of some parameter is
// fault.NoData.
func (s *Service) Region(ctx context.Context, datasetID, regionID string, o Options, resX, resY float64) (*AreaResult, store.Region, error) {
	q, err := s.load(ctx, datasetID, o)
	if err != nil {
		return nil, store.Region{}, err
	}
	rg, r, err := s.storedRegion(ctx, regionID)
	if err != nil {
		return nil, rg, err
	}
	res, err := s.area(ctx, q, r, resX, resY)
	if err != nil {
		return nil, rg, err
	}
	for i, p := range q.Params {
		st, err := gridStats(res.Grids[i], res.Mask, p)
		if err != nil {
			return nil, rg, err
		}
		if st.Count == 0 {
			return nil, rg, fault.New(fault.NoData, "", "no cell of the region has a %s value in dataset %q", p.ID, q.Dataset.Row.ID)
		}
		res.Stats = append(res.Stats, st)
	}
	return res, rg, nil
}

// gridStats are the statistics of one parameter's grid inside mask, by the streams
// Statistics uses (one block, two passes).
func gridStats(g *geo.Grid, mask geo.Mask, p Parameter) (geo.Stats, error) {
	st, err := geo.NewStatsStream(statsOptions(p), 0)
	if err != nil {
		return geo.Stats{}, err
	}
	if err := st.AddMoments(g, mask); err != nil {
		return geo.Stats{}, err
	}
	if err := st.BeginHistogram(); err != nil {
		return geo.Stats{}, err
	}
	if err := st.AddHistogram(g, mask); err != nil {
		return geo.Stats{}, err
	}
	return st.Result()
}

// areaPlan is how an area question reads its grids: the level of the age file (an exact
// overview) and the whole factors rx, ry that coarsen it further to the answer's lattice.
type areaPlan struct {
	lvl, k, rx, ry int
	inX, inY       int // full-resolution cells of the age grid inside the bound (upper estimate)
}

// planArea checks the resolution and chooses the level: the coarsest exact overview whose
// factor k divides the asked coarsening fx × fy (areaLevel), coarsened the rest of the way by
// area-weighted block means (geo.Grid.Resample).
func planArea(d *Dataset, bound orb.Bound, resX, resY float64) (areaPlan, error) {
	for _, v := range []struct {
		name string
		v    float64
	}{{"resolution-x", resX}, {"resolution-y", resY}} {
		if math.IsNaN(v.v) || v.v < 0 || v.v > 90 {
			return areaPlan{}, fault.New(fault.InvalidParameter, v.name, "%s=%g must be a positive number of degrees (at most 90)", v.name, v.v)
		}
	}
	age := d.AgeHeader()
	fx, fy := factors(&age, resX, resY)
	inX, inY := inputSize(&age, bound)
	lvl, k := areaLevel(d.Files.Age, fx, fy)
	return areaPlan{lvl: lvl, k: k, rx: fx / k, ry: fy / k, inX: inX, inY: inY}, nil
}

// outCells is the number of cells of the answer's lattice inside the bound.
func (p areaPlan) outCells() int64 {
	return int64(ceilDiv(p.inX, p.k*p.rx)) * int64(ceilDiv(p.inY, p.k*p.ry))
}

// readCells is the number of cells read at the plan's level.
func (p areaPlan) readCells() int64 {
	return int64(ceilDiv(p.inX, p.k)) * int64(ceilDiv(p.inY, p.k))
}

func (s *Service) area(ctx context.Context, q *Query, r geo.PreparedRegion, resX, resY float64) (*AreaResult, error) {
	d := q.Dataset
	plan, err := planArea(d, r.Bound, resX, resY)
	if err != nil {
		return nil, err
	}
	// Size checks before any read: cells of the answer and of the input window.
	age := d.AgeHeader()
	if out := plan.outCells(); out > int64(s.limits.MaxAreaCells) {
		need := math.Sqrt(float64(out)/float64(s.limits.MaxAreaCells)) * math.Max(age.DX*float64(plan.k*plan.rx), age.DY*float64(plan.k*plan.ry))
		return nil, fault.Over("max_area_cells", int64(s.limits.MaxAreaCells), out, "coords",
			"the answer would have about %d cells; the limit is %d: ask for a smaller area or set resolution-x and resolution-y to about %.3g degrees or more (statistics alone: the statistics query)",
			out, s.limits.MaxAreaCells, need)
	}
	if in := plan.readCells(); in > int64(s.limits.MaxInputCells) {
		return nil, fault.Over("max_input_cells", int64(s.limits.MaxInputCells), in, "coords",
			"the area covers about %d input cells; the limit is %d", in, s.limits.MaxInputCells)
	}
	fl := newFlagger(q.Params)
	res, err := s.evalWindow(ctx, q, r, r.Bound, plan, fl, false)
	if err != nil {
		return nil, err
	}
	if res == nil {
		return nil, fault.New(fault.NoData, "coords", "no cell centre of dataset %q lies inside the area; try a larger area or a finer resolution", d.Row.ID)
	}
	res.Flags = fl.flags()
	res.ResolutionNote = resolutionNote(&age, plan, resX, resY)
	return res, nil
}

// resolutionNote states the resolution an area answer was given at when it is not the one
// asked: a resolution finer than the age grid's spacing is answered at that spacing (no
// values are invented between cells), and any other at the nearest whole multiple of it.
func resolutionNote(age *geo.Grid, p areaPlan, resX, resY float64) string {
	var notes []string
	for _, a := range []struct {
		name      string
		asked, dx float64
		f         int
	}{{"resolution-x", resX, age.DX, p.k * p.rx}, {"resolution-y", resY, age.DY, p.k * p.ry}} {
		used := a.dx * float64(a.f)
		switch {
		case a.asked <= 0 || math.Abs(used-a.asked) <= 1e-9*a.asked:
		case a.asked < a.dx:
			notes = append(notes, fmt.Sprintf("%s=%g degrees is finer than the grid's spacing; answered at %g degrees (the grid's own)", a.name, a.asked, used))
		default:
			notes = append(notes, fmt.Sprintf("%s=%g degrees is not a whole multiple of the grid's spacing %g degrees; answered at %g degrees", a.name, a.asked, a.dx, used))
		}
	}
	return strings.Join(notes, "; ")
}

// evalWindow evaluates q's parameters on the plan's lattice over the window of bound (all of
// the region's bound, or one band of it), masked to r, refusing impossible values through fl.
// scan reads without keeping new blocks in the cache (raster.File.Scan). A window with no cell
// inside the region answers nil.
func (s *Service) evalWindow(ctx context.Context, q *Query, r geo.PreparedRegion, bound orb.Bound, plan areaPlan, fl *flagger, scan bool) (*AreaResult, error) {
	return s.evalWindowAll(ctx, q, r, bound, plan, fl, scan, false)
}

// evalWindowAll is evalWindow; keepEmpty answers a window with no cell inside the region with
// grids of no data on its lattice instead of nil (a file needs every row).
func (s *Service) evalWindowAll(ctx context.Context, q *Query, r geo.PreparedRegion, bound orb.Bound, plan areaPlan, fl *flagger, scan, keepEmpty bool) (*AreaResult, error) {
	d := q.Dataset
	age := d.AgeHeader()
	want := q.outputs()
	needCorr := fl.need&(inCorr) != 0 && d.Files.Depth != nil && want&(geo.OutCorrectedDepth|geo.OutResidualDepth|geo.OutResidualDepthSigma) != 0
	read := roleAge
	if needCorr || fl.need&inObs != 0 {
		read |= roleDepth
	}
	if needCorr || fl.need&inSed != 0 {
		read |= roleSed
	}
	if needCorr {
		read |= roleCrust
	}
	if q.usesAgeUncertaintyGrid() {
		read |= roleAgeUnc
	}
	if scan {
		read |= roleScan
	}
	v, coarsened, err := s.windowMean(ctx, d, bound, plan.lvl, read, plan.rx, plan.ry)
	if err != nil {
		if isEmptyWindow(err) {
			b := age.Bounds()
			return nil, fault.New(fault.NoData, "coords", "the area does not overlap dataset %q (longitude %g to %g, latitude %g to %g)",
				d.Row.ID, b.Min[0], b.Max[0], b.Min[1], b.Max[1])
		}
		return nil, err
	}
	rx, ry := plan.rx, plan.ry
	if coarsened {
		rx, ry = 1, 1 // read as block means already
	}
	coarsen := func(g *geo.Grid) (*geo.Grid, error) {
		if rx > 1 || ry > 1 {
			return g.Resample(float64(rx)*g.DX, float64(ry)*g.DY)
		}
		return g, nil
	}
	ageW, err := coarsen(v.Age)
	if err != nil {
		return nil, err
	}
	companion := func(g *geo.Grid) *geo.Grid {
		if g == nil || g.NX != v.Age.NX || g.NY != v.Age.NY || !sameLattice(v.Age, g) {
			return g
		}
		cw, err := coarsen(g)
		if err != nil {
			return g
		}
		return cw
	}
	depthW, sedW, crustW := companion(v.Depth), companion(v.Sediment), companion(v.Crust)
	needCorr = needCorr && depthW != nil
	mask, err := geo.GridMask(ageW, r.Parts)
	if err != nil {
		return nil, fault.New(fault.InvalidCoords, "coords", "%v", err)
	}
	if mask.Count() == 0 {
		if !keepEmpty {
			return nil, nil
		}
		res := &AreaResult{Query: q, Region: r, Lattice: ageW, Mask: mask}
		for range q.Params {
			res.Grids = append(res.Grids, geo.NewGrid(ageW.NX, ageW.NY, ageW.West, ageW.North, ageW.DX, ageW.DY, ageW.Registration))
		}
		return res, nil
	}
	// The inputs on the output lattice, for the answers and the plausibility checks.
	var obsL, sedL, crustL *geo.Grid
	if depthW != nil && fl.need&inObs != 0 {
		if d.DepthSense == geo.DepthPositiveDown {
			obsL = onLattice(ageW, depthW) // nothing to convert: read in place
		} else {
			obsL = sampleOnto(ageW, depthW)
			toDepthM(obsL, d.DepthSense)
		}
	}
	if sedW != nil && fl.need&inSed != 0 {
		sedL = onLattice(ageW, sedW)
	}
	if crustW != nil && fl.need&inCrust != 0 && needCorr {
		crustL = sampleOnto(ageW, crustW)
	}
	// Corrected depths for the plausibility screen (screenCorrOnItsOwn).
	screenCorr := screenCorrOnItsOwn(needCorr, want, gridData(obsL), gridData(sedL), crustW != nil)
	var ev, evCorr *geo.Result
	in := geo.Inputs{Age: ageW, Model: q.Model, Compaction: q.Sediment, Mask: mask}
	q.ageSigma(&in, v)
	if in.AgeSigma != nil {
		in.AgeSigma = companion(in.AgeSigma)
	}
	if needCorr {
		in.Depth, in.DepthSense, in.Sediment, in.Crust = depthW, d.DepthSense, sedW, crustW
	} else {
		want &^= geo.OutCorrectedDepth | geo.OutResidualDepth | geo.OutResidualDepthSigma
	}
	if want != 0 {
		if ev, err = geo.Evaluate(ctx, in, want); err != nil {
			return nil, err
		}
	}
	if screenCorr {
		if evCorr, err = geo.Evaluate(ctx, in, geo.OutCorrectedDepth); err != nil {
			return nil, err
		}
	}
	res := &AreaResult{Query: q, Region: r, Lattice: ageW, Mask: mask}
	for _, p := range q.Params {
		g, ok := inputGrid(p.ID, ageW, obsL, sedL)
		if !ok {
			g = modelGrid(ev, p.ID)
		}
		if g == nil { // an input the window does not reach
			g = geo.NewGrid(ageW.NX, ageW.NY, ageW.West, ageW.North, ageW.DX, ageW.DY, ageW.Registration)
		}
		if !p.Predicted {
			mask.FillOutside(g.Data, float32(math.NaN()))
		}
		res.Grids = append(res.Grids, g)
	}
	var corrL *geo.Grid
	if ev != nil {
		corrL = ev.CorrectedDepthM
	}
	if evCorr != nil {
		corrL = evCorr.CorrectedDepthM
	}
	screenGrids(fl, res.Grids, mask, ageW, obsL, sedL, crustL, corrL)
	return res, nil
}

// screenGrids refuses (sets to NaN) every value of grids whose inputs are impossible, counting
// them in fl. Input grids may be nil (absent); mask, if it has cells, limits the cells checked.
// Cells whose inputs are all possible (implausible, below, is false) are passed over without
// screen's bookkeeping: they are the cells screen would find nothing in.
func screenGrids(fl *flagger, grids []*geo.Grid, mask geo.Mask, age, obs, sed, crust, corr *geo.Grid) {
	at := func(g *geo.Grid, k int) float64 {
		if g == nil {
			return nan
		}
		return float64(g.Data[k])
	}
	nan32 := float32(math.NaN())
	useMask := mask.Len() != 0
	ad, od, sd, cd, kd := gridData(age), gridData(obs), gridData(sed), gridData(crust), gridData(corr)
	// Chunks of cells, absent inputs standing in as zeros (possible for each test).
	var zeros [screenChunk]float32
	part := func(d []float32, lo, hi int) []float32 {
		if d == nil {
			return zeros[:hi-lo]
		}
		return d[lo:hi]
	}
	for lo := 0; lo < len(ad); lo += screenChunk {
		hi := min(len(ad), lo+screenChunk)
		a, o, s, c, k := ad[lo:hi], part(od, lo, hi), part(sd, lo, hi), part(cd, lo, hi), part(kd, lo, hi)
		for j := range a {
			if !implausible(a[j], o[j], s[j], c[j], k[j]) || useMask && !mask.Get(lo+j) {
				continue
			}
			i := lo + j
			fl.check(sample{age: at(age, i), obs: at(obs, i), sed: at(sed, i), crust: at(crust, i), corr: at(corr, i)},
				func(p int) { grids[p].Data[i] = nan32 })
		}
	}
}

// screenChunk is the number of cells screenGrids tests at a time.
const screenChunk = 4096

// implausible reports whether screen could find an impossible input among a cell's age,
// observed depth, sediment, crust and corrected depth (absent ones given as 0, which is
// possible for each): a negative or too great age, a negative or too thick sediment column, a
// negative crust, or an observed or corrected depth beyond MaxDepthM. NaN (no value) is
// possible. It is screen's conditions, compared as screen compares them, with none of its
// bookkeeping; screen decides the rest.
func implausible(age, obs, sed, crust, corr float32) bool {
	a, o, s, c, k := float64(age), float64(obs), float64(sed), float64(crust), float64(corr)
	return a < 0 || a > MaxAgeMa || s < 0 || s > MaxSedimentM || c < 0 || o > MaxDepthM || k > MaxDepthM
}

// inputGrid is a copy of the input grid that answers parameter id (age, observed depth in m
// positive down, sediment thickness, all on the output lattice); ok is false for a parameter
// the model computes.
func inputGrid(id string, age, obs, sed *geo.Grid) (g *geo.Grid, ok bool) {
	switch id {
	case PSeafloorAge:
		return age.Clone(), true
	case PObservedDepth:
		return obs.Clone(), true
	case PSedimentThickness:
		return sed.Clone(), true
	}
	return nil, false
}

// modelGrid is the grid of model output parameter id in ev (nil for a parameter the model does
// not compute).
func modelGrid(ev *geo.Result, id string) *geo.Grid {
	switch id {
	case PPredictedDepth:
		return ev.PredictedDepthM
	case PHeatFlow:
		return ev.HeatFlowMWm2
	case PThermalThickness:
		return ev.ThermalThicknessKm
	case PDepth600C:
		return ev.Depth600CKm
	case PCorrectedDepth:
		return ev.CorrectedDepthM
	case PResidualDepth:
		return ev.ResidualDepthM
	case PPredictedDepthUncertainty:
		return ev.PredictedDepthSigmaM
	case PHeatFlowUncertainty:
		return ev.HeatFlowSigmaMWm2
	case PThermalThicknessUncertainty:
		return ev.ThermalThicknessSigmaKm
	case PResidualDepthUncertainty:
		return ev.ResidualDepthSigmaM
	case PRidgePush:
		return ev.RidgePushNPerM
	}
	return nil
}

// sameLattice reports whether b's samples coincide with a's (same spacing, registration and an
// origin offset by whole cells).
func sameLattice(a, b *geo.Grid) bool {
	if a == nil || b == nil || a.Registration != b.Registration {
		return false
	}
	if math.Abs(a.DX-b.DX) > 1e-9*a.DX || math.Abs(a.DY-b.DY) > 1e-9*a.DY {
		return false
	}
	fx := (b.West - a.West) / a.DX
	fy := (b.North - a.North) / a.DY
	return math.Abs(fx-math.Round(fx)) < 1e-6 && math.Abs(fy-math.Round(fy)) < 1e-6
}

// sampleOnto returns src's values on lattice's positions by onto's rule (the one rule of
// every way in: read by index when src's samples coincide with lattice's, bilinear samples
// otherwise).
func sampleOnto(lattice, src *geo.Grid) *geo.Grid {
	out := geo.NewGrid(lattice.NX, lattice.NY, lattice.West, lattice.North, lattice.DX, lattice.DY, lattice.Registration)
	onto(out.Data, lattice, src)
	return out
}

// onLattice is src's values on lattice's positions as sampleOnto gives them, without a copy
// when src is a window of exactly lattice's cells (the same shape, origin and spacing): then
// src itself, which the caller must only read.
func onLattice(lattice, src *geo.Grid) *geo.Grid {
	if src.NX == lattice.NX && src.NY == lattice.NY && sameLattice(lattice, src) &&
		math.Abs(src.West-lattice.West) < 1e-6*lattice.DX && math.Abs(src.North-lattice.North) < 1e-6*lattice.DY {
		return src
	}
	return sampleOnto(lattice, src)
}

// toDepthM converts observed bathymetry in sense to depth in metres, positive down, in place.
func toDepthM(g *geo.Grid, sense geo.VerticalSense) { toDepthRows(g.Data, sense) }

// toDepthRows is toDepthM over a slice of values (geo.ToDepthM's rule: NaN for an unknown
// sense).
func toDepthRows(d []float32, sense geo.VerticalSense) {
	if sense == geo.DepthPositiveDown {
		return
	}
	for i, v := range d {
		d[i] = float32(geo.ToDepthM(float64(v), sense))
	}
}

// gridData is g's values, nil for a nil grid.
func gridData(g *geo.Grid) []float32 {
	if g == nil {
		return nil
	}
	return g.Data
}

func ceilDiv(a, b int) int { return (a + b - 1) / b }

// inputSize is the number of columns and rows of age inside bound (an upper estimate, computed
// before any copy).
func inputSize(age *geo.Grid, bound orb.Bound) (int, int) {
	if bound.Max[0]-bound.Min[0] < 0 {
		bound.Max[0] += 360
	}
	inX := int(math.Ceil((bound.Max[0]-bound.Min[0])/age.DX)) + 1
	inY := int(math.Ceil((bound.Max[1]-bound.Min[1])/age.DY)) + 1
	return min(inX, age.NX), min(inY, age.NY)
}

// factors are the whole coarsening factors for a requested resolution.
func factors(age *geo.Grid, resX, resY float64) (int, int) {
	fx, fy := 1, 1
	if resX > age.DX {
		fx = int(math.Round(resX / age.DX))
	}
	if resY > age.DY {
		fy = int(math.Round(resY / age.DY))
	}
	return fx, fy
}

// areaLevel is the level to read for whole coarsening factors fx, fy of the age grid: the
// coarsest exact overview (raster.File.ExactLevel) whose factor k, a power of two, divides both,
// with k (1 and level 0 when none does).
func areaLevel(f *raster.File, fx, fy int) (lvl, k int) {
	lvl, k = 0, 1
	for p := 2; fx%p == 0 && fy%p == 0; p *= 2 {
		if l := f.ExactLevel(p); l >= 0 {
			lvl, k = l, p
		}
	}
	return lvl, k
}

func isEmptyWindow(err error) bool { return errors.Is(err, geo.ErrEmptyWindow) }

// AreaCost estimates the work and memory of an area question before it is asked: the cells
// read at the level Area would read times the parameters answered (each cell of each parameter
// is a value computed, held and encoded; about 12 bytes each in a CSV answer, measured). The
// HTTP layer weighs concurrent requests and rate limits by it. Bad options or resolutions are
// the fault Area would answer.
func (s *Service) AreaCost(ctx context.Context, datasetID string, o Options, r geo.PreparedRegion, resX, resY float64) (int64, error) {
	q, err := s.load(ctx, datasetID, o)
	if err != nil {
		return 0, err
	}
	plan, err := planArea(q.Dataset, r.Bound, resX, resY)
	if err != nil {
		return 0, err
	}
	return plan.readCells() * int64(max(1, len(q.Params))), nil
}
