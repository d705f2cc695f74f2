package geo

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"ridgeflank/fault"
)

// Weighting chooses how AreaWeightedStats weights each cell.
type Weighting int

const (
	// WeightCosLat weights a cell by the cosine of its sample latitude (Grid.AreaWeight), the
	// usual area weight for a longitude/latitude grid (common practice). Pole nodes get weight 0.
	WeightCosLat Weighting = iota
	// WeightCellArea weights a cell by its exact area on the WGS84 ellipsoid (Grid.CellAreaM2),
	// which differs from cos-latitude mainly next to the poles.
	WeightCellArea
	// WeightEqual gives every cell the same weight (plain, unweighted statistics).
	WeightEqual
)

// MaxHistogramBins bounds the number of histogram bins AreaWeightedStats will make.
const MaxHistogramBins = 10_000

// quantileBins is the number of bins of the internal histogram used to locate percentiles
// before resolving them exactly.
const quantileBins = 1 << 13

// StatsOptions configures AreaWeightedStats.
type StatsOptions struct {
	Weighting Weighting
	// Histogram: set HistogramBins for that many equal bins, or HistogramBinWidth for bins of
	// that width with edges at whole multiples of it (not both). The bins span HistogramMin to
	// HistogramMax when HistogramMax > HistogramMin, otherwise the data's range. Values outside
	// the span are counted in Below and Above. Neither set: no histogram.
	HistogramBins              int
	HistogramBinWidth          float64
	HistogramMin, HistogramMax float64
}

// Histogram holds bin edges (in the grid's unit), counts and area-weighted fractions. Bin i
// covers [Edges[i], Edges[i+1]), the last bin also includes its upper edge.
type Histogram struct {
	Edges         []float64 `json:"edges"`
	Counts        []int     `json:"counts"`
	AreaFractions []float64 `json:"area_fractions"` // bin weight / weight of all valid cells
	Below         int       `json:"below"`          // valid cells below Edges[0]
	Above         int       `json:"above"`          // valid cells above the last edge
}

// Stats summarises grid values over a region. Mean, Std, Min, Max, Median, the percentiles
// and the histogram's Edges are in the grid's own unit (metres for depth and residual-depth
// grids, Ma for age grids, ...); the type is generic over grids, so its field names carry no
// unit and whoever publishes the values should name it (the HTTP API writes mean_m, p95_ma,
// edges_m, ...). With no valid cell (or zero total weight) the value fields are NaN.
type Stats struct {
	Count     int     `json:"count"`      // valid (non-NaN) cells inside the mask
	NoData    int     `json:"no_data"`    // NaN cells inside the mask
	WeightSum float64 `json:"weight_sum"` // Σ weights of the valid cells (m² for WeightCellArea)
	Mean      float64 `json:"mean"`
	Std       float64 `json:"std"` // weighted population standard deviation
	Min       float64 `json:"min"`
	Max       float64 `json:"max"`
	Median    float64 `json:"median"`
	P05       float64 `json:"p05"`
	P25       float64 `json:"p25"`
	P75       float64 `json:"p75"`
	P95       float64 `json:"p95"`
	// QuadratureMean is √(Σ w²x²)/Σw over the valid cells. When the values x are the
	// one-standard-deviation uncertainties of the cells, it is the uncertainty of the weighted
	// mean if the cells' errors are independent (the σ/√n rule with weights: optimistic
	// wherever errors are correlated between cells, as errors of an age grid are over a
	// magnetic-anomaly spacing); the Mean of the uncertainties is the bound for fully
	// correlated errors. Not written by the API's generic statistics object.
	QuadratureMean float64    `json:"-"`
	Histogram      *Histogram `json:"histogram,omitempty"`
	// PercentileErrorBound bounds |reported − exact| for Median, P05, P25, P75 and P95, in the
	// grid's unit. It is 0 from AreaWeightedStats (exact percentiles). From StatsStream it is the
	// largest, over the five percentiles, of half the spread (hi−lo)/2 of the values in the fine
	// bin holding the percentile; it is at most half a fine bin, (Max−Min)/(2·StreamQuantileBins)
	// (up to rounding of the bin index), and 0 when every such bin holds one distinct value.
	//
	// Proof: the fine bin of a value v, ⌊(v−Min)·StreamQuantileBins/(Max−Min)⌋ clamped to the
	// last bin, never decreases as v grows (floating-point subtraction, multiplication by a
	// positive number and truncation are monotone), so the bins split the sorted values into
	// consecutive runs. Let C_b be the weight of bins 0..b and b* the first bin with positive
	// weight and C_b* ≥ p·Σw; lo, hi the smallest and largest value of positive weight in b*.
	// weight(≤ hi) = C_b* ≥ p·Σw, so the exact percentile q ≤ hi; every value of positive weight
	// below lo lies in an earlier bin, so weight(≤ it) ≤ C_(b*−1) < p·Σw, and q (which has
	// positive weight: a zero-weight value never first reaches the target) ≥ lo. The reported
	// value (lo+hi)/2 is then within (hi−lo)/2 of q. Reporting a bin edge would need the whole
	// bin width as bound, the bin's middle half of it. The argument is exact for the weight sums
	// as computed: when the exact weight up to a value equals p·Σw to within the rounding of the
	// sums, the neighbouring value may be reported instead (as for any weighted quantile).
	PercentileErrorBound float64 `json:"percentile_error_bound,omitempty"`
}

// seamColumns returns how many columns to use so that a grid global in longitude whose last
// column repeats its first (node grids with NX = 360/DX + 1) does not count it twice.
func seamColumns(g *Grid) int {
	p := math.Round(360 / g.DX)
	if p >= 1 && math.Abs(p*g.DX-360) <= 1e-4*g.DX && g.NX > int(p) {
		return int(p)
	}
	return g.NX
}

func rowWeights(g *Grid, w Weighting) ([]float64, error) {
	ws := make([]float64, g.NY)
	for r := range ws {
		switch w {
		case WeightCosLat:
			ws[r] = math.Max(0, math.Cos(g.Lat(r)*degToRad))
		case WeightCellArea:
			ws[r] = g.CellAreaM2(r)
		case WeightEqual:
			ws[r] = 1
		default:
			return nil, fault.New(fault.InvalidParameter, "weighting", "unknown weighting %d", int(w))
		}
	}
	return ws, nil
}

// AreaWeightedStats computes weighted statistics of the grid's values inside mask (a mask of
// length 0 means every cell; otherwise its length must be NX·NY, e.g. from GridMask):
// count of valid cells and of no-data (NaN) cells, weighted mean Σwx/Σw, weighted population
// standard deviation √(Σw(x−mean)²/Σw), minimum, maximum, the weighted median and the 5th, 25th,
// 75th and 95th weighted percentiles, and optionally a histogram.
//
// The p-th weighted percentile is the smallest value x such that the weight of the values ≤ x
// is at least p·Σw (the inverse of the weighted empirical distribution function, the
// "Empirical" rule of gonum's stat.Quantile). It is found exactly without sorting the data:
// an 8192-bin weighted histogram over [min, max] locates the bin holding each percentile and
// only that bin's values are sorted. Three passes over the grid; memory O(bins).
//
// A node grid global in longitude that repeats its first column at the end has that column
// skipped, so it is not counted twice.
func AreaWeightedStats(values *Grid, mask Mask, opt StatsOptions) (Stats, error) {
	nan := math.NaN()
	st := Stats{Mean: nan, Std: nan, Min: nan, Max: nan, Median: nan, P05: nan, P25: nan, P75: nan, P95: nan}
	if values == nil {
		return st, gridErr("nil grid")
	}
	g := values
	if g.NX <= 0 || g.NY <= 0 || len(g.Data) != g.NX*g.NY {
		return st, gridErr("%d×%d cells with %d values", g.NX, g.NY, len(g.Data))
	}
	if mask.Len() != 0 && mask.Len() != g.NX*g.NY {
		return st, fmt.Errorf("mask has %d cells, grid %d×%d=%d", mask.Len(), g.NX, g.NY, g.NX*g.NY)
	}
	ws, err := rowWeights(g, opt.Weighting)
	if err != nil {
		return st, err
	}
	if opt.HistogramBins > 0 && opt.HistogramBinWidth > 0 {
		return st, fault.New(fault.InvalidParameter, "histogram", "histogram: give a bin count or a bin width, not both")
	}
	if opt.HistogramBins < 0 || opt.HistogramBinWidth < 0 || math.IsNaN(opt.HistogramBinWidth) || math.IsInf(opt.HistogramBinWidth, 0) {
		return st, fault.New(fault.InvalidParameter, "histogram", "histogram: bin count %d and width %g must not be negative", opt.HistogramBins, opt.HistogramBinWidth)
	}
	nx := seamColumns(g)
	useMask := mask.Len() != 0
	// visit calls f for every valid value inside the mask (used by the rarely taken paths).
	visit := func(f func(v float64, w float64)) {
		for r := 0; r < g.NY; r++ {
			base := r * g.NX
			for c, v32 := range g.Data[base : base+nx] {
				if v32 != v32 || useMask && mask.words[(base+c)>>6]&(1<<(uint(base+c)&63)) == 0 {
					continue
				}
				f(float64(v32), ws[r])
			}
		}
	}

	// pass 1: counts, weight, mean, range
	lo, hi := math.Inf(1), math.Inf(-1)
	var sumW, sumWX, sumW2X2 float64
	for r := 0; r < g.NY; r++ {
		w := ws[r]
		base := r * g.NX
		var rowW, rowWX, rowXX float64
		for c, v32 := range g.Data[base : base+nx] {
			if useMask && mask.words[(base+c)>>6]&(1<<(uint(base+c)&63)) == 0 {
				continue
			}
			if v32 != v32 {
				st.NoData++
				continue
			}
			v := float64(v32)
			st.Count++
			rowW += w
			rowWX += v
			rowXX += v * v
			if v < lo {
				lo = v
			}
			if v > hi {
				hi = v
			}
		}
		sumW += rowW
		sumWX += w * rowWX
		sumW2X2 += w * w * rowXX
	}
	st.WeightSum = sumW
	if st.Count == 0 {
		return st, histogramOnly(&st, opt, lo, hi, visit, sumW)
	}
	st.Min, st.Max = lo, hi
	if !(sumW > 0) {
		return st, histogramOnly(&st, opt, lo, hi, visit, sumW)
	}
	mean := sumWX / sumW
	st.Mean = mean
	st.QuadratureMean = math.Sqrt(sumW2X2) / sumW

	// pass 2: variance, percentile-locating histogram, user histogram
	hist, edgesErr := newHistogram(opt, lo, hi)
	if edgesErr != nil {
		return st, edgesErr
	}
	var histW []float64
	if hist != nil {
		histW = make([]float64, len(hist.Counts))
	}
	type qcell struct {
		w, min, max float64
		n           int
	}
	q := make([]qcell, quantileBins)
	for i := range q {
		q[i] = qcell{0, math.Inf(1), math.Inf(-1), 0}
	}
	scale := 0.0
	if hi > lo {
		scale = quantileBins / (hi - lo)
	}
	qbin := func(v float64) int { return min(int((v-lo)*scale), quantileBins-1) }
	var sumSq float64
	for r := 0; r < g.NY; r++ {
		w := ws[r]
		base := r * g.NX
		var rowSq float64
		for c, v32 := range g.Data[base : base+nx] {
			if v32 != v32 || useMask && mask.words[(base+c)>>6]&(1<<(uint(base+c)&63)) == 0 {
				continue
			}
			v := float64(v32)
			d := v - mean
			rowSq += d * d
			qc := &q[qbin(v)]
			qc.w += w
			qc.n++
			if v < qc.min {
				qc.min = v
			}
			if v > qc.max {
				qc.max = v
			}
			if hist != nil {
				if k := hist.bin(v); k >= 0 {
					hist.Counts[k]++
					histW[k] += w
				}
			}
		}
		sumSq += w * rowSq
	}
	st.Std = math.Sqrt(sumSq / sumW)
	if hist != nil {
		for k := range histW {
			hist.AreaFractions[k] = histW[k] / sumW
		}
		st.Histogram = &hist.Histogram
	}

	// locate each percentile's bin
	ps := []float64{0.05, 0.25, 0.5, 0.75, 0.95}
	type want struct {
		bin    int
		before float64 // weight of all bins before
	}
	wants := make([]want, len(ps))
	out := make([]float64, len(ps))
	cum := 0.0
	k := 0
	for b := 0; b < quantileBins && k < len(ps); b++ {
		for k < len(ps) && cum+q[b].w >= ps[k]*sumW && q[b].w > 0 {
			wants[k] = want{bin: b, before: cum}
			k++
		}
		cum += q[b].w
	}
	for ; k < len(ps); k++ { // rounding left the target just above the total: take the top
		wants[k] = want{bin: qbin(hi), before: cum - q[qbin(hi)].w}
	}
	// pass 3: resolve inside bins that hold more than one distinct value
	type vw struct{ v, w float64 }
	slot := map[int]int{} // bin → index into vals
	var vals [][]vw
	for i, wt := range wants {
		if q[wt.bin].min == q[wt.bin].max {
			out[i] = q[wt.bin].min
			continue
		}
		if _, ok := slot[wt.bin]; !ok {
			slot[wt.bin] = len(vals)
			vals = append(vals, make([]vw, 0, q[wt.bin].n))
		}
	}
	if len(vals) > 0 {
		bins := make([]int, 0, len(slot))
		for b := range slot {
			bins = append(bins, b)
		}
		for r := 0; r < g.NY; r++ {
			w := ws[r]
			base := r * g.NX
			for c, v32 := range g.Data[base : base+nx] {
				if v32 != v32 || useMask && mask.words[(base+c)>>6]&(1<<(uint(base+c)&63)) == 0 {
					continue
				}
				v := float64(v32)
				b := qbin(v)
				for _, nb := range bins {
					if nb == b {
						vals[slot[b]] = append(vals[slot[b]], vw{v, w})
						break
					}
				}
			}
		}
		for _, s := range vals {
			slices.SortFunc(s, func(a, b vw) int { return cmp.Compare(a.v, b.v) })
		}
		for i, wt := range wants {
			si, ok := slot[wt.bin]
			if !ok {
				continue
			}
			s := vals[si]
			target := ps[i] * sumW
			c := wt.before
			out[i] = s[len(s)-1].v
			for _, e := range s {
				c += e.w
				if c >= target {
					out[i] = e.v
					break
				}
			}
		}
	}
	st.P05, st.P25, st.Median, st.P75, st.P95 = out[0], out[1], out[2], out[3], out[4]
	return st, nil
}

// histogramOnly fills the histogram (counts only, fractions NaN when there is no weight) in
// the degenerate cases where there are no valid cells or no weight.
func histogramOnly(st *Stats, opt StatsOptions, lo, hi float64, visit func(func(v, w float64)), sumW float64) error {
	if st.Count > 0 {
		st.Min, st.Max = lo, hi
	}
	if opt.HistogramBins == 0 && opt.HistogramBinWidth == 0 {
		return nil
	}
	if st.Count == 0 {
		lo, hi = 0, 0
	}
	h, err := newHistogram(opt, lo, hi)
	if err != nil || h == nil {
		return err
	}
	visit(func(v, w float64) {
		if k := h.bin(v); k >= 0 {
			h.Counts[k]++
		}
	})
	for k := range h.AreaFractions {
		h.AreaFractions[k] = math.NaN()
	}
	st.Histogram = &h.Histogram
	return nil
}

type histBuilder struct {
	Histogram
	width float64
}

// newHistogram builds empty bins from the options and the data range [lo, hi].
func newHistogram(opt StatsOptions, lo, hi float64) (*histBuilder, error) {
	if opt.HistogramBins == 0 && opt.HistogramBinWidth == 0 {
		return nil, nil
	}
	if opt.HistogramMax > opt.HistogramMin {
		lo, hi = opt.HistogramMin, opt.HistogramMax
	} else if opt.HistogramMax != opt.HistogramMin || opt.HistogramMin != 0 {
		return nil, fault.New(fault.InvalidParameter, "histogram", "histogram: range %g..%g is empty", opt.HistogramMin, opt.HistogramMax)
	}
	var n int
	var e0, width float64
	if opt.HistogramBinWidth > 0 {
		width = opt.HistogramBinWidth
		e0 = math.Floor(lo/width) * width
		nf := math.Max(1, math.Ceil((hi-e0)/width))
		if e0+nf*width < hi {
			nf++
		}
		if nf > MaxHistogramBins {
			return nil, fault.Over("max_histogram_bins", MaxHistogramBins, int64(min(nf, math.MaxInt64/2)), "histogram", "histogram: %g bins of width %g needed, more than the limit of %d", nf, width, MaxHistogramBins)
		}
		n = int(nf)
	} else {
		n = opt.HistogramBins
		if n > MaxHistogramBins {
			return nil, fault.Over("max_histogram_bins", MaxHistogramBins, int64(n), "histogram", "histogram: %d bins, more than the limit of %d", n, MaxHistogramBins)
		}
		if hi <= lo {
			hi = lo + 1
		}
		e0, width = lo, (hi-lo)/float64(n)
	}
	h := &histBuilder{width: width}
	h.Edges = make([]float64, n+1)
	for i := range h.Edges {
		h.Edges[i] = e0 + float64(i)*width
	}
	if opt.HistogramBinWidth == 0 {
		h.Edges[n] = hi
	}
	h.Counts = make([]int, n)
	h.AreaFractions = make([]float64, n)
	return h, nil
}

// bin returns the bin of v, or −1 (counting it in Below or Above) when outside the edges.
func (h *histBuilder) bin(v float64) int {
	n := len(h.Counts)
	first, last := h.Edges[0], h.Edges[n]
	switch {
	case v < first:
		h.Below++
		return -1
	case v > last:
		h.Above++
		return -1
	case v == last:
		return n - 1
	}
	k := min(int((v-first)/h.width), n-1)
	if k > 0 && v < h.Edges[k] {
		k--
	} else if k < n-1 && v >= h.Edges[k+1] {
		k++
	}
	return k
}
