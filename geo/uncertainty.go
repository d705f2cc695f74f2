package geo

import (
	"math"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/integrate/quad"

	"ridgeflank/fault"
	"ridgeflank/thermal"
)

// Propagation of seafloor-age uncertainty into the model's predictions.
//
// The age of a cell is taken as normally distributed about its grid value with the standard
// deviation σ of the age-uncertainty grid (or the single value of the question), truncated at
// age 0 (crust cannot be younger than the ridge). The uncertainty of a prediction f(age) is the
// standard deviation of f over that distribution, found in one of two ways:
//
//   - first order, where σ ≤ SamplingRatio·age: σ_f = |df/dage|·σ (the linear term of the Taylor
//     series; see e.g. Taylor, An Introduction to Error Analysis, 2nd ed. 1997, §3.11). For depth
//     the derivative is the model's own subsidence rate dd/dt (thermal.Table's
//     SubsidenceRateMPerMyr); for heat flow and thickness, which thermal gives no derivative of,
//     it is a central difference in s = √age with step s/32, df/dage = (f((s+h)²) − f((s−h)²)) /
//     (2h) / (2s): every prediction of the cooling models is smooth in √age (the half-space
//     thickness is linear in it, so the difference is exact for it);
//   - by sampling, where σ > SamplingRatio·age (young seafloor, where √age is steep and the
//     linear term misjudges the spread, and near the ridge where the truncation matters): the
//     mean and variance of f are integrated over the truncated normal by Gauss–Legendre
//     quadrature in the standard normal variable z = (t − age)/σ, from max(−age/σ, −8) to 8, in
//     spreadPanels panels of spreadPoints points, each node weighted by the normal density
//     and the weights normalised to sum to one.
//
// For a question's single σ the depth uncertainty is tabulated over age once per model and σ
// (spreadTable: the sampled spread within 1e-4 of the value plus 1 mm of the direct quadrature,
// switching to first order at the first age node at or above σ/SamplingRatio, within 1/256 of an
// octave of it), so a grid cell costs one node lookup on either branch; with an age-uncertainty grid the sampled depth
// uncertainty is tabulated over σ and age/σ (sigmaGrid, within 2e-4 of the value plus 5 mm of
// the direct quadrature), so a sampled cell costs two row lookups.
//
// Heat flow grows like 1/√age, so where the distribution reaches age 0 its variance is
// unbounded (the integral of 1/t diverges at t → 0): there the rule's finite value is a lower
// bound, set by its nodes. Only age uncertainty is propagated: the observed depth, sediment and
// crust grids and the model parameters are taken as exact, so the residual depth's uncertainty is
// the predicted depth's (where the residual has a value).

// SamplingRatio is the ratio σ/age above which the uncertainty is found by sampling rather than
// to first order. At σ/age = 0.1 the two agree within about 1 % for √age laws (the next terms of
// the series are of order (σ/age)²); a plate model's flattening adds terms of order (σ/τ)², τ
// its thermal time constant (about 36 Myr for GDH1: 2 % at 60 Ma, σ = 6 Ma).
const SamplingRatio = 0.1

const (
	spreadPanels = 4
	spreadPoints = 8
	spreadZMax   = 8.0 // standard deviations; the normal tail beyond holds 6e-16
)

// legendre01 are the Gauss–Legendre nodes and weights of spreadPoints points on [0, 1].
var legendre01 = sync.OnceValues(func() ([]float64, []float64) {
	x := make([]float64, spreadPoints)
	w := make([]float64, spreadPoints)
	quad.Legendre{}.FixedLocations(x, w, 0, 1)
	return x, w
})

// ageSpread is the standard deviation of f(t) for t normal about ageMa with standard deviation
// sigmaMa, truncated at 0 (see the comment at the top of this file). NaN for NaN or negative age
// or σ; 0 for σ = 0.
//
// df, if not nil, is f's derivative (per Ma); otherwise the central difference is used.
func ageSpread(f, df func(float64) float64, ageMa, sigmaMa float64) float64 {
	if !(ageMa >= 0) || !(sigmaMa >= 0) || math.IsInf(ageMa, 0) || math.IsInf(sigmaMa, 0) {
		return math.NaN()
	}
	if sigmaMa == 0 {
		return 0
	}
	if sigmaMa <= SamplingRatio*ageMa {
		if df != nil {
			return math.Abs(df(ageMa)) * sigmaMa
		}
		return math.Abs(ageDerivative(f, ageMa)) * sigmaMa
	}
	return sampledSpread(f, ageMa, sigmaMa)
}

// ageDerivative is df/dage at ageMa > 0 by the central difference in √age described above.
func ageDerivative(f func(float64) float64, ageMa float64) float64 {
	s := math.Sqrt(ageMa)
	h := s / 32
	lo, hi := (s-h)*(s-h), (s+h)*(s+h)
	return (f(hi) - f(lo)) / (2 * h) / (2 * s)
}

// sampledSpread is the standard deviation of f over the truncated normal by the composite
// Gauss–Legendre rule described above.
func sampledSpread(f func(float64) float64, ageMa, sigmaMa float64) float64 {
	x, w := legendre01()
	z0 := math.Max(-ageMa/sigmaMa, -spreadZMax)
	width := (spreadZMax - z0) / spreadPanels
	var vals, wts [spreadPanels * spreadPoints]float64
	sumW, mean := 0.0, 0.0
	for p := range spreadPanels {
		a := z0 + float64(p)*width
		for k := range spreadPoints {
			z := a + x[k]*width
			i := p*spreadPoints + k
			wts[i] = w[k] * width * math.Exp(-z*z/2)
			vals[i] = f(math.Max(ageMa+sigmaMa*z, 0))
			sumW += wts[i]
			mean += wts[i] * vals[i]
		}
	}
	mean /= sumW
	v := 0.0
	for i, y := range vals {
		d := y - mean
		v += wts[i] * d * d
	}
	return math.Sqrt(v / sumW)
}

// ridgePushTable tabulates thermal.RidgePushNPerM of one model at nodes uniform in √age over
// 0..thermal.TableMaxAgeMa (ridgePushIntervals intervals, linear interpolation in √age; the
// half-space force is linear in age, so the interpolation error is that of s² between nodes,
// below 1e-4 of the value beyond 10 Ma; see TestRidgePushTable). Older ages are computed
// directly.
type ridgePushTable struct {
	m    thermal.Model
	invH float64
	y    []float64
}

const ridgePushIntervals = 512

var ridgePushTables = newTableCache[thermal.Params, *ridgePushTable](thermal.MaxCachedTables)

// ridgePushTableFor returns the cached table of m (built on first use: 513 evaluations of
// thermal.RidgePushNPerM, a few tens of milliseconds for a plate model; at most
// thermal.MaxCachedTables are kept).
func ridgePushTableFor(m thermal.Model) *ridgePushTable {
	return ridgePushTables.must(m.Params(), func() *ridgePushTable {
		smax := math.Sqrt(thermal.TableMaxAgeMa)
		t := &ridgePushTable{m: m, invH: ridgePushIntervals / smax, y: make([]float64, ridgePushIntervals+1)}
		for i := range t.y {
			s := smax * float64(i) / ridgePushIntervals
			t.y[i] = thermal.RidgePushNPerM(m, s*s)
		}
		return t
	})
}

func (t *ridgePushTable) at(ageMa float64) float64 {
	if !(ageMa >= 0) {
		return math.NaN()
	}
	if ageMa > thermal.TableMaxAgeMa {
		return thermal.RidgePushNPerM(t.m, ageMa)
	}
	x := math.Sqrt(ageMa) * t.invH
	i := min(int(x), ridgePushIntervals-1)
	f := x - float64(i)
	return t.y[i] + f*(t.y[i+1]-t.y[i])
}

// uncRow computes the age-uncertainty and ridge-push outputs of output row r (nil destinations
// are not computed): the uncertainties of predicted depth, heat flow, thermal thickness and
// residual depth (ageSpread over the model's table) and the ridge push (ridgePushTable). res, if
// not nil, is the row's residual depth already computed: where it is NaN so is its uncertainty
// (otherwise the corrected depth is computed to find where the residual has a value).
func (p *residualPlan) uncRow(w *residualWorker, r int, predSig, hfSig, thickSig, resSig, push, res []float32) {
	nx := p.lat.NX
	age := p.lat.Data[r*nx : (r+1)*nx]
	nan := float32(math.NaN())
	var sig []float32
	if p.wantSigma {
		if p.sigma.g != nil {
			sig = p.sigma.row(p, r, w.sigma)
		}
	}
	var obs, sed, crust []float32
	if resSig != nil && res == nil {
		obs = p.depth.row(p, r, w.depth)
		if p.sedTab != nil {
			sed = p.sed.row(p, r, w.sed)
		}
		if p.crust.g != nil {
			crust = p.crust.row(p, r, w.crust)
		}
	}
	var pdRow []float32 // the depth uncertainty of the row, for a single σ with its table
	if p.spread != nil && sig == nil && (predSig != nil || resSig != nil) {
		simple := !p.hasMask && push == nil && hfSig == nil && thickSig == nil && (resSig == nil || res != nil)
		if simple && predSig == nil {
			// The common question (the residual's uncertainty alone): one pass.
			p.depthSpreadRow(resSig, age, res, p.sigmaMa)
			return
		}
		pdRow = w.spread
		if predSig != nil {
			pdRow = predSig
		}
		p.depthSpreadRow(pdRow, age, nil, p.sigmaMa)
		if simple {
			if resSig != nil {
				res = res[:len(resSig)]
				pdRow = pdRow[:len(resSig)]
				for i, v := range res {
					if v != v {
						resSig[i] = nan
					} else {
						resSig[i] = pdRow[i]
					}
				}
			}
			return
		}
	}
	for i, a32 := range age {
		if p.hasMask && !p.mask.Get(r*nx+i) {
			a32 = nan
		}
		a := float64(a32)
		if push != nil {
			push[i] = float32(p.push.at(a))
		}
		if !p.wantSigma {
			continue
		}
		s := p.sigmaMa
		if sig != nil {
			s = float64(sig[i])
		}
		var pd float64
		switch {
		case pdRow != nil && a32 != a32:
			pd = math.NaN() // masked (pdRow holds the unmasked age's value)
		case pdRow != nil:
			pd = float64(pdRow[i])
		case predSig != nil || resSig != nil:
			pd = p.depthSpread(a32, s)
		}
		if predSig != nil {
			predSig[i] = float32(pd)
		}
		if hfSig != nil {
			hfSig[i] = float32(ageSpread(p.tbl.HeatFlowMWm2, nil, a, s))
		}
		if thickSig != nil {
			thickSig[i] = float32(ageSpread(p.tbl.ThermalThicknessKm, nil, a, s))
		}
		if resSig != nil && res != nil {
			resSig[i] = float32(pd)
			if res[i] != res[i] {
				resSig[i] = nan
			}
		} else if resSig != nil {
			var sd, cr float32
			if sed != nil {
				sd = sed[i]
			}
			if crust != nil {
				cr = crust[i]
			}
			if c := p.correctedAt(obs[i], sd, cr); c != c {
				resSig[i] = nan
			} else {
				resSig[i] = float32(pd)
			}
		}
	}
}

// spreadTable is the predicted depth's uncertainty for one model and one single age uncertainty
// σ on thermal's bit-indexed float32 age nodes (thermal.Float32Nodes), over the whole age table
// [0, thermal.TableMaxAgeMa), so a grid cell costs one node lookup whatever its age — the same
// index as the depth's own node, which lets the residual's loop find both in one pass.
//
// Nodes below switchBits (the node boundary at or just above σ/SamplingRatio, within 1/256 of
// an octave of it) take the sampling branch: a node interpolates the sampled spread linearly
// between its ends, whose values are in turn interpolated linearly from sampledSpread at
// spreadIntervals+1 ages uniform over [0, switch age]. Nodes from switchBits on take the first
// order: |dd/dt|·σ, the subsidence-rate nodes scaled by σ (within 1e-6 of the value of
// |rate|·σ computed per cell, float32 rounding). The sampled spread differs from the direct
// quadrature by at most spreadTableTol: 1e-4 of its value plus 1 mm (TestSpreadTableMatchesQuadrature,
// over σ from 0.01 to 300 Ma and ages from 0 to the switch; largest seen 1.5e-5 of the value).
// Ages beyond the table, NaN and negative ages take ageSpread (depthSpread).
type spreadTable struct {
	nodes      *[thermal.AgeNodeCount]spreadNode
	switchBits uint32
}

// spreadNode is one node of a spreadTable, laid out and read as thermal.Float32Node: the value
// at the node's start and the change per unit of the low thermal.Float32NodeShift bits.
type spreadNode struct{ v, d float32 }

func (e spreadNode) at(bits uint32) float32 {
	return e.v + float32(bits&(1<<thermal.Float32NodeShift-1))*e.d
}

// spreadIntervals is the number of uniform age intervals over [0, switch age] at which the
// spread is found by quadrature when a spreadTable is built (513 quadratures of 32 points).
const spreadIntervals = 512

const maxSpreadTables = 32

var spreadTables = newTableCache[spreadKey, *spreadTable](maxSpreadTables)

type spreadKey struct {
	p     thermal.Params
	sigma float64
}

// spreadTableFor returns the cached spread table of model m (table tbl) for σ = sigmaMa > 0
// (finite), built on first use (about a millisecond); at most maxSpreadTables (of 280 KiB)
// are kept.
func spreadTableFor(m thermal.Model, tbl *thermal.Table, sigmaMa float64) *spreadTable {
	return spreadTables.must(spreadKey{m.Params(), sigmaMa}, func() *spreadTable { return newSpreadTable(tbl, sigmaMa) })
}

func newSpreadTable(tbl *thermal.Table, sigmaMa float64) *spreadTable {
	// the first float32 age with σ ≤ SamplingRatio·age (monotone in age; the bits of
	// non-negative float32 values are ordered as the values), rounded up to a node boundary
	lo, hi := uint32(0), uint32(0x7f800000) // +Inf is on the first-order side
	for lo < hi {
		mid := lo + (hi-lo)/2
		if sigmaMa <= SamplingRatio*float64(math.Float32frombits(mid)) {
			hi = mid
		} else {
			lo = mid + 1
		}
	}
	const mask = 1<<thermal.Float32NodeShift - 1
	n := min(int((lo+mask)>>thermal.Float32NodeShift), thermal.AgeNodeCount)
	nodeStart := func(j int) float64 { return float64(math.Float32frombits(uint32(j) << thermal.Float32NodeShift)) }
	end := nodeStart(n)
	h := end / spreadIntervals
	var coarse [spreadIntervals + 1]float64
	for i := range coarse {
		coarse[i] = sampledSpread(tbl.DepthM, float64(i)*h, sigmaMa)
	}
	interp := func(a float64) float64 {
		// For σ below about 1e-300 Ma, h underflows (to 0 for the smallest σ, making a/h NaN or
		// +Inf) and float32 node ages lie far beyond end: x is clamped to twice the intervals,
		// which normal σ never reaches (the last node starts within 2^-8 of its age past end).
		x := a / h
		if !(x >= 0) {
			x = 0
		}
		x = min(x, 2*spreadIntervals)
		i := min(int(x), spreadIntervals-1)
		f := x - float64(i)
		return coarse[i] + f*(coarse[i+1]-coarse[i])
	}
	t := &spreadTable{nodes: new([thermal.AgeNodeCount]spreadNode), switchBits: uint32(n) << thermal.Float32NodeShift}
	v0 := interp(0)
	for j := range n {
		v1 := interp(nodeStart(j + 1))
		t.nodes[j] = spreadNode{float32(v0), float32((v1 - v0) / (1 << thermal.Float32NodeShift))}
		v0 = v1
	}
	rate := tbl.SubsidenceRateNodes()
	for j := n; j < thermal.AgeNodeCount; j++ {
		b := uint32(j) << thermal.Float32NodeShift
		r0 := math.Abs(float64(rate[j].At(b))) * sigmaMa
		r1 := math.Abs(float64(rate[j].At(b|mask))) * sigmaMa
		t.nodes[j] = spreadNode{float32(r0), float32((r1 - r0) / mask)}
	}
	return t
}

// depthSpreadRow writes the predicted depth's uncertainty at every age of the row for the
// single σ = s of the question (p.spread built for it): one node lookup per cell, depthSpread
// for ages outside the table. If res is not nil (the row's residual depth, as long as age), dst
// is NaN where res is.
func (p *residualPlan) depthSpreadRow(dst, age, res []float32, s float64) {
	dst = dst[:len(age)]
	if res != nil {
		res = res[:len(age)]
	}
	nodes := p.spread.nodes
	nan := float32(math.NaN())
	for i, ab := range float32Bits(age) {
		if res != nil && res[i]-res[i] != 0 {
			dst[i] = nan // no residual (land, no data; or infinite): no lookup
			continue
		}
		if j := uint(ab >> thermal.Float32NodeShift); j < uint(len(nodes)) {
			dst[i] = nodes[j].at(ab)
		} else {
			dst[i] = float32(p.depthSpread(age[i], s))
		}
	}
}

// depthSpread is the predicted depth's uncertainty at age a (float32, as the grids hold it) for
// σ = s: for the question's single σ its spreadTable; for another σ (an age-uncertainty grid's)
// the σ-bucket rows (sigmaGrid) on the sampling branch and the subsidence-rate nodes to first
// order (one lookup; the nodes resample SubsidenceRateMPerMyr to about 1e-6 of its value, as
// thermal's heat-flow nodes do); ageSpread of the table's depth with the model's subsidence rate
// as derivative for everything else (ages beyond the table, NaN, negative).
func (p *residualPlan) depthSpread(a float32, s float64) float64 {
	af := float64(a)
	if p.spread != nil && s == p.sigmaMa {
		b := math.Float32bits(a)
		if j := uint(b >> thermal.Float32NodeShift); j < uint(len(p.spread.nodes)) {
			return float64(p.spread.nodes[j].at(b))
		}
	}
	if p.sigGrid != nil && s >= minTabulatedSigmaMa && s <= math.MaxFloat32 && af >= 0 && s > SamplingRatio*af {
		return float64(p.sigGrid.at(a, float32(s)))
	}
	if s > 0 && s <= SamplingRatio*af {
		b := math.Float32bits(a)
		if j := uint(b >> thermal.Float32NodeShift); j < uint(len(p.rate)) {
			return math.Abs(float64(p.rate[j].At(b))) * s
		}
	}
	return ageSpread(p.tbl.DepthM, p.tbl.SubsidenceRateMPerMyr, af, s)
}

// pointUnc fills the age-uncertainty and ridge-push values of v at (lon, lat).
//
// corrM is the corrected depth there (NaN where it has none, or none was computed).
func (p *residualPlan) pointUnc(v *SampleValues, sigma *Grid, lon, lat, corrM float64) {
	if p.want&OutRidgePush != 0 {
		v.RidgePushNPerM = p.push.at(v.AgeMa)
	}
	if !p.wantSigma {
		return
	}
	s := p.sigmaMa
	if sigma != nil {
		s = float64(sigma.SampleBilinear(lon, lat))
	}
	v.AgeSigmaMa = s
	a := float64(float32(v.AgeMa))
	pd := p.depthSpread(float32(v.AgeMa), s)
	if p.want&OutPredictedDepthSigma != 0 {
		v.PredictedDepthSigmaM = pd
	}
	if p.want&OutHeatFlowSigma != 0 {
		v.HeatFlowSigmaMWm2 = ageSpread(p.tbl.HeatFlowMWm2, nil, a, s)
	}
	if p.want&OutThermalThicknessSigma != 0 {
		v.ThermalThicknessSigmaKm = ageSpread(p.tbl.ThermalThicknessKm, nil, a, s)
	}
	if p.want&OutResidualDepthSigma != 0 && !math.IsNaN(corrM) {
		v.ResidualDepthSigmaM = pd
	}
}

// prepareUnc checks and sets up the age-uncertainty and ridge-push parts of p.
func (p *residualPlan) prepareUnc(in Inputs) error {
	if p.want&OutRidgePush != 0 {
		p.push = ridgePushTableFor(in.Model)
	}
	if p.want&outSigma == 0 {
		return nil
	}
	p.wantSigma = true
	if p.want&(OutPredictedDepthSigma|OutResidualDepthSigma) != 0 {
		p.rate = (*ageNodes)(p.tbl.SubsidenceRateNodes())
	}
	if in.AgeSigma != nil {
		s, err := newResidualSource("age uncertainty", in.AgeSigma, p.lat)
		if err != nil {
			return err
		}
		p.sigma = s
		if p.rate != nil {
			p.sigGrid = newSigmaGrid(in.Model, p.tbl)
		}
		return nil
	}
	if math.IsNaN(in.AgeSigmaMa) {
		p.sigmaMa = in.AgeSigmaMa // no data: every uncertainty is NaN
		return nil
	}
	if math.IsInf(in.AgeSigmaMa, 0) || in.AgeSigmaMa < 0 {
		return fault.New(fault.InvalidParameter, AgeSigmaField, "age uncertainty %g Ma: give a finite value ≥ 0", in.AgeSigmaMa)
	}
	if in.AgeSigmaMa == 0 {
		return fault.New(fault.UnknownParameter, AgeSigmaField, "the uncertainty parameters need an age-uncertainty grid or a single age uncertainty (%s)", AgeSigmaField)
	}
	p.sigmaMa = in.AgeSigmaMa
	if p.rate != nil {
		p.spread = spreadTableFor(in.Model, p.tbl, p.sigmaMa)
	}
	return nil
}

// AgeSigmaField names the single age uncertainty of a question in faults (the request's
// parameter).
const AgeSigmaField = "age-uncertainty-ma"

// With an age-uncertainty grid every cell has its own σ, so the single-σ spreadTable does not
// apply. The sampled depth uncertainty is then tabulated in two variables: σ by the top bits of
// its float32 pattern (sigmaBucketBits buckets per octave, like thermal.Float32Nodes index ages)
// and the relative age x = age/σ ∈ [0, 1/SamplingRatio] in spreadIntervals uniform intervals.
// Each bucket's row holds sampledSpread at σ = the bucket's start; a cell interpolates linearly
// in x within the rows of its bucket and the next, then linearly in the low bits of σ between
// them (piecewise linear in σ within an octave). For a √age law the spread at fixed x grows like
// √σ, which linear interpolation over steps of 1/32 of an octave misses by at most
// (1/32)²/8 · 1/4 ≈ 3e-5 of the value; with the x interpolation (as spreadTable's, about 4e-5)
// the table stays within 2e-4 of the value plus 5 mm of the direct quadrature
// (TestSigmaGridMatchesQuadrature: largest seen 3e-5 of the value for σ up to 40 Ma). Rows are built on first use (513
// quadratures each, tens of microseconds) and kept per model (at most maxSigmaRows).

// minTabulatedSigmaMa is the smallest σ read from the σ-bucket rows; smaller ones (below any
// dating method's resolution) are integrated directly.
const minTabulatedSigmaMa = 1e-6

// sigmaBucketBits is log2 of the number of σ buckets per octave.
const sigmaBucketBits = 5

// sigmaBucketShift drops the float32 mantissa bits below the bucket index.
const sigmaBucketShift = 23 - sigmaBucketBits

// sigmaBucketCount covers every finite positive float32 σ (and one more for the upper row).
const sigmaBucketCount = 0x7f800000>>sigmaBucketShift + 1

// maxSigmaRows bounds the cached rows over all models (4 KiB each).
const maxSigmaRows = 4096

// sigmaRow is the sampled depth uncertainty at x = i/spreadIntervals/SamplingRatio, i = 0..spreadIntervals.
type sigmaRow [spreadIntervals + 1]float32

var sigmaRows = newTableCache[sigmaRowKey, *sigmaRow](maxSigmaRows)

type sigmaRowKey struct {
	p      thermal.Params
	bucket uint32
}

// sigmaGrid is one plan's view of the σ-bucket rows of its model: a pointer per bucket, filled
// from the shared cache on first use (safe for the plan's concurrent workers).
type sigmaGrid struct {
	params thermal.Params
	tbl    *thermal.Table
	rows   []atomic.Pointer[sigmaRow]
}

func newSigmaGrid(m thermal.Model, tbl *thermal.Table) *sigmaGrid {
	return &sigmaGrid{params: m.Params(), tbl: tbl, rows: make([]atomic.Pointer[sigmaRow], sigmaBucketCount+1)}
}

// row returns the row of bucket k, building or fetching it on first use.
func (g *sigmaGrid) row(k uint32) *sigmaRow {
	if r := g.rows[k].Load(); r != nil {
		return r
	}
	r := sigmaRows.must(sigmaRowKey{g.params, k}, func() *sigmaRow {
		r := new(sigmaRow)
		s := float64(math.Float32frombits(k << sigmaBucketShift))
		for i := range r {
			x := float64(i) / spreadIntervals / SamplingRatio
			r[i] = float32(sampledSpread(g.tbl.DepthM, x*s, s))
		}
		return r
	})
	g.rows[k].Store(r)
	return r
}

// at is the sampled depth uncertainty at age a for σ = s, for finite s > 0 and 0 ≤ a < s/SamplingRatio.
func (g *sigmaGrid) at(a, s float32) float32 {
	sb := math.Float32bits(s)
	k := sb >> sigmaBucketShift
	f := float32(sb&(1<<sigmaBucketShift-1)) * (1.0 / (1 << sigmaBucketShift))
	lo, hi := g.row(k), g.row(k+1)
	// x in units of the rows' intervals: a/s of the cell's own σ on both rows (the rows are
	// functions of x, so the interpolation in σ is at fixed x)
	x := a / s * (SamplingRatio * spreadIntervals)
	i := int(x)
	if i >= spreadIntervals {
		i = spreadIntervals - 1
	}
	fx := x - float32(i)
	vlo := lo[i] + fx*(lo[i+1]-lo[i])
	vhi := hi[i] + fx*(hi[i+1]-hi[i])
	return vlo + f*(vhi-vlo)
}

// residualSigmaFused is the residual's hot loop (residualFusedChunk) with the residual's age
// uncertainty found in the same pass over the row: res as residualFusedChunk gives it, and
// resSig NaN where res is, else the predicted depth's uncertainty at the cell's age, for the
// question's single σ (sig nil: p.spread's node at the depth's own index, as depthSpreadRow)
// or for the cell's own σ from the
// age-uncertainty grid's row sig (the σ-bucket rows below the switch, the rate nodes above,
// as depthSpread). Cells the loop leaves to the slow paths (values beyond a table, σ not
// positive and finite) take depthSpread.
func (p *residualPlan) residualSigmaFused(res, resSig, age, obs, sed, sig []float32) {
	n := len(res)
	if n == 0 {
		return
	}
	res, resSig, age, obs, sed = res[:n], resSig[:n], age[:n], obs[:n], sed[:n]
	// Two passes over the row, which stays in the L1 cache between them: the residual's own
	// loop, then the uncertainty (one loop doing both holds more live values than there are
	// registers, spills, and runs slower than the two).
	residualFusedChunk(res, age, obs, sed, p.sign, p.depthTab, p.sedTab)
	ab := float32Bits(age)[:n]
	rs := resSig[:n]
	nan := float32(math.NaN())
	slow := false
	if sig == nil {
		un := p.spread.nodes
		for i, r := range res {
			b := ab[i]
			var u float32
			if j := uint(b >> thermal.Float32NodeShift); j < uint(len(un)) {
				u = un[j].at(b)
			} else {
				u = nan
				slow = slow || r-r == 0 // beyond the table with a residual: depthSpread below
			}
			rs[i] = u + (r - r) // NaN where the residual is NaN (or infinite), without a branch
		}
	} else {
		sig = sig[:n]
		rate, g := p.rate, p.sigGrid
		for i, r := range res {
			b, s := ab[i], sig[i]
			var u float32
			j := uint(b >> thermal.Float32NodeShift)
			switch {
			case float64(s) <= SamplingRatio*float64(age[i]) && s > 0 && j < uint(len(rate)):
				// first order; the float32 product of float32 values is the float64 product
				// rounded once, so this equals depthSpread's float64 arithmetic rounded to float32
				u = math.Float32frombits(math.Float32bits(rate[j].At(b))&^signBit32) * s
			case s >= minTabulatedSigmaMa && s <= math.MaxFloat32 && j < uint(len(rate)):
				u = g.at(age[i], s) // sampled (age < σ/SamplingRatio), from the σ-bucket rows
			default:
				u = nan
				slow = slow || r-r == 0 // σ or age outside the tables, with a residual: depthSpread below
			}
			rs[i] = u + (r - r)
		}
	}
	if slow {
		for i, r := range res {
			if r-r == 0 && rs[i] != rs[i] {
				s := p.sigmaMa
				if sig != nil {
					s = float64(sig[i])
				}
				rs[i] = float32(p.depthSpread(age[i], s))
			}
		}
	}
}
