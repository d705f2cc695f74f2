package geo

import (
	"errors"
	"fmt"
	"math"
	"runtime"

	"ridgeflank/fault"
)

// StreamQuantileBins is the number of equal bins over [Min, Max] of the fine weighted
// histogram in which StatsStream locates percentiles. With float64 weights, float32 bin
// extremes and the bin's weight, one StatsStream in its second pass holds 16 bytes per bin
// (1 MiB) plus the user histogram.
const StreamQuantileBins = 1 << 16

// StatsStream computes the same area-weighted statistics as AreaWeightedStats (same Stats,
// same weights, same percentile rule, same histogram) over a grid read in row blocks, so the
// grid never has to be held in memory. Memory is O(StreamQuantileBins + histogram bins) per
// stream, independent of the grid size.
//
// Use it in two passes over the same blocks:
//
//  1. AddMoments for every row block: count, no-data count, weight sum, weighted mean and
//     variance, minimum and maximum.
//  2. BeginHistogram once, then AddHistogram for every row block: the fine percentile
//     histogram over [Min, Max] and the user histogram of the StatsOptions.
//
// then Result. Each pass may run in parallel: every goroutine takes its own stream from
// NewPart, feeds it blocks, and the parts are folded back with Merge (in any order and any
// grouping: the result does not depend on it beyond floating-point rounding). A stream is not
// safe for concurrent use; Merge must not run while either stream is being fed.
//
// A block is a *Grid holding whole rows of the big grid: its own North (the latitude of its
// first row) gives each row its weight, exactly as the big grid's rows would get from
// AreaWeightedStats (WeightCosLat, WeightCellArea or WeightEqual). Its mask is nil (the zero
// Mask: every cell) or has the block's NX·NY cells. Blocks may come in any order and have any
// number of rows, but the second pass must see the same cells as the first (Result checks the
// counts and the range).
//
// Columns: like AreaWeightedStats, by default (columns 0 in NewStatsStream) a block of a node
// grid global in longitude that repeats its first column at the end (NX = 360/DX + 1) has that
// last column skipped, so it is not counted twice; a row band of the big grid has the big grid's
// NX and DX, so the rule decides the same for every block. A positive column count uses only
// the first that many columns of every block instead (pass the full NX to count every column).
//
// Mean and variance are merged with the pairwise update of Chan, Golub & LeVeque (1979,
// "Updating formulae and a pairwise algorithm for computing sample variances", Stanford
// report STAN-CS-79-773; weighted form as in West 1979, Comm. ACM 22(9) 532–535): for two
// parts with weights Wa, Wb, means ma, mb and M2 = Σw(x−m)²,
//
//	W = Wa+Wb,  δ = mb−ma,  m = ma + δ·Wb/W,  M2 = M2a + M2b + δ²·Wa·Wb/W.
//
// Every row (one weight w for all its cells) is first summarised exactly by two passes over the
// row (mean x̄ of its n valid cells, M2 = w·Σ(x−x̄)², weight n·w) and then merged, so no sum of
// squares is ever formed around zero and the result does not lose precision when the mean is
// large compared with the spread.
//
// Percentiles follow AreaWeightedStats: the p-th percentile q is the smallest value whose
// weight(≤ q) ≥ p·Σw (gonum stat.Quantile, Empirical). The second pass sums the weight, the
// smallest and the largest value of every fine bin; the bin b where the cumulative weight first
// reaches p·Σw holds q, and Result reports the middle of the values in that bin,
// (lo_b + hi_b)/2. See Stats.PercentileErrorBound for the bound on the error.
type StatsStream struct {
	opt     StatsOptions
	columns int // 0: skip a repeated seam column (seamColumns); > 0: use this many columns
	stage   streamStage
	mom     streamMoments

	// second pass
	lo, hi, scale float64 // fine histogram span and bins per unit
	fine          []fineBin
	hist          *histBuilder
	histW         []float64
	seen          int // valid cells in the second pass
	outside       int // valid cells of the second pass outside [lo, hi]
}

type streamStage int

const (
	stageMoments streamStage = iota
	stageHistogram
)

// streamMoments is the mergeable first-pass summary.
type streamMoments struct {
	count, noData int
	w, mean, m2   float64 // Σw, weighted mean, Σw(x−mean)²
	sq            float64 // Σw²x² (Stats.QuadratureMean)
	min, max      float64
}

// fineBin is one bin of the fine percentile histogram: weight and extreme values of the cells
// with positive weight in the bin.
type fineBin struct {
	w      float64
	lo, hi float32
}

// NewStatsStream returns an empty stream in its first pass. columns is 0 for the same seam
// rule as AreaWeightedStats or a positive number of leading columns of every block to use (see
// StatsStream). Options are checked as AreaWeightedStats checks them; a histogram that would
// need more than MaxHistogramBins bins is only known, and refused, in BeginHistogram.
func NewStatsStream(opt StatsOptions, columns int) (*StatsStream, error) {
	switch opt.Weighting {
	case WeightCosLat, WeightCellArea, WeightEqual:
	default:
		return nil, fault.New(fault.InvalidParameter, "weighting", "unknown weighting %d", int(opt.Weighting))
	}
	if opt.HistogramBins > 0 && opt.HistogramBinWidth > 0 {
		return nil, fault.New(fault.InvalidParameter, "histogram", "histogram: give a bin count or a bin width, not both")
	}
	if opt.HistogramBins < 0 || opt.HistogramBinWidth < 0 || math.IsNaN(opt.HistogramBinWidth) || math.IsInf(opt.HistogramBinWidth, 0) {
		return nil, fault.New(fault.InvalidParameter, "histogram", "histogram: bin count %d and width %g must not be negative", opt.HistogramBins, opt.HistogramBinWidth)
	}
	if opt.HistogramBins > MaxHistogramBins {
		return nil, fault.Over("max_histogram_bins", MaxHistogramBins, int64(opt.HistogramBins), "histogram", "histogram: %d bins, more than the limit of %d", opt.HistogramBins, MaxHistogramBins)
	}
	if columns < 0 {
		return nil, fault.New(fault.InvalidParameter, "columns", "column count %d must not be negative (0 skips a repeated seam column)", columns)
	}
	return &StatsStream{opt: opt, columns: columns, mom: emptyMoments()}, nil
}

func emptyMoments() streamMoments {
	return streamMoments{min: math.Inf(1), max: math.Inf(-1)}
}

// NewPart returns an empty stream with the same options, columns and pass as s (in the second
// pass also the same fine-histogram span and user-histogram edges), for one goroutine to feed
// and to Merge back into s.
func (s *StatsStream) NewPart() *StatsStream {
	p := &StatsStream{opt: s.opt, columns: s.columns, stage: s.stage, mom: emptyMoments(),
		lo: s.lo, hi: s.hi, scale: s.scale}
	if s.fine != nil {
		p.fine = newFineBins()
	}
	if s.hist != nil {
		h := &histBuilder{width: s.hist.width}
		h.Edges = append([]float64(nil), s.hist.Edges...)
		h.Counts = make([]int, len(s.hist.Counts))
		h.AreaFractions = make([]float64, len(s.hist.Counts))
		p.hist, p.histW = h, make([]float64, len(s.hist.Counts))
	}
	return p
}

func newFineBins() []fineBin {
	f := make([]fineBin, StreamQuantileBins)
	for i := range f {
		f[i] = fineBin{0, float32(math.Inf(1)), float32(math.Inf(-1))}
	}
	return f
}

var errStreamStage = errors.New("geo: StatsStream used out of order")

// prepare checks a block and its mask and returns the number of columns to use and the row
// weights.
func (s *StatsStream) prepare(block *Grid, mask Mask) (int, []float64, error) {
	if block == nil {
		return 0, nil, gridErr("nil block")
	}
	if block.NX <= 0 || block.NY <= 0 || len(block.Data) != block.NX*block.NY {
		return 0, nil, gridErr("block of %d×%d cells with %d values", block.NX, block.NY, len(block.Data))
	}
	if mask.Len() != 0 && mask.Len() != block.NX*block.NY {
		return 0, nil, gridErr("mask has %d cells, block %d×%d=%d", mask.Len(), block.NX, block.NY, block.NX*block.NY)
	}
	nx := s.columns
	if nx == 0 {
		nx = seamColumns(block)
	} else if nx > block.NX {
		return 0, nil, gridErr("block has %d columns, the stream uses %d", block.NX, nx)
	}
	ws, err := rowWeights(block, s.opt.Weighting)
	return nx, ws, err
}

// AddMoments adds a row block to the first pass (see StatsStream). mask is the zero Mask (every
// cell) or has the block's NX·NY cells.
func (s *StatsStream) AddMoments(block *Grid, mask Mask) error {
	if s.stage != stageMoments {
		return fmt.Errorf("%w: AddMoments after BeginHistogram", errStreamStage)
	}
	nx, ws, err := s.prepare(block, mask)
	if err != nil {
		return err
	}
	useMask := mask.Len() != 0
	for r, w := range ws {
		base := r * block.NX
		row := block.Data[base : base+nx]
		// exact summary of the row: all its cells share the weight w
		n := 0
		var sum float64
		lo, hi := float32(math.Inf(1)), float32(math.Inf(-1))
		for c, v := range row {
			if useMask && mask.words[(base+c)>>6]&(1<<(uint(base+c)&63)) == 0 {
				continue
			}
			if v != v {
				s.mom.noData++
				continue
			}
			n++
			sum += float64(v)
			lo = min(lo, v)
			hi = max(hi, v)
		}
		if n == 0 {
			continue
		}
		s.mom.count += n
		s.mom.min = math.Min(s.mom.min, float64(lo))
		s.mom.max = math.Max(s.mom.max, float64(hi))
		if !(w > 0) {
			continue
		}
		mean := sum / float64(n)
		var ss, xx float64
		for c, v := range row {
			if v != v || useMask && mask.words[(base+c)>>6]&(1<<(uint(base+c)&63)) == 0 {
				continue
			}
			d := float64(v) - mean
			ss += d * d
			xx += float64(v) * float64(v)
		}
		s.mom.sq += w * w * xx
		s.mom.mergeWeighted(float64(n)*w, mean, w*ss)
	}
	return nil
}

// mergeWeighted folds a part with weight wb, mean mb and M2 m2b into m (Chan, Golub & LeVeque
// 1979 pairwise update, see StatsStream).
func (m *streamMoments) mergeWeighted(wb, mb, m2b float64) {
	if !(wb > 0) {
		return
	}
	w := m.w + wb
	d := mb - m.mean
	f := wb / w
	m.mean += d * f
	m.m2 += m2b + d*d*m.w*f
	m.w = w
}

func (m *streamMoments) merge(o streamMoments) {
	m.count += o.count
	m.noData += o.noData
	m.min = math.Min(m.min, o.min)
	m.max = math.Max(m.max, o.max)
	m.sq += o.sq
	m.mergeWeighted(o.w, o.mean, o.m2)
}

// BeginHistogram ends the first pass: it fixes the fine percentile histogram over the data's
// [Min, Max] and the user histogram's edges (as AreaWeightedStats would make them for this
// data), after which only AddHistogram, NewPart, Merge and Result may be called. Call it once,
// on the stream holding every first-pass part merged. It fails when the user histogram would
// need more than MaxHistogramBins bins or has an empty range.
func (s *StatsStream) BeginHistogram() error {
	if s.stage != stageMoments {
		return fmt.Errorf("%w: BeginHistogram called twice", errStreamStage)
	}
	lo, hi := 0.0, 0.0
	if s.mom.count > 0 {
		lo, hi = s.mom.min, s.mom.max
	}
	h, err := newHistogram(s.opt, lo, hi)
	if err != nil {
		return err
	}
	s.stage = stageHistogram
	s.lo, s.hi = lo, hi
	if h != nil {
		s.hist, s.histW = h, make([]float64, len(h.Counts))
	}
	if s.mom.count > 0 && s.mom.w > 0 {
		s.fine = newFineBins()
		if hi > lo {
			s.scale = StreamQuantileBins / (hi - lo)
		}
	}
	return nil
}

// AddHistogram adds a row block to the second pass (see StatsStream). The block and mask must
// be as in the first pass.
func (s *StatsStream) AddHistogram(block *Grid, mask Mask) error {
	if s.stage != stageHistogram {
		return fmt.Errorf("%w: AddHistogram before BeginHistogram", errStreamStage)
	}
	nx, ws, err := s.prepare(block, mask)
	if err != nil {
		return err
	}
	if s.fine == nil && s.hist == nil {
		// nothing to bin (no weight, no user histogram): only count, for Result's check
		for r := range ws {
			base := r * block.NX
			for c, v := range block.Data[base : base+nx] {
				if v == v && (mask.Len() == 0 || mask.words[(base+c)>>6]&(1<<(uint(base+c)&63)) != 0) {
					s.seen++
				}
			}
		}
		return nil
	}
	useMask := mask.Len() != 0
	// The user histogram and the fine percentile bins are independent sums: each is filled
	// by its own loop over the block, cell by cell in the same order as one loop would, so
	// the two may run on two cores (a large block, more than one core) with the same result
	// bit for bit.
	lo, hi, scale := s.lo, s.hi, s.scale
	fineLoop := func() {
		seen, outside := 0, 0
		fine := s.fine
		for r, w := range ws {
			base := r * block.NX
			useFine := fine != nil && w > 0
			for c, v32 := range block.Data[base : base+nx] {
				if v32 != v32 || useMask && mask.words[(base+c)>>6]&(1<<(uint(base+c)&63)) == 0 {
					continue
				}
				seen++
				v := float64(v32)
				if v < lo || v > hi {
					outside++
				}
				if useFine {
					fb := &fine[max(0, min(int((v-lo)*scale), StreamQuantileBins-1))]
					fb.w += w
					fb.lo = min(fb.lo, v32)
					fb.hi = max(fb.hi, v32)
				}
			}
		}
		s.seen += seen
		s.outside += outside
	}
	histLoop := func() {
		hist, histW := s.hist, s.histW
		if hist == nil {
			return
		}
		for r, w := range ws {
			base := r * block.NX
			for c, v32 := range block.Data[base : base+nx] {
				if v32 != v32 || useMask && mask.words[(base+c)>>6]&(1<<(uint(base+c)&63)) == 0 {
					continue
				}
				if k := hist.bin(float64(v32)); k >= 0 {
					hist.Counts[k]++
					histW[k] += w
				}
			}
		}
	}
	if s.hist == nil || nx*len(ws) < parallelHistogramCells || runtime.GOMAXPROCS(0) < 2 {
		fineLoop()
		histLoop()
		return nil
	}
	done := make(chan struct{})
	go func() {
		defer close(done)
		histLoop()
	}()
	fineLoop()
	<-done
	return nil
}

// parallelHistogramCells is the block size, in cells, from which AddHistogram fills the user
// histogram and the fine percentile bins on two goroutines.
const parallelHistogramCells = 1 << 16

// Merge adds the part o (fed by another goroutine, from NewPart or NewStatsStream with the same
// options) into s. Both must be in the same pass; in the second pass they must share the
// histogram span (take parts from NewPart after BeginHistogram). o is left unchanged and must
// not be merged twice.
func (s *StatsStream) Merge(o *StatsStream) error {
	if o == nil || o == s {
		return fmt.Errorf("%w: Merge of a nil stream or of a stream into itself", errStreamStage)
	}
	if s.opt != o.opt || s.columns != o.columns {
		return fmt.Errorf("%w: Merge of streams with different options", errStreamStage)
	}
	if s.stage != o.stage {
		return fmt.Errorf("%w: Merge of streams in different passes", errStreamStage)
	}
	if s.stage == stageHistogram {
		if s.lo != o.lo || s.hi != o.hi || (s.fine == nil) != (o.fine == nil) || (s.hist == nil) != (o.hist == nil) {
			return fmt.Errorf("%w: Merge of second-pass streams with different spans (take parts from NewPart)", errStreamStage)
		}
		if s.hist != nil && (len(s.hist.Edges) != len(o.hist.Edges) || s.hist.Edges[0] != o.hist.Edges[0]) {
			return fmt.Errorf("%w: Merge of second-pass streams with different histogram edges", errStreamStage)
		}
	}
	s.mom.merge(o.mom)
	s.seen += o.seen
	s.outside += o.outside
	for i := range s.fine {
		a, b := &s.fine[i], o.fine[i]
		a.w += b.w
		a.lo = min(a.lo, b.lo)
		a.hi = max(a.hi, b.hi)
	}
	if s.hist != nil {
		for k := range s.hist.Counts {
			s.hist.Counts[k] += o.hist.Counts[k]
			s.histW[k] += o.histW[k]
		}
		s.hist.Below += o.hist.Below
		s.hist.Above += o.hist.Above
	}
	return nil
}

// Result returns the statistics after the second pass, with the meaning of AreaWeightedStats'
// (NaN value fields when there is no valid cell or no weight). Count, NoData, Min, Max and the
// histogram's Edges, Counts, Below and Above are exactly AreaWeightedStats' for the same cells;
// WeightSum, Mean, Std and AreaFractions equal them up to floating-point rounding; the
// percentiles are within Stats.PercentileErrorBound of the exact ones. It fails when the
// second pass saw other cells than the first.
func (s *StatsStream) Result() (Stats, error) {
	nan := math.NaN()
	st := Stats{Mean: nan, Std: nan, Min: nan, Max: nan, Median: nan, P05: nan, P25: nan, P75: nan, P95: nan}
	if s.stage != stageHistogram {
		return st, fmt.Errorf("%w: Result before BeginHistogram", errStreamStage)
	}
	if s.seen != s.mom.count || s.outside > 0 {
		return st, gridErr("the second pass saw %d valid cells (%d outside %g..%g), the first %d: the passes read different data",
			s.seen, s.outside, s.lo, s.hi, s.mom.count)
	}
	m := s.mom
	st.Count, st.NoData, st.WeightSum = m.count, m.noData, m.w
	if m.count > 0 {
		st.Min, st.Max = m.min, m.max
	}
	if s.hist != nil {
		h := &Histogram{Edges: append([]float64(nil), s.hist.Edges...), Counts: append([]int(nil), s.hist.Counts...),
			AreaFractions: make([]float64, len(s.histW)), Below: s.hist.Below, Above: s.hist.Above}
		for k, w := range s.histW {
			h.AreaFractions[k] = nan
			if m.count > 0 && m.w > 0 {
				h.AreaFractions[k] = w / m.w
			}
		}
		st.Histogram = h
	}
	if m.count == 0 || !(m.w > 0) {
		return st, nil
	}
	st.Mean = m.mean
	st.Std = math.Sqrt(m.m2 / m.w)
	st.QuadratureMean = math.Sqrt(m.sq) / m.w

	total := 0.0
	last := -1
	for i, b := range s.fine {
		total += b.w
		if b.w > 0 {
			last = i
		}
	}
	ps := []float64{0.05, 0.25, 0.5, 0.75, 0.95}
	out := make([]float64, len(ps))
	k := 0
	cum := 0.0
	pick := func(b fineBin) float64 {
		st.PercentileErrorBound = math.Max(st.PercentileErrorBound, (float64(b.hi)-float64(b.lo))/2)
		return (float64(b.lo) + float64(b.hi)) / 2
	}
	for _, b := range s.fine {
		if k == len(ps) {
			break
		}
		cum += b.w
		for k < len(ps) && b.w > 0 && cum >= ps[k]*total {
			out[k] = pick(b)
			k++
		}
	}
	for ; k < len(ps) && last >= 0; k++ { // not reached in exact arithmetic: take the top bin
		out[k] = pick(s.fine[last])
	}
	st.P05, st.P25, st.Median, st.P75, st.P95 = out[0], out[1], out[2], out[3], out[4]
	return st, nil
}
