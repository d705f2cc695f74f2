package evaluate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/store"
)

// RowReader is a grid read in blocks of whole rows: ingest.Reader (an input file under
// import's rules) and gdal.Dataset (a stored grid) are ones.
type RowReader interface {
	// Header is the grid's lattice (Data nil).
	Header() geo.Grid
	// ReadRows fills dst with len(dst)/NX whole rows from row0 (row 0 northernmost), no-data
	// as NaN, in the unit the role needs (age Ma, bathymetry m, sediment m, crust km).
	ReadRows(row0 int, dst []float32) error
}

// RangeReader is a RowReader that also reports the extremes of the values it read
// (ingest.Reader is one: its value check finds them anyway). EvaluateGrid uses them to skip
// the per-cell plausibility screen of a block whose inputs all lie within the screen's limits.
type RangeReader interface {
	RowReader
	// ReadRowsRange is ReadRows also returning the least and the greatest of the values read
	// that are not NaN (lo = +Inf and hi = −Inf when every value is NaN).
	ReadRowsRange(row0 int, dst []float32) (lo, hi float32, err error)
}

// valueRange is what a RangeReader said of the values of one read (known false for other
// readers).
type valueRange struct {
	lo, hi float32
	known  bool
}

// readRange reads rows like r.ReadRows, with their extremes when r is a RangeReader.
func readRange(r RowReader, row0 int, dst []float32) (valueRange, error) {
	if rr, ok := r.(RangeReader); ok {
		lo, hi, err := rr.ReadRowsRange(row0, dst)
		return valueRange{lo, hi, true}, err
	}
	return valueRange{}, r.ReadRows(row0, dst)
}

// GridInputs are the grids of a whole-grid evaluation, each read in row blocks. The output
// lattice is Age's; Depth, Sediment and Crust may lie on any lattice (sampled bilinearly at the
// output positions when their samples do not coincide with Age's, as Area samples them).
type GridInputs struct {
	// Name names the inputs in messages (e.g. the dataset id or the age file's name).
	Name     string
	Age      RowReader // seafloor age, Ma (required)
	Depth    RowReader // observed bathymetry, m, in DepthSense (optional)
	Sediment RowReader // sediment thickness, m (optional)
	Crust    RowReader // crustal thickness, km (optional)
	// AgeUncertainty is the seafloor-age uncertainty, Ma, one standard deviation (optional):
	// read by the *_uncertainty parameters unless the question gives one value
	// (Options.AgeUncertaintyMa), which then holds for every cell, as for a stored dataset.
	AgeUncertainty RowReader
	// DepthSense is Depth's vertical sense (DepthPositiveDown or ElevationPositiveUp).
	DepthSense geo.VerticalSense
	// Workers is the number of goroutines computing a block; 0 means GOMAXPROCS.
	Workers int
}

// ResolveGrid checks o against the grids of in, as Resolve checks them against a stored
// dataset (same faults): exactly one parameter must be asked for.
func (s *Service) ResolveGrid(ctx context.Context, in GridInputs, o Options) (*Query, error) {
	if in.Age == nil {
		return nil, fault.New(fault.InvalidParameter, "age", "an age grid is required")
	}
	if len(o.Parameters) != 1 {
		return nil, fault.New(fault.InvalidParameter, "parameter-name", "ask for exactly one parameter (one of %s)", joinIDs())
	}
	d := &Dataset{Row: store.Dataset{ID: in.Name}, HasDepth: in.Depth != nil, HasSediment: in.Sediment != nil}
	if in.AgeUncertainty != nil {
		d.AgeUncertaintyRef = GridRef{ID: in.Name + " age uncertainty", Role: RoleAgeUncertainty}
	}
	return s.Resolve(ctx, d, o)
}

func joinIDs() string {
	ids := ParameterIDs()
	out := ""
	for i, id := range ids {
		if i > 0 {
			out += ", "
		}
		out += id
	}
	return out
}

// GridMargin is the number of rows a companion grid is read beyond the rows that bracket an
// output block, so that bilinear samples near a block's edge see the same neighbours as in a
// whole-grid evaluation.
const GridMargin = 2

// EvaluateGrid computes q's one parameter over the whole lattice of in.Age, block by block of
// rowsPerBlock output rows, and calls fn with each block in row order (never concurrently;
// values holds rows·NX float32, NaN = no data, and is reused after fn returns). The numbers are
// Area's at the age grid's own spacing over a region covering the grid: the same kernel
// (geo.EvaluateInto), the same sampling of companion grids, the same plausibility screening
// (values refused as physically impossible are NaN and counted in the returned flags; the
// corrected depths it needs are computed by the rule every window follows, screenCorrOnItsOwn,
// per block).
//
// Memory is bounded by a few blocks: reading the next block, computing one (in parallel over
// in.Workers goroutines) and handing the last to fn overlap, with two buffers each; a
// companion grid is read over the rows covering the block plus GridMargin rows. An error from
// a reader or fn stops the evaluation and is returned; ctx is checked between blocks.
func (s *Service) EvaluateGrid(ctx context.Context, q *Query, in GridInputs, rowsPerBlock int, fn func(row0 int, values []float32) error) ([]Flag, error) {
	if q == nil || len(q.Params) != 1 {
		return nil, errors.New("EvaluateGrid: a query with one parameter is required")
	}
	if fn == nil {
		return nil, errors.New("EvaluateGrid: nil callback")
	}
	age := in.Age.Header()
	age.Data = nil
	if err := validHeader(age); err != nil {
		return nil, fault.New(fault.InvalidGrid, "age", "age grid: %v", err)
	}
	nx, ny := age.NX, age.NY
	if rowsPerBlock <= 0 {
		rowsPerBlock = 256
	}
	rowsPerBlock = min(rowsPerBlock, ny)
	p := q.Params[0]
	fl := newFlagger(q.Params)
	want := q.outputs()
	needCorr := fl.need&inCorr != 0 && in.Depth != nil && want&(geo.OutCorrectedDepth|geo.OutResidualDepth|geo.OutResidualDepthSigma) != 0
	readObs := in.Depth != nil && (fl.need&inObs != 0 || needCorr)
	readSed := in.Sediment != nil && (fl.need&inSed != 0 || needCorr)
	readCrust := in.Crust != nil && needCorr
	readSigma := in.AgeUncertainty != nil && q.usesAgeUncertaintyGrid()
	comps := []*companion{nil, nil, nil, nil}
	for i, c := range []struct {
		r    RowReader
		use  bool
		what string
	}{{in.Depth, readObs, "observed depth"}, {in.Sediment, readSed, "sediment thickness"}, {in.Crust, readCrust, "crustal thickness"},
		{in.AgeUncertainty, readSigma, "age uncertainty"}} {
		if !c.use {
			continue
		}
		h := c.r.Header()
		h.Data = nil
		if err := validHeader(h); err != nil {
			return nil, fault.New(fault.InvalidGrid, "file", "%s grid: %v", c.what, err)
		}
		comps[i] = &companion{r: c.r, h: h}
	}

	// Stage 1 (goroutine): read the age rows of a block and the companions' rows covering it.
	type loaded struct {
		row0, rows int
		age        []float32
		comp       [4]*geo.Grid
		rng        [5]valueRange // age, then the companions
		err        error
		set        int
	}
	nBlocks := (ny + rowsPerBlock - 1) / rowsPerBlock
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	type inputSet struct {
		age  []float32
		comp [4][]float32
	}
	sets := [2]*inputSet{{}, {}}
	// The most rows a companion's block takes (its first and last blocks take fewer), so that
	// its buffers are allocated once.
	var compRows [4]int
	for i, c := range comps {
		if c == nil {
			continue
		}
		for k := range nBlocks {
			r0 := k * rowsPerBlock
			top, bot := c.rowsFor(&age, r0, min(r0+rowsPerBlock, ny))
			compRows[i] = max(compRows[i], bot-top)
		}
	}
	freeSets := make(chan int, 2)
	freeSets <- 0
	freeSets <- 1
	loadedCh := make(chan loaded)
	readDone := make(chan struct{})
	go func() {
		defer close(readDone)
		defer close(loadedCh)
		for k := range nBlocks {
			var si int
			select {
			case si = <-freeSets:
			case <-ctx.Done():
				return
			}
			set := sets[si]
			r0 := k * rowsPerBlock
			n := min(rowsPerBlock, ny-r0)
			set.age = grow(set.age, n*nx)
			l := loaded{row0: r0, rows: n, age: set.age, set: si}
			// The grids of a block are read concurrently (each reader is its own file); the
			// first error in the order age, depth, sediment, crust, age uncertainty is the block's.
			var errs [5]error
			var wg sync.WaitGroup
			wg.Add(1)
			go func() { defer wg.Done(); l.rng[0], errs[0] = readRange(in.Age, r0, l.age) }()
			for i, c := range comps {
				if c == nil {
					continue
				}
				top, bot := c.rowsFor(&age, r0, r0+n)
				set.comp[i] = growCap(set.comp[i], (bot-top)*c.h.NX, compRows[i]*c.h.NX)
				g := c.h
				g.NY = bot - top
				g.North = c.h.North - float64(top)*c.h.DY
				g.Data = set.comp[i]
				l.comp[i] = &g
				wg.Add(1)
				go func() { defer wg.Done(); l.rng[i+1], errs[i+1] = readRange(c.r, top, set.comp[i]) }()
			}
			wg.Wait()
			for _, err := range errs {
				if err != nil {
					l.err = err
					break
				}
			}
			select {
			case loadedCh <- l:
			case <-ctx.Done():
				return
			}
			if l.err != nil {
				return
			}
		}
	}()

	// Stage 3 (goroutine): hand finished blocks to fn in order.
	type outBlock struct {
		row0 int
		vals []float32
	}
	freeOut := make(chan []float32, 2)
	freeOut <- nil
	freeOut <- nil
	outCh := make(chan outBlock)
	fnErr := make(chan error, 1)
	go func() {
		var err error
		for b := range outCh {
			if err == nil {
				if err = fn(b.row0, b.vals); err != nil {
					cancel()
				}
			}
			freeOut <- b.vals
		}
		fnErr <- err
	}()

	// Stage 2 (here): compute and screen.
	var scratch struct{ obs, sed, crust, corr []float32 }
	var runErr error
	done := 0
	for l := range loadedCh {
		if l.err != nil {
			runErr = l.err
			break
		}
		if err := ctx.Err(); err != nil {
			runErr = err
			break
		}
		blk := age
		blk.NY = l.rows
		blk.North = age.North - float64(l.row0)*age.DY
		blk.Data = l.age
		n := l.rows * nx
		var vals []float32
		select {
		case vals = <-freeOut:
		case <-ctx.Done():
		}
		if ctx.Err() != nil {
			runErr = ctx.Err()
			break
		}
		vals = grow(vals, n)
		// The inputs of the screen on the output lattice, unless their extremes show that the
		// screen would refuse nothing in this block (then neither they nor the screen are needed).
		screen := !blockClean(fl, p.ID, &blk, &l.comp, &l.rng, in.DepthSense, needCorr, want)
		var obsL, sedL, crustL []float32
		if l.comp[0] != nil && fl.need&inObs != 0 && (screen || p.ID == PObservedDepth) {
			scratch.obs = grow(scratch.obs, n)
			obsL = onto(scratch.obs, &blk, l.comp[0])
			toDepthRows(obsL, in.DepthSense)
		}
		if l.comp[1] != nil && fl.need&inSed != 0 && (screen || p.ID == PSedimentThickness) {
			scratch.sed = grow(scratch.sed, n)
			sedL = onto(scratch.sed, &blk, l.comp[1])
		}
		if l.comp[2] != nil && fl.need&inCrust != 0 && needCorr && screen {
			scratch.crust = grow(scratch.crust, n)
			crustL = onto(scratch.crust, &blk, l.comp[2])
		}
		var corr []float32
		switch p.ID {
		case PSeafloorAge:
			copy(vals, l.age)
		case PObservedDepth:
			copy(vals, obsL)
		case PSedimentThickness:
			copy(vals, sedL)
		default:
			gin := geo.Inputs{Age: &blk, Model: q.Model, Compaction: q.Sediment, Workers: in.Workers, AgeSigmaMa: q.AgeSigmaMa}
			if needCorr {
				gin.Depth, gin.DepthSense, gin.Sediment = l.comp[0], in.DepthSense, l.comp[1]
				if l.comp[2] != nil {
					gin.Crust = l.comp[2]
				}
			}
			if l.comp[3] != nil {
				gin.AgeSigma = l.comp[3] // sampled like the companions, bilinear onto the age lattice
			}
			dst := &geo.Result{}
			outGrid := func(d []float32) *geo.Grid { g := blk; g.Data = d; return &g }
			switch p.ID {
			case PPredictedDepth:
				dst.PredictedDepthM = outGrid(vals)
			case PHeatFlow:
				dst.HeatFlowMWm2 = outGrid(vals)
			case PThermalThickness:
				dst.ThermalThicknessKm = outGrid(vals)
			case PDepth600C:
				dst.Depth600CKm = outGrid(vals)
			case PCorrectedDepth:
				dst.CorrectedDepthM, corr = outGrid(vals), vals
			case PResidualDepth:
				dst.ResidualDepthM = outGrid(vals)
			default:
				if err := modelOutput(dst, p.ID, outGrid(vals)); err != nil {
					runErr = err
				}
			}
			if err := geo.EvaluateInto(ctx, gin, dst); err != nil {
				runErr = err
			} else if screen && screenCorrOnItsOwn(needCorr, want, obsL, sedL, l.comp[2] != nil) {
				scratch.corr = grow(scratch.corr, n)
				corr = scratch.corr
				runErr = geo.EvaluateInto(ctx, gin, &geo.Result{CorrectedDepthM: outGrid(corr)})
			}
		}
		if runErr != nil {
			break
		}
		if screen {
			screenRows(fl, vals, l.age, obsL, sedL, crustL, corr)
		}
		freeSets <- l.set
		select {
		case outCh <- outBlock{l.row0, vals}:
		case <-ctx.Done():
			runErr = ctx.Err()
		}
		if runErr != nil {
			break
		}
		done += l.rows
	}
	close(outCh)
	werr := <-fnErr
	cancel()
	for range loadedCh { // let the reader finish
	}
	<-readDone
	if werr != nil {
		return nil, werr
	}
	if runErr != nil {
		return nil, runErr
	}
	if done != ny {
		return nil, fmt.Errorf("evaluate grid: %d of %d rows computed", done, ny)
	}
	return fl.flags(), nil
}

// companion is a companion grid read in row windows.
type companion struct {
	r RowReader
	h geo.Grid
}

// rowsFor returns the rows top..bot−1 of the companion that bracket the latitudes of output
// rows r0..r1−1 of lattice out, with GridMargin more rows on either side, clamped to the grid
// (at least one row).
func (c *companion) rowsFor(out *geo.Grid, r0, r1 int) (top, bot int) {
	fTop := (c.h.North - out.Lat(r0)) / c.h.DY
	fBot := (c.h.North - out.Lat(r1-1)) / c.h.DY
	top = int(math.Floor(fTop)) - GridMargin
	bot = int(math.Ceil(fBot)) + GridMargin + 1
	top = min(max(top, 0), c.h.NY-1)
	bot = max(min(bot, c.h.NY), top+1)
	return top, bot
}

func validHeader(h geo.Grid) error {
	if h.NX <= 0 || h.NY <= 0 || !(h.DX > 0) || !(h.DY > 0) {
		return fmt.Errorf("invalid lattice %d×%d, spacing %g×%g", h.NX, h.NY, h.DX, h.DY)
	}
	return nil
}

// grow returns s with length n, reallocated only when its capacity is too small.
func grow(s []float32, n int) []float32 {
	return growCap(s, n, n)
}

// growCap is grow allocating room for c ≥ n values when it reallocates (the largest of the
// blocks a buffer will hold, so that it is allocated once), with blockBuf.
func growCap(s []float32, n, c int) []float32 {
	if cap(s) < n {
		s = blockBuf(max(n, c))
	}
	return s[:n]
}

// onto writes src's values at the sample positions of lattice into dst (len NX·NY of lattice)
// and returns it: by index when src's samples coincide with lattice's (same spacing, origin
// offset by whole cells), else bilinear samples (geo.BilinearSampler, SampleBilinear's values), as Area's
// sampleOnto gives them.
func onto(dst []float32, lattice, src *geo.Grid) []float32 {
	nx := lattice.NX
	if byIndex(lattice, src) {
		co := int(math.Round((lattice.West - src.West) / src.DX))
		ro := int(math.Round((src.North - lattice.North) / src.DY))
		nan := float32(math.NaN())
		for r := range lattice.NY {
			d := dst[r*nx : (r+1)*nx]
			sr := r + ro
			if sr < 0 || sr >= src.NY {
				for i := range d {
					d[i] = nan
				}
				continue
			}
			copy(d, src.Data[sr*src.NX+co:sr*src.NX+co+nx])
		}
		return dst
	}
	lons := make([]float64, nx)
	for c := range lons {
		lons[c] = lattice.Lon(c)
	}
	sm := src.NewBilinearSampler(lons)
	for r := range lattice.NY {
		sm.Row(lattice.Lat(r), dst[r*nx:(r+1)*nx])
	}
	return dst
}

// byIndex reports whether onto copies src's values onto lattice by index (each value on the
// lattice is one of src's, or NaN), rather than sampling them bilinearly.
func byIndex(lattice, src *geo.Grid) bool {
	if !sameLattice(lattice, src) {
		return false
	}
	co := int(math.Round((lattice.West - src.West) / src.DX))
	return co >= 0 && co+lattice.NX <= src.NX
}

// blockClean reports whether screenRows would refuse no value of a block of parameter id,
// judged from the extremes of its inputs alone (rng: age, then the companions comp, as read),
// so that the screen, and the inputs it alone needs on the output lattice, can be skipped
// with the same result. It is true only when every input the screen would see has known
// extremes within the screen's limits (screen: age 0 to MaxAgeMa, sediment 0 to MaxSedimentM,
// observed depth at most MaxDepthM), a companion is read onto the block by index (its values
// there are a subset of those read, or NaN), and no corrected depth would be screened: not
// for corrected depth itself, nor with a crustal-thickness grid, nor when the greatest depth
// plus the greatest sediment thickness could pass MaxDepthM (corrCanExceedRows' bound). NaN
// passes every test of the screen, as in screen.
func blockClean(fl *flagger, id string, blk *geo.Grid, comp *[4]*geo.Grid, rng *[5]valueRange, sense geo.VerticalSense, needCorr bool, want geo.Outputs) bool {
	if id == PCorrectedDepth || !rng[0].known || rng[0].lo < 0 || float64(rng[0].hi) > MaxAgeMa {
		return false
	}
	obsHi := math.Inf(-1) // greatest observed depth, m positive down
	if comp[0] != nil && fl.need&inObs != 0 {
		r := rng[1]
		if !r.known || !byIndex(blk, comp[0]) {
			return false
		}
		switch sense {
		case geo.DepthPositiveDown:
			obsHi = float64(r.hi)
		case geo.ElevationPositiveUp:
			obsHi = -float64(r.lo)
		default:
			return false
		}
		if obsHi > MaxDepthM {
			return false
		}
	}
	sedHi := math.Inf(-1)
	if comp[1] != nil && fl.need&inSed != 0 {
		r := rng[2]
		if !r.known || !byIndex(blk, comp[1]) || r.lo < 0 || float64(r.hi) > MaxSedimentM {
			return false
		}
		sedHi = float64(r.hi)
	}
	if comp[2] != nil && (needCorr || fl.need&inCrust != 0) {
		return false
	}
	if needCorr && want&geo.OutCorrectedDepth == 0 && obsHi+max(sedHi, 0) > MaxDepthM {
		return false
	}
	return true
}

// screenRows is screenGrids over one block of one parameter: vals[k] is refused (NaN) when the
// flagger finds an impossible input at k. A quick range test passes the ordinary cells
// without a call; nil inputs are absent.
func screenRows(fl *flagger, vals, age, obs, sed, crust, corr []float32) {
	at := func(s []float32, k int) float32 {
		if s == nil {
			return float32(math.NaN())
		}
		return s[k]
	}
	nan32 := float32(math.NaN())
	for k := range vals {
		a, o, s, c, cd := float64(age[k]), float64(at(obs, k)), float64(at(sed, k)), float64(at(crust, k)), float64(at(corr, k))
		if !(a < 0 || a > MaxAgeMa || s < 0 || s > MaxSedimentM || c < 0 || o > MaxDepthM || cd > MaxDepthM) {
			continue
		}
		fl.check(sample{age: a, obs: o, sed: s, crust: c, corr: cd}, func(int) { vals[k] = nan32 })
	}
}
