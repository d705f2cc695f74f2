package geo

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"
	"unsafe"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/thermal"
)

// Outputs selects the quantities Evaluate computes; combine them with |. Quantities not asked
// for are not computed.
type Outputs uint32

const (
	// OutPredictedDepth is the model's predicted water depth, depth_m (positive down).
	OutPredictedDepth Outputs = 1 << iota
	// OutHeatFlow is the model's surface heat flow, heat_flow_mw_m2.
	OutHeatFlow
	// OutThermalThickness is the model's thermal lithosphere thickness, thickness_km.
	OutThermalThickness
	// OutDepth600C is the depth below the seafloor of the 600 °C isotherm, depth_km.
	OutDepth600C
	// OutCorrectedDepth is the observed depth corrected for sediment (and crust when a crustal
	// thickness grid is given), depth_m positive down. Needs Inputs.Depth.
	OutCorrectedDepth
	// OutResidualDepth is predicted − corrected depth, depth_m: POSITIVE MEANS SHALLOWER THAN
	// THE MODEL. Needs Inputs.Depth.
	OutResidualDepth
	// OutPredictedDepthSigma is the predicted depth's uncertainty from the age uncertainty, m
	// (one standard deviation; see uncertainty.go). Needs Inputs.AgeSigma or AgeSigmaMa.
	OutPredictedDepthSigma
	// OutHeatFlowSigma is the heat flow's uncertainty from the age uncertainty, mW/m².
	OutHeatFlowSigma
	// OutThermalThicknessSigma is the thermal thickness's uncertainty from the age
	// uncertainty, km.
	OutThermalThicknessSigma
	// OutResidualDepthSigma is the residual depth's uncertainty from the age uncertainty, m
	// (the predicted depth's, where the residual has a value). Needs Inputs.Depth.
	OutResidualDepthSigma
	// OutRidgePush is the ridge push per unit length of ridge, N/m (thermal.RidgePushNPerM
	// through a lookup table by age).
	OutRidgePush

	outSigma = OutPredictedDepthSigma | OutHeatFlowSigma | OutThermalThicknessSigma | OutResidualDepthSigma
	outAll   = OutPredictedDepth | OutHeatFlow | OutThermalThickness | OutDepth600C | OutCorrectedDepth | OutResidualDepth | outSigma | OutRidgePush
)

// MaxResidualWorkers bounds the number of worker goroutines of one evaluation.
const MaxResidualWorkers = 256

// Inputs are the grids and parameters of a residual-depth evaluation.
//
// The output lattice is Age's lattice, or the part of it selected by Window. Depth, Sediment
// and Crust may lie on any lattice: one whose sample positions coincide with the output's (same
// spacing, origin offset by whole cells, same longitude convention) is read by direct index;
// any other is sampled bilinearly (Grid.SampleBilinear) at the output sample positions, one row
// at a time. Samples outside a grid's extent are no data (NaN), and a NaN in any grid used for
// a quantity makes that quantity NaN: no-data sediment is not taken as zero thickness.
type Inputs struct {
	// Age is the seafloor age grid in Ma (required).
	Age *Grid
	// Depth is the observed seafloor in metres, in the vertical sense DepthSense declares
	// (optional; required for corrected and residual depth).
	Depth *Grid
	// DepthSense declares Depth's sign convention: DepthPositiveDown or ElevationPositiveUp.
	// SenseUnknown is refused: declare it, or detect it with DetectVerticalSense first.
	DepthSense VerticalSense
	// Sediment is sediment thickness in metres (optional; no sediment correction without it).
	Sediment *Grid
	// Crust is igneous crustal thickness in km (optional; no crust correction without it).
	Crust *Grid
	// CrustDensityKgM3 is the mean crust density for the crust correction; 0 means
	// thermal.DefaultCrustDensityKgM3.
	CrustDensityKgM3 float64
	// Model is the cooling model (required); predictions come from thermal.TableFor(Model).
	Model thermal.Model
	// Compaction is the sediment porosity–depth parameter set (required with Sediment).
	Compaction thermal.Compaction
	// Window, if non-nil, restricts the evaluation to the part of Age inside the bound
	// (the selection rule of Grid.Window; a copy of that part of Age is made).
	Window *orb.Bound
	// Mask, if it has any cells, must have one per cell of the output lattice (Age, or its
	// window when Window is set; see GridMask); cells not in it are no data in every output.
	Mask Mask
	// Region, if not empty, restricts the evaluation to the cells of the output lattice whose
	// sample positions GridMask puts inside it (combined with Mask when both are given).
	Region orb.MultiPolygon
	// AgeSigma is the age uncertainty in Ma, one standard deviation, on any lattice (sampled
	// like Depth); it is needed, or AgeSigmaMa, by the uncertainty outputs.
	AgeSigma *Grid
	// AgeSigmaMa is one age uncertainty (Ma, one standard deviation) for every cell, used when
	// AgeSigma is nil; it must be > 0 and finite, or NaN for no data (every uncertainty NaN).
	AgeSigmaMa float64
	// Workers is the number of goroutines; 0 means GOMAXPROCS.
	Workers int
	// Progress, if non-nil, is called after each row block with the number of output rows done
	// and the total; calls are serialised and rowsDone increases.
	Progress func(rowsDone, rowsTotal int)
}

// Result holds the grids Evaluate computed; the fields not asked for are nil. All grids share
// the output lattice (Age, or its window).
type Result struct {
	PredictedDepthM    *Grid // depth_m, positive down
	HeatFlowMWm2       *Grid // heat_flow_mw_m2
	ThermalThicknessKm *Grid // thickness_km
	Depth600CKm        *Grid // depth of the 600 °C isotherm below the seafloor, km
	CorrectedDepthM    *Grid // observed depth corrected for sediment (and crust), depth_m positive down
	ResidualDepthM     *Grid // predicted − corrected, m; positive = shallower than the model

	PredictedDepthSigmaM    *Grid // uncertainty of predicted depth from age uncertainty, m
	HeatFlowSigmaMWm2       *Grid // uncertainty of heat flow from age uncertainty, mW/m²
	ThermalThicknessSigmaKm *Grid // uncertainty of thermal thickness from age uncertainty, km
	ResidualDepthSigmaM     *Grid // uncertainty of residual depth from age uncertainty, m
	RidgePushNPerM          *Grid // ridge push per unit length of ridge, N/m
}

// RowBlock is one block of consecutive output rows passed to an EvaluateRows callback. The
// slices hold Rows·Lattice.NX values row-major (nil when not asked for) and are reused after the
// callback returns: copy what you keep.
type RowBlock struct {
	// Lattice describes the whole output lattice (its Data is nil).
	Lattice *Grid
	// Row0 is the first output row of the block; Rows the number of rows.
	Row0, Rows int

	PredictedDepthM    []float32
	HeatFlowMWm2       []float32
	ThermalThicknessKm []float32
	Depth600CKm        []float32
	CorrectedDepthM    []float32
	ResidualDepthM     []float32

	PredictedDepthSigmaM    []float32
	HeatFlowSigmaMWm2       []float32
	ThermalThicknessSigmaKm []float32
	ResidualDepthSigmaM     []float32
	RidgePushNPerM          []float32
}

// ErrNoOutputs is returned when no output is asked for.
var ErrNoOutputs = errors.New("no residual-depth output asked for")

// Evaluate computes the asked-for outputs over the whole output lattice in memory, in parallel
// over row blocks, and returns them as grids. It checks ctx between row blocks and returns
// ctx.Err() when cancelled.
//
// Predictions use the model's lookup table (thermal.TableFor; for residual-only evaluations a
// float32 resampling of it indexed by the bits of the float32 age, error < 1 cm, so the whole
// residual is one fused pass without a square root per cell). The sediment correction is
// thermal.SedimentCorrectionM (Sclater & Christie 1980 compaction, Airy isostasy with the
// model's mantle and water densities) through its tabulated form thermal.SedimentCorrector, and
// the crust correction thermal.CrustCorrectionM (Airy isostasy, relative to 7 km of crust);
// corrected depth = observed depth (positive down) + sediment correction + crust correction, and
// residual depth = predicted − corrected, as thermal.ResidualDepthM defines it (positive =
// shallower than the model).
//
// Predicted depths are model estimates, not navigation data.
func Evaluate(ctx context.Context, in Inputs, want Outputs) (*Result, error) {
	p, err := newResidualPlan(in, want)
	if err != nil {
		return nil, err
	}
	res := &Result{}
	alloc := func(o Outputs) *Grid {
		if want&o == 0 {
			return nil
		}
		g := *p.lat
		g.Data = make([]float32, g.NX*g.NY)
		return &g
	}
	res.PredictedDepthM = alloc(OutPredictedDepth)
	res.HeatFlowMWm2 = alloc(OutHeatFlow)
	res.ThermalThicknessKm = alloc(OutThermalThickness)
	res.Depth600CKm = alloc(OutDepth600C)
	res.CorrectedDepthM = alloc(OutCorrectedDepth)
	res.ResidualDepthM = alloc(OutResidualDepth)
	res.PredictedDepthSigmaM = alloc(OutPredictedDepthSigma)
	res.HeatFlowSigmaMWm2 = alloc(OutHeatFlowSigma)
	res.ThermalThicknessSigmaKm = alloc(OutThermalThicknessSigma)
	res.ResidualDepthSigmaM = alloc(OutResidualDepthSigma)
	res.RidgePushNPerM = alloc(OutRidgePush)
	if err := p.evaluateInto(ctx, res); err != nil {
		return nil, err
	}
	return res, nil
}

// EvaluateInto is Evaluate writing into grids the caller provides and may reuse: it computes
// exactly the non-nil fields of dst (at least one), each of which must have the output
// lattice's size (Age's, or its window's). The grids' headers are not changed.
func EvaluateInto(ctx context.Context, in Inputs, dst *Result) error {
	if dst == nil {
		return errors.New("EvaluateInto: nil result")
	}
	var want Outputs
	for _, f := range []struct {
		g *Grid
		o Outputs
	}{
		{dst.PredictedDepthM, OutPredictedDepth}, {dst.HeatFlowMWm2, OutHeatFlow},
		{dst.ThermalThicknessKm, OutThermalThickness}, {dst.Depth600CKm, OutDepth600C},
		{dst.CorrectedDepthM, OutCorrectedDepth}, {dst.ResidualDepthM, OutResidualDepth},
		{dst.PredictedDepthSigmaM, OutPredictedDepthSigma}, {dst.HeatFlowSigmaMWm2, OutHeatFlowSigma},
		{dst.ThermalThicknessSigmaKm, OutThermalThicknessSigma}, {dst.ResidualDepthSigmaM, OutResidualDepthSigma},
		{dst.RidgePushNPerM, OutRidgePush},
	} {
		if f.g != nil {
			want |= f.o
		}
	}
	p, err := newResidualPlan(in, want)
	if err != nil {
		return err
	}
	for _, g := range []*Grid{dst.PredictedDepthM, dst.HeatFlowMWm2, dst.ThermalThicknessKm, dst.Depth600CKm, dst.CorrectedDepthM, dst.ResidualDepthM,
		dst.PredictedDepthSigmaM, dst.HeatFlowSigmaMWm2, dst.ThermalThicknessSigmaKm, dst.ResidualDepthSigmaM, dst.RidgePushNPerM} {
		if g != nil && (g.NX != p.lat.NX || g.NY != p.lat.NY || len(g.Data) != g.NX*g.NY) {
			return fmt.Errorf("EvaluateInto: output grid %d×%d (%d values), want %d×%d", g.NX, g.NY, len(g.Data), p.lat.NX, p.lat.NY)
		}
	}
	return p.evaluateInto(ctx, dst)
}

func (p *residualPlan) evaluateInto(ctx context.Context, res *Result) error {
	nx, ny := p.lat.NX, p.lat.NY
	slice := func(g *Grid, r0, r1 int) []float32 {
		if g == nil {
			return nil
		}
		return g.Data[r0*nx : r1*nx]
	}
	var mu sync.Mutex
	done := 0
	return p.run(ctx, defaultRowsPerBlock(nx), func(w *residualWorker, r0, r1 int) error {
		dst := residualDst{
			pred:  slice(res.PredictedDepthM, r0, r1),
			hf:    slice(res.HeatFlowMWm2, r0, r1),
			thick: slice(res.ThermalThicknessKm, r0, r1),
			d600:  slice(res.Depth600CKm, r0, r1),
			corr:  slice(res.CorrectedDepthM, r0, r1),
			res:   slice(res.ResidualDepthM, r0, r1),

			predSig:  slice(res.PredictedDepthSigmaM, r0, r1),
			hfSig:    slice(res.HeatFlowSigmaMWm2, r0, r1),
			thickSig: slice(res.ThermalThicknessSigmaKm, r0, r1),
			resSig:   slice(res.ResidualDepthSigmaM, r0, r1),
			push:     slice(res.RidgePushNPerM, r0, r1),
		}
		p.block(w, r0, r1, &dst)
		if p.progress != nil {
			mu.Lock()
			done += r1 - r0
			p.progress(done, ny)
			mu.Unlock()
		}
		return nil
	})
}

// EvaluateRows computes the asked-for outputs block by block and calls fn once per block of
// rowsPerBlock rows (the last may be shorter), in row order and never concurrently, while the
// next blocks are computed in parallel. Memory stays bounded by about 2·workers blocks, so it
// suits grids too large to hold every output at once (exports, statistics). rowsPerBlock ≤ 0
// picks a block of about 256 Ki cells. An error from fn stops the evaluation and is returned;
// ctx is checked between blocks.
func EvaluateRows(ctx context.Context, in Inputs, want Outputs, rowsPerBlock int, fn func(block RowBlock) error) error {
	p, err := newResidualPlan(in, want)
	if err != nil {
		return err
	}
	if fn == nil {
		return errors.New("EvaluateRows: nil callback")
	}
	nx, ny := p.lat.NX, p.lat.NY
	if rowsPerBlock <= 0 {
		rowsPerBlock = defaultRowsPerBlock(nx)
	}
	rowsPerBlock = min(rowsPerBlock, ny)
	nBlocks := (ny + rowsPerBlock - 1) / rowsPerBlock

	parent := ctx
	ctx, cancel := context.WithCancel(parent)
	defer cancel()

	// Buffers: a worker takes a free buffer before claiming the next block index, so the block
	// the consumer waits for is always either unclaimed or held by a worker with a buffer: no
	// deadlock with a pool smaller than the number of blocks.
	nBuf := min(2*p.workers, nBlocks)
	free := make(chan *RowBlock, nBuf)
	for range nBuf {
		b := &RowBlock{Lattice: p.lat}
		mk := func(o Outputs) []float32 {
			if want&o == 0 {
				return nil
			}
			return make([]float32, rowsPerBlock*nx)
		}
		b.PredictedDepthM = mk(OutPredictedDepth)
		b.HeatFlowMWm2 = mk(OutHeatFlow)
		b.ThermalThicknessKm = mk(OutThermalThickness)
		b.Depth600CKm = mk(OutDepth600C)
		b.CorrectedDepthM = mk(OutCorrectedDepth)
		b.ResidualDepthM = mk(OutResidualDepth)
		b.PredictedDepthSigmaM = mk(OutPredictedDepthSigma)
		b.HeatFlowSigmaMWm2 = mk(OutHeatFlowSigma)
		b.ThermalThicknessSigmaKm = mk(OutThermalThicknessSigma)
		b.ResidualDepthSigmaM = mk(OutResidualDepthSigma)
		b.RidgePushNPerM = mk(OutRidgePush)
		free <- b
	}
	type doneBlock struct {
		idx int
		b   *RowBlock
	}
	ready := make(chan doneBlock, nBuf)
	var next atomic.Int64
	var wg sync.WaitGroup
	workers := min(p.workers, nBlocks)
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := p.newWorker()
			for {
				var b *RowBlock
				select {
				case b = <-free:
				case <-ctx.Done():
					return
				}
				k := int(next.Add(1) - 1)
				if k >= nBlocks || ctx.Err() != nil {
					return
				}
				r0 := k * rowsPerBlock
				r1 := min(r0+rowsPerBlock, ny)
				n := (r1 - r0) * nx
				cut := func(s []float32) []float32 {
					if s == nil {
						return nil
					}
					return s[:n]
				}
				b.Row0, b.Rows = r0, r1-r0
				dst := residualDst{
					pred: cut(b.PredictedDepthM), hf: cut(b.HeatFlowMWm2), thick: cut(b.ThermalThicknessKm),
					d600: cut(b.Depth600CKm), corr: cut(b.CorrectedDepthM), res: cut(b.ResidualDepthM),
					predSig: cut(b.PredictedDepthSigmaM), hfSig: cut(b.HeatFlowSigmaMWm2), thickSig: cut(b.ThermalThicknessSigmaKm),
					resSig: cut(b.ResidualDepthSigmaM), push: cut(b.RidgePushNPerM),
				}
				p.block(w, r0, r1, &dst)
				select {
				case ready <- doneBlock{k, b}:
				case <-ctx.Done():
					return
				}
			}
		}()
	}
	go func() { wg.Wait(); close(ready) }()

	pending := make(map[int]*RowBlock, nBuf)
	want0 := 0
	var cbErr error
	for want0 < nBlocks && cbErr == nil {
		d, ok := <-ready
		if !ok {
			break
		}
		pending[d.idx] = d.b
		for cbErr == nil {
			b, ok := pending[want0]
			if !ok {
				break
			}
			delete(pending, want0)
			cut := func(s []float32) []float32 {
				if s == nil {
					return nil
				}
				return s[:b.Rows*nx]
			}
			out := RowBlock{
				Lattice: p.lat, Row0: b.Row0, Rows: b.Rows,
				PredictedDepthM: cut(b.PredictedDepthM), HeatFlowMWm2: cut(b.HeatFlowMWm2),
				ThermalThicknessKm: cut(b.ThermalThicknessKm), Depth600CKm: cut(b.Depth600CKm),
				CorrectedDepthM: cut(b.CorrectedDepthM), ResidualDepthM: cut(b.ResidualDepthM),
				PredictedDepthSigmaM: cut(b.PredictedDepthSigmaM), HeatFlowSigmaMWm2: cut(b.HeatFlowSigmaMWm2),
				ThermalThicknessSigmaKm: cut(b.ThermalThicknessSigmaKm), ResidualDepthSigmaM: cut(b.ResidualDepthSigmaM),
				RidgePushNPerM: cut(b.RidgePushNPerM),
			}
			if cbErr = fn(out); cbErr == nil {
				if p.progress != nil {
					p.progress(b.Row0+b.Rows, ny)
				}
				free <- b
				want0++
			}
		}
	}
	cancel()
	for range ready { // drain so every worker exits
	}
	if cbErr != nil {
		return cbErr
	}
	if want0 < nBlocks {
		if err := parent.Err(); err != nil {
			return err
		}
		return errors.New("residual evaluation stopped early")
	}
	return nil
}

// defaultRowsPerBlock aims at about 256 Ki cells per block (1 MiB per float32 output), small
// enough to stay in the last-level cache and numerous enough to balance the workers.
func defaultRowsPerBlock(nx int) int {
	return max(1, (1<<18)/max(nx, 1))
}

// residualPlan is everything a worker needs, fixed before the first block.
type residualPlan struct {
	lat      *Grid // output lattice (Data: the age values of that lattice)
	lons     []float64
	want     Outputs
	needPred bool
	needCorr bool
	tbl      *thermal.Table
	depth    residualSource
	sed      residualSource
	crust    residualSource
	sign     float32
	sedTab   *sedTable
	depthTab *depthTable
	// densities for the crust correction (kg/m³)
	crustKgM3, mantleKgM3, waterKgM3 float64
	mask                             Mask
	hasMask                          bool
	workers                          int
	progress                         func(done, total int)
	// age uncertainty and ridge push (uncertainty.go)
	wantSigma bool
	sigma     residualSource // the age-uncertainty grid, if any
	sigmaMa   float64        // the single age uncertainty where there is no grid
	push      *ridgePushTable
	rate      *ageNodes    // subsidence-rate nodes (thermal.Table.SubsidenceRateNodes), for depth uncertainties
	spread    *spreadTable // the depth uncertainty's table for the single age uncertainty, if any
	sigGrid   *sigmaGrid   // the depth uncertainty's table over σ for an age-uncertainty grid, if any
}

// residualSource maps output rows to rows of one input grid.
type residualSource struct {
	g       *Grid
	sampler *BilinearSampler // sampling mode: g at the output lattice's longitudes
	direct  bool
	colOff  int // input column = output column + colOff (direct mode)
	rowOff  int // input row = output row + rowOff (direct mode)
}

type residualWorker struct {
	pred, corr             []float32 // chunk scratch
	depth, sed, crust, age []float32 // row scratch
	mask                   []bool    // row scratch
	sigma                  []float32 // row scratch of the age-uncertainty grid
	spread                 []float32 // row scratch of the depth uncertainty (single σ)
}

type residualDst struct {
	pred, hf, thick, d600, corr, res       []float32
	predSig, hfSig, thickSig, resSig, push []float32
}

func newResidualPlan(in Inputs, want Outputs) (*residualPlan, error) {
	if want&outAll == 0 {
		return nil, ErrNoOutputs
	}
	if want&^outAll != 0 {
		return nil, fmt.Errorf("unknown residual-depth outputs %#x", uint32(want&^outAll))
	}
	if in.Age == nil {
		return nil, errors.New("an age grid is required")
	}
	if err := in.Age.Validate(); err != nil {
		return nil, wrapFault(err, fault.InvalidGrid, "age", "age grid")
	}
	if in.Model == nil {
		return nil, errors.New("a cooling model is required")
	}
	p := &residualPlan{want: want, progress: in.Progress}
	p.lat = in.Age
	if in.Window != nil {
		w, err := in.Age.Window(*in.Window)
		if err != nil {
			return nil, err
		}
		p.lat = w
	}
	nx, ny := p.lat.NX, p.lat.NY
	if in.Mask.Len() != 0 {
		if in.Mask.Len() != nx*ny {
			return nil, fmt.Errorf("mask has %d cells, the evaluated grid %d×%d=%d", in.Mask.Len(), nx, ny, nx*ny)
		}
		p.mask, p.hasMask = in.Mask, true
	}
	if len(in.Region) > 0 {
		hdr := *p.lat
		hdr.Data = nil
		rm, err := GridMask(&hdr, in.Region)
		if err != nil {
			return nil, wrapFault(err, fault.InvalidRegion, RegionField, "region")
		}
		if p.hasMask {
			both := NewMask(nx * ny)
			for i := range nx * ny {
				if rm.Get(i) && p.mask.Get(i) {
					both.Set(i, true)
				}
			}
			rm = both
		}
		p.mask, p.hasMask = rm, true
	}
	p.needCorr = want&(OutCorrectedDepth|OutResidualDepth|OutResidualDepthSigma) != 0
	p.needPred = want&(OutPredictedDepth|OutResidualDepth) != 0
	p.tbl = thermal.TableFor(in.Model)
	if want&OutResidualDepth != 0 {
		p.depthTab = depthTableFor(p.tbl)
	}
	p.lons = make([]float64, nx)
	for i := range p.lons {
		p.lons[i] = p.lat.Lon(i)
	}
	if p.needCorr {
		if in.Depth == nil {
			return nil, fault.New(fault.UnknownParameter, "parameter-name", "corrected and residual depth need an observed depth grid")
		}
		switch in.DepthSense {
		case DepthPositiveDown:
			p.sign = 1
		case ElevationPositiveUp:
			p.sign = -1
		default:
			return nil, fault.New(fault.InvalidGrid, "vertical", "the observed depth grid's vertical sense is unknown: declare depth (positive down) or elevation (positive up)")
		}
		pr := in.Model.Params()
		p.mantleKgM3, p.waterKgM3 = pr.MantleDensityKgM3, pr.WaterDensityKgM3
		var err error
		if p.depth, err = newResidualSource("observed depth", in.Depth, p.lat); err != nil {
			return nil, err
		}
		if in.Sediment != nil {
			if p.sed, err = newResidualSource("sediment thickness", in.Sediment, p.lat); err != nil {
				return nil, err
			}
			c := in.Compaction
			if c == (thermal.Compaction{}) {
				return nil, fault.New(fault.UnknownSediment, "sediment", "a sediment thickness grid needs a compaction law (shale, sand or shaly-sand)")
			}
			if p.sedTab, err = sedTableFor(c, p.mantleKgM3, p.waterKgM3); err != nil {
				return nil, wrapFault(err, fault.InvalidModel, "sediment", "sediment correction")
			}
		}
		if in.Crust != nil {
			if p.crust, err = newResidualSource("crustal thickness", in.Crust, p.lat); err != nil {
				return nil, err
			}
			p.crustKgM3 = in.CrustDensityKgM3
			if p.crustKgM3 == 0 {
				p.crustKgM3 = thermal.DefaultCrustDensityKgM3
			}
			if !(p.crustKgM3 > p.waterKgM3 && p.crustKgM3 < p.mantleKgM3) {
				return nil, fault.New(fault.InvalidModel, "crust_density_kg_m3", "crust density %g kg/m³ must lie between the water (%g) and mantle (%g) densities", p.crustKgM3, p.waterKgM3, p.mantleKgM3)
			}
		}
	}
	if err := p.prepareUnc(in); err != nil {
		return nil, err
	}
	p.workers = in.Workers
	if p.workers <= 0 {
		p.workers = runtime.GOMAXPROCS(0)
	}
	p.workers = min(p.workers, MaxResidualWorkers)
	return p, nil
}

// newResidualSource decides between direct indexing and bilinear sampling of g on lattice out.
func newResidualSource(what string, g, out *Grid) (residualSource, error) {
	if err := g.Validate(); err != nil {
		return residualSource{}, wrapFault(err, fault.InvalidGrid, what, "%s grid", what)
	}
	s := residualSource{g: g}
	const tol = 1e-6 // of a cell
	if math.Abs(g.DX-out.DX) > tol*out.DX/float64(max(out.NX, g.NX)) ||
		math.Abs(g.DY-out.DY) > tol*out.DY/float64(max(out.NY, g.NY)) {
		return sampled(s, out), nil
	}
	fc := (out.West - g.West) / g.DX
	fr := (g.North - out.North) / g.DY
	c, r := math.Round(fc), math.Round(fr)
	if math.Abs(fc-c) > tol || math.Abs(fr-r) > tol {
		return sampled(s, out), nil
	}
	s.colOff, s.rowOff = int(c), int(r)
	// A global input that the output runs past would need wrapping: sample it instead.
	if g.IsGlobalLon() && (s.colOff < 0 || s.colOff+out.NX > g.NX) {
		return sampled(s, out), nil
	}
	s.direct = true
	return s, nil
}

// sampled is a source in sampling mode with its sampler for the output longitudes.
func sampled(s residualSource, out *Grid) residualSource {
	lons := make([]float64, out.NX)
	for i := range lons {
		lons[i] = out.Lon(i)
	}
	s.sampler = s.g.NewBilinearSampler(lons)
	return s
}

// row returns the input values along output row r (len nx), using scratch when it cannot hand
// out a slice of the input directly.
func (s *residualSource) row(p *residualPlan, r int, scratch []float32) []float32 {
	nx := len(p.lons)
	if !s.direct {
		s.sampler.Row(p.lat.Lat(r), scratch)
		return scratch
	}
	g := s.g
	sr := r + s.rowOff
	c0 := s.colOff
	if sr >= 0 && sr < g.NY && c0 >= 0 && c0+nx <= g.NX {
		return g.Data[sr*g.NX+c0 : sr*g.NX+c0+nx]
	}
	nan := float32(math.NaN())
	for i := range scratch {
		scratch[i] = nan
	}
	if sr < 0 || sr >= g.NY {
		return scratch
	}
	lo, hi := max(0, -c0), min(nx, g.NX-c0)
	if lo < hi {
		copy(scratch[lo:hi], g.Data[sr*g.NX+c0+lo:sr*g.NX+c0+hi])
	}
	return scratch
}

func (p *residualPlan) newWorker() *residualWorker {
	nx := p.lat.NX
	w := &residualWorker{}
	if p.needPred {
		w.pred = make([]float32, residualChunk)
	}
	if p.needCorr {
		w.corr = make([]float32, residualChunk)
		w.depth = make([]float32, nx)
		if p.sed.g != nil {
			w.sed = make([]float32, nx)
		}
		if p.crust.g != nil {
			w.crust = make([]float32, nx)
		}
	}
	if p.sigma.g != nil {
		w.sigma = make([]float32, nx)
	}
	if p.spread != nil {
		w.spread = make([]float32, nx)
	}
	if p.hasMask {
		w.age = make([]float32, nx)
		w.mask = make([]bool, nx)
	}
	return w
}

// run hands blocks of rowsPerBlock rows to p.workers goroutines; each calls do(w, r0, r1).
func (p *residualPlan) run(ctx context.Context, rowsPerBlock int, do func(w *residualWorker, r0, r1 int) error) error {
	ny := p.lat.NY
	nBlocks := (ny + rowsPerBlock - 1) / rowsPerBlock
	workers := min(p.workers, nBlocks)
	var next atomic.Int64
	var firstErr error
	var errOnce sync.Once
	var stop atomic.Bool
	var wg sync.WaitGroup
	fail := func(err error) {
		errOnce.Do(func() { firstErr = err })
		stop.Store(true)
	}
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := p.newWorker()
			for !stop.Load() {
				if err := ctx.Err(); err != nil {
					fail(err)
					return
				}
				k := int(next.Add(1) - 1)
				if k >= nBlocks {
					return
				}
				r0 := k * rowsPerBlock
				if err := do(w, r0, min(r0+rowsPerBlock, ny)); err != nil {
					fail(err)
					return
				}
			}
		}()
	}
	wg.Wait()
	if firstErr == nil && int(next.Load()) < nBlocks {
		// stopped before all blocks were claimed without recording why (cannot happen)
		return errors.New("residual evaluation stopped early")
	}
	return firstErr
}

// block computes output rows r0..r1-1 into dst (slices covering those rows).
func (p *residualPlan) block(w *residualWorker, r0, r1 int, dst *residualDst) {
	nx := p.lat.NX
	for r := r0; r < r1; r++ {
		o := (r - r0) * nx
		cut := func(s []float32) []float32 {
			if s == nil {
				return nil
			}
			return s[o : o+nx : o+nx]
		}
		sigDone := false
		if dst.pred != nil || dst.hf != nil || dst.thick != nil || dst.d600 != nil || dst.corr != nil || dst.res != nil {
			// the residual's uncertainty alone rides along the residual's hot loop where it can
			var resSig []float32
			if p.want&(outSigma|OutRidgePush) == OutResidualDepthSigma {
				resSig = cut(dst.resSig)
			}
			sigDone = p.row(w, r, cut(dst.pred), cut(dst.hf), cut(dst.thick), cut(dst.d600), cut(dst.corr), cut(dst.res), resSig)
		}
		if p.want&(outSigma|OutRidgePush) != 0 && !sigDone {
			p.uncRow(w, r, cut(dst.predSig), cut(dst.hfSig), cut(dst.thickSig), cut(dst.resSig), cut(dst.push), cut(dst.res))
		}
	}
}

// residualChunk is the number of cells processed together: the chunk's inputs, scratch and
// outputs (about 6 × 2 KiB) stay in the L1 cache between the passes over it.
const residualChunk = 512

func subRow(s []float32, a, b int) []float32 {
	if s == nil {
		return nil
	}
	return s[a:b:b]
}

// row computes one output row. Nil destination slices are not computed. resSig, if not nil, is
// the residual's age uncertainty, computed in the same pass where the hot path allows (one σ with
// its spreadTable, or an age-uncertainty grid); row reports whether it did (otherwise uncRow must).
func (p *residualPlan) row(w *residualWorker, r int, pred, hf, thick, d600, corr, res, resSig []float32) (sigDone bool) {
	nx := p.lat.NX
	age := p.lat.Data[r*nx : (r+1)*nx]
	var mask []bool
	if p.hasMask {
		mask = w.mask
		for i := range mask {
			mask[i] = p.mask.Get(r*nx + i)
		}
		a := w.age
		nan := float32(math.NaN())
		for i, v := range age {
			if !mask[i] {
				v = nan
			}
			a[i] = v
		}
		age = a
	}
	var obs, sed, crust []float32
	if p.needCorr {
		obs = p.depth.row(p, r, w.depth)
		if p.sedTab != nil {
			sed = p.sed.row(p, r, w.sed)
		}
		if p.crust.g != nil {
			crust = p.crust.row(p, r, w.crust)
		}
	}
	if res != nil && sed != nil && pred == nil && corr == nil && crust == nil && hf == nil && thick == nil && d600 == nil {
		// The hot path (residual only, from age, observed depth and sediment) is one fused
		// pass with no scratch, so it takes the whole row at once.
		switch {
		case resSig != nil && p.spread != nil && p.sigma.g == nil:
			p.residualSigmaFused(res, resSig, age, obs, sed, nil)
			return true
		case resSig != nil && p.sigGrid != nil && p.sigma.g != nil:
			p.residualSigmaFused(res, resSig, age, obs, sed, p.sigma.row(p, r, w.sigma))
			return true
		}
		residualFusedChunk(res, age, obs, sed, p.sign, p.depthTab, p.sedTab)
		return false
	}
	for c0 := 0; c0 < nx; c0 += residualChunk {
		c1 := min(c0+residualChunk, nx)
		var m []bool
		if mask != nil {
			m = mask[c0:c1]
		}
		p.chunk(w, subRow(age, c0, c1), subRow(obs, c0, c1), subRow(sed, c0, c1), subRow(crust, c0, c1), m,
			subRow(pred, c0, c1), subRow(hf, c0, c1), subRow(thick, c0, c1), subRow(d600, c0, c1), subRow(corr, c0, c1), subRow(res, c0, c1))
	}
	return false
}

// chunk computes the outputs of up to residualChunk cells. Inputs obs, sed, crust are nil when
// not used; outputs are nil when not asked for; mask is nil or the chunk's mask.
func (p *residualPlan) chunk(w *residualWorker, age, obs, sed, crust []float32, mask []bool, pred, hf, thick, d600, corr, res []float32) {
	n := len(age)
	// The hot path (residual only, from age, observed depth and sediment) runs as one fused
	// pass; it does not need the predicted depths stored.
	fused := res != nil && pred == nil && corr == nil && crust == nil && sed != nil
	if p.needPred && !fused {
		if pred == nil {
			pred = w.pred[:n]
		}
		p.tbl.DepthsM(age, pred)
	}
	if hf != nil {
		p.tbl.HeatFlowsMWm2(age, hf)
	}
	if thick != nil {
		p.tbl.ThermalThicknessesKm(age, thick)
	}
	if d600 != nil {
		for i, a := range age {
			d600[i] = float32(p.tbl.Depth600CKm(float64(a)))
		}
	}
	if !p.needCorr {
		return
	}
	if fused {
		residualFusedChunk(res, age, obs, sed, p.sign, p.depthTab, p.sedTab)
		return
	}
	if res != nil && corr == nil && crust == nil {
		// Residual (and predicted depth) without a corrected-depth output: one pass.
		if sed != nil {
			residualSedChunk(res, pred, obs, sed, p.sign, p.sedTab)
		} else {
			pred, obs := pred[:n], obs[:n]
			for i := range res {
				res[i] = residualAt(pred[i], correctedDepth(p.sign, obs[i], nil, 0, 0))
			}
		}
		return
	}
	if corr == nil {
		corr = w.corr[:n]
	}
	p.correctedChunk(corr, obs, sed, crust)
	if res != nil {
		pred = pred[:n]
		for i, c := range corr[:n] {
			res[i] = residualAt(pred[i], c)
		}
	}
	// Cells the mask removes have NaN age and so NaN prediction, but the corrected depth does
	// not depend on age: blank it explicitly.
	if mask != nil {
		nan := float32(math.NaN())
		for i, ok := range mask {
			if !ok {
				corr[i] = nan
			}
		}
	}
}

// residualFusedChunk is the hot loop: res = predicted(age) − (sign·obs + sediment
// correction(sed)), the prediction interpolated from thermal's depth nodes (Table.DepthNodes)
// and the correction from its sediment nodes (SedimentCorrector.Nodes), both indexed straight
// by the bits of the float32 inputs (no square root, no float→int conversion, see
// thermal.Float32Nodes). The loop itself makes no calls: a value outside its table (no data,
// negative, or beyond the table) gives NaN through one unsigned index test, and the rare chunks
// holding a non-NaN value outside a table (negative, −0, infinite, age at or beyond
// thermal.TableMaxAgeMa, sediment at or beyond thermal.SedimentNodesMaxM) have their NaN cells
// recomputed afterwards through the tables' at methods (thermal's point functions).
func residualFusedChunk(res, age, obs, sed []float32, sign float32, dt *depthTable, st *sedTable) {
	n := len(res)
	if n == 0 {
		return
	}
	age, obs, sed = age[:n], obs[:n], sed[:n]
	if fusedChunkTables(res, float32Bits(age), obs, float32Bits(sed), sign, dt.n, st.n) {
		for i, r := range res {
			if r != r {
				res[i] = residualAt(dt.at(age[i]), correctedDepth(sign, obs[i], st, sed[i], 0))
			}
		}
	}
}

// float32Bits views a []float32 as the []uint32 of its bit patterns (math.Float32bits of each
// element) without copying, so the hot loop loads the bits straight into integer registers.
func float32Bits(s []float32) []uint32 {
	return unsafe.Slice((*uint32)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
}

const (
	signBit32 = 1 << 31
	infBits32 = 0x7f800000 // math.Float32bits(+Inf)
)

// fusedChunkTables is the table-only part of residualFusedChunk; ageBits and sedBits are the
// bit patterns of age and sediment thickness (all slices as long as res). It reports whether
// some cell held a non-NaN value outside a table (its result is NaN and needs the slow path).
func fusedChunkTables(res []float32, ageBits []uint32, obs []float32, sedBits []uint32, sign float32, dn *ageNodes, sn *sedNodes) (beyond bool) {
	n := len(res)
	ageBits, obs, sedBits = ageBits[:n], obs[:n], sedBits[:n]
	nan := float32(math.NaN())
	for i := range res {
		ab := ageBits[i]
		var pd float32
		if j := uint(ab >> thermal.Float32NodeShift); j < uint(len(dn)) {
			pd = dn[j].At(ab)
		} else {
			pd = nan
			if ab&^signBit32 <= infBits32 {
				beyond = true
			}
		}
		sb := sedBits[i]
		var c float32
		if k := uint(sb >> thermal.Float32NodeShift); k < uint(len(sn)) {
			c = sn[k].At(sb)
		} else {
			c = nan
			if sb&^signBit32 <= infBits32 {
				beyond = true
			}
		}
		res[i] = pd - (sign*obs[i] + c)
	}
	return beyond
}

// ageNodes and sedNodes hold thermal's node tables as fixed-size arrays, so the bounds test of
// the hot loop compares with a constant and leaves a register free.
type (
	ageNodes = [thermal.AgeNodeCount]thermal.Float32Node
	sedNodes = [thermal.SedimentNodeCount]thermal.Float32Node
)

// depthTable pairs a thermal.Table with its depth nodes (Table.DepthNodes) for the fused loop.
type depthTable struct {
	tbl *thermal.Table
	n   *ageNodes
}

// depthTableFor returns the depth table of t (no copy: the nodes belong to t).
func depthTableFor(t *thermal.Table) *depthTable {
	return &depthTable{tbl: t, n: (*ageNodes)(t.DepthNodes())}
}

// at is the depth table's value at one age: the fused loop's interpolation inside the table,
// thermal's Table.DepthM beyond it (NaN for NaN and negative ages).
func (t *depthTable) at(a float32) float32 {
	ab := math.Float32bits(a)
	if j := uint(ab >> thermal.Float32NodeShift); j < uint(len(t.n)) {
		return t.n[j].At(ab)
	}
	return float32(t.tbl.DepthM(float64(a)))
}

// residualSedChunk is the residual loop when predicted depths are computed anyway: res = pred − (sign·obs + sediment correction(sed)),
// with the sediment correction interpolated from the float32 table (sedTable).
func residualSedChunk(res, pred, obs, sed []float32, sign float32, t *sedTable) {
	n := len(res)
	pred, obs, sed = pred[:n], obs[:n], sed[:n]
	for i := range res {
		res[i] = residualAt(pred[i], correctedDepth(sign, obs[i], t, sed[i], 0))
	}
}

// correctedChunk writes corrected depth (correctedAt) of every cell of the chunk.
func (p *residualPlan) correctedChunk(corr, obs, sed, crust []float32) {
	n := len(corr)
	obs = obs[:n]
	if sed != nil {
		sed = sed[:n]
	}
	if crust != nil {
		crust = crust[:n]
	}
	var s, c float32
	for i, o := range obs {
		if sed != nil {
			s = sed[i]
		}
		if crust != nil {
			c = crust[i]
		}
		corr[i] = p.correctedAt(o, s, c)
	}
}

// sedTable pairs a thermal.SedimentCorrector with its float32 nodes
// (SedimentCorrector.Nodes) for the fused hot loop.
type sedTable struct {
	corr *thermal.SedimentCorrector
	n    *sedNodes
}

// at is the sediment table's correction at one thickness: the fused loop's interpolation inside
// the table, thermal's corrector outside it (NaN for NaN and negative thicknesses).
func (t *sedTable) at(s float32) float32 {
	sb := math.Float32bits(s)
	if k := uint(sb >> thermal.Float32NodeShift); k < uint(len(t.n)) {
		return t.n[k].At(sb)
	}
	return float32(t.corr.CorrectionM(float64(s)))
}

type sedKey struct {
	c      thermal.Compaction
	rm, rw float64
}

// maxSedTables bounds the cache of sediment correctors (one per law and pair of densities,
// about 300 KiB each with their node tables): at most about 10 MiB.
const maxSedTables = 32

var sedTables = newTableCache[sedKey, *sedTable](maxSedTables)

// sedTableFor returns the (cached) sediment table of a compaction law and densities.
func sedTableFor(c thermal.Compaction, rm, rw float64) (*sedTable, error) {
	return sedTables.get(sedKey{c, rm, rw}, func() (*sedTable, error) { return newSedTable(c, rm, rw) })
}

// newSedTable builds the sediment corrector of a compaction law and densities and its node
// table (about 36 000 calls of SedimentCorrector.CorrectionM, a few hundred of them beyond its
// uniform table by quadrature).
func newSedTable(c thermal.Compaction, rm, rw float64) (*sedTable, error) {
	sc, err := thermal.NewSedimentCorrector(c, rm, rw)
	if err != nil {
		return nil, err
	}
	return &sedTable{corr: sc, n: (*sedNodes)(sc.Nodes())}, nil
}
