package evaluate

import (
	"cmp"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/optimize"

	"ridgeflank/fault"
	"ridgeflank/thermal"
)

// Calibration families: which curve a calibration fits.
const (
	// FamilyPlate fits parameters of the cooling plate (thermal.KindPlate): any of
	// CalPlateThickness, CalMantleTemperature and CalRidgeDepth; the others are the base model's.
	FamilyPlate = "plate"
	// FamilySqrtExp fits the empirical curve thermal.SqrtExpCurve: any of CalRidgeDepth,
	// CalSqrtSlope and CalAsymptote; the others are GDH1's fit coefficients.
	FamilySqrtExp = "sqrt-exp"
)

// Free parameter ids of a calibration (the JSON names of the values they set).
const (
	CalPlateThickness    = "plate_thickness_km"
	CalMantleTemperature = "mantle_temperature_c"
	CalRidgeDepth        = "ridge_depth_m"
	CalSqrtSlope         = "sqrt_age_slope_m_per_myr_half"
	CalAsymptote         = "asymptotic_depth_m"
)

// Calibration limits and defaults (documented in the API and the command line's help).
const (
	// DefaultClipMAD is k of the outlier rule: a cell is excluded when its residual lies more
	// than k robust standard deviations (1.4826 × MAD) from the median residual. 3 keeps 99.7 %
	// of Gaussian residuals (common practice, no source).
	DefaultClipMAD = 3.0
	// MaxClipRounds bounds the rounds of fitting and excluding.
	MaxClipRounds = 20
	// DefaultBootstrap is the number of bootstrap resamples; MaxBootstrap the most accepted.
	DefaultBootstrap = 100
	MaxBootstrap     = 1000
	// DefaultBootstrapSeed seeds the resampling when a request gives no seed.
	DefaultBootstrapSeed = 1
	// MaxCalibrationSamples bounds the cells one calibration holds (24 bytes each, 48 MB).
	MaxCalibrationSamples = 2_000_000
	// fitBins is the number of bins, uniform in √age, the least-squares objective sums over.
	fitBins = 256
	// curveNodes is the number of nodes, uniform in √age, a trial curve is evaluated at for
	// residuals of single cells (linear interpolation between them; < 0.1 m off for the
	// built-in models, see TestCurveNodesInterpolation).
	curveNodes = 513
)

// OutlierRule states the exclusion rule the answers quote.
const OutlierRule = "iterative trimming by k·MAD: fit by area-weighted least squares, compute every cell's residual (depth − fit), exclude the cells whose residual lies more than k × 1.4826 × MAD from the area-weighted median residual of all cells, refit on the rest, and repeat until no cell changes side (at most 20 rounds)"

// BootstrapMethod states how the uncertainties are computed.
const BootstrapMethod = "Poisson bootstrap of the retained cells (each cell's weight multiplied by a Poisson(1) count; Hanley & MacGibbon 2006, Comput. Methods Programs Biomed. 83, 57-62, from memory), refitted from the best fit; the outlier set is held fixed. Cells are treated as independent, so spatially correlated residuals make these a lower bound."

// CalSamples are the (age, sediment-corrected depth, area weight) triples a calibration fits.
type CalSamples struct {
	AgeMa, DepthM, Weight []float64
}

// Len is the number of samples.
func (s *CalSamples) Len() int { return len(s.AgeMa) }

// Add appends one sample (ignored when any value is not finite or the weight not positive).
func (s *CalSamples) Add(ageMa, depthM, weight float64) {
	if !(ageMa >= 0) || math.IsInf(ageMa, 0) || math.IsNaN(depthM) || math.IsInf(depthM, 0) || !(weight > 0) {
		return
	}
	s.AgeMa = append(s.AgeMa, ageMa)
	s.DepthM = append(s.DepthM, depthM)
	s.Weight = append(s.Weight, weight)
}

// FitSpec is what to fit: the family, the free parameters, where fixed values come from and
// the rule's settings.
type FitSpec struct {
	Family string
	Free   []string
	// Base supplies the fixed values of FamilyPlate (and the start of the free ones).
	Base thermal.Params
	// Curve supplies the fixed values of FamilySqrtExp (and the start of the free ones).
	Curve thermal.SqrtExpCurve
	// Start overrides the start of free parameters, by id.
	Start map[string]float64
	// ClipMAD is k of the outlier rule (0: DefaultClipMAD); Bootstrap the resamples (0: none);
	// Seed seeds them.
	ClipMAD   float64
	Bootstrap int
	Seed      uint64
}

// ParamEstimate is one fitted parameter with its bootstrap spread.
type ParamEstimate struct {
	ID    string  `json:"id"`
	Unit  string  `json:"unit"`
	Value float64 `json:"value"`
	Start float64 `json:"start"`
	// StdDev is the standard deviation of the bootstrap fits; P2_5 and P97_5 their 2.5th and
	// 97.5th percentiles (absent without bootstrap).
	StdDev float64  `json:"std_dev"`
	P2_5   *float64 `json:"p2_5,omitempty"`
	P97_5  *float64 `json:"p97_5,omitempty"`
}

// Misfit describes the residuals of the best fit (depth − fit, m).
type Misfit struct {
	// RMSM is the area-weighted root mean square residual of the retained cells.
	RMSM float64 `json:"rms_m"`
	// RobustSigmaM is 1.4826 × the area-weighted median absolute deviation of all cells'
	// residuals from their median (the scale of the outlier rule).
	RobustSigmaM float64 `json:"robust_sigma_m"`
	// MedianResidualM is the area-weighted median residual of all cells.
	MedianResidualM float64 `json:"median_residual_m"`
	// MeanResidualM is the area-weighted mean residual of the retained cells.
	MeanResidualM float64 `json:"mean_residual_m"`
}

// FitResult is a robust least-squares fit of one family to samples.
type FitResult struct {
	Family     string          `json:"family"`
	Parameters []ParamEstimate `json:"parameters"`
	// Params is the fitted plate model (FamilyPlate); Curve the fitted curve (FamilySqrtExp).
	Params *thermal.Params       `json:"model_params,omitempty"`
	Curve  *thermal.SqrtExpCurve `json:"curve,omitempty"`
	Misfit Misfit                `json:"misfit"`
	// Cells and Retained count the samples; ExcludedAreaFraction is the area-weighted fraction
	// the rule excluded, ExcludedCellFraction the fraction of cells.
	Cells                int     `json:"cells"`
	Retained             int     `json:"retained_cells"`
	ExcludedAreaFraction float64 `json:"excluded_area_fraction"`
	ExcludedCellFraction float64 `json:"excluded_cell_fraction"`
	Rounds               int     `json:"rounds"`
	ClipMAD              float64 `json:"clip_mad"`
	Rule                 string  `json:"outlier_rule"`
	Bootstrap            struct {
		Resamples int    `json:"resamples"`
		Seed      uint64 `json:"seed"`
		Method    string `json:"method"`
	} `json:"bootstrap"`
	// Excluded marks the samples the rule excluded (by index; not in JSON).
	Excluded []bool `json:"-"`
}

// family is a curve family with its free parameters resolved.
type family struct {
	spec  FitSpec
	ids   []string
	start []float64
	scale []float64 // a typical step of each free parameter (the optimizer works in x/scale)
}

var calUnits = map[string]string{
	CalPlateThickness: "km", CalMantleTemperature: "°C", CalRidgeDepth: "m", CalSqrtSlope: "m/Myr^0.5", CalAsymptote: "m",
}

var calScales = map[string]float64{
	CalPlateThickness: 10, CalMantleTemperature: 100, CalRidgeDepth: 100, CalSqrtSlope: 30, CalAsymptote: 200,
}

// FamilyParameters lists the free parameter ids each family accepts.
func FamilyParameters(fam string) []string {
	switch fam {
	case FamilyPlate:
		return []string{CalPlateThickness, CalMantleTemperature, CalRidgeDepth}
	case FamilySqrtExp:
		return []string{CalRidgeDepth, CalSqrtSlope, CalAsymptote}
	}
	return nil
}

func newFamily(spec FitSpec) (*family, error) {
	allowed := FamilyParameters(spec.Family)
	if allowed == nil {
		return nil, fault.New(fault.InvalidParameter, "family", "family %q is not one of %q or %q", spec.Family, FamilyPlate, FamilySqrtExp)
	}
	f := &family{spec: spec}
	seen := map[string]bool{}
	for _, id := range spec.Free {
		if !slices.Contains(allowed, id) {
			return nil, fault.New(fault.InvalidParameter, "free", "free parameter %q is not one of family %s's: %v", id, spec.Family, allowed)
		}
		if seen[id] {
			continue
		}
		seen[id] = true
		f.ids = append(f.ids, id)
	}
	if len(f.ids) == 0 {
		return nil, fault.New(fault.InvalidParameter, "free", "name at least one free parameter of family %s: %v", spec.Family, allowed)
	}
	for id := range spec.Start {
		if !seen[id] {
			return nil, fault.New(fault.InvalidParameter, "start", "start value for %q, which is not a free parameter", id)
		}
	}
	for _, id := range f.ids {
		v := f.get(id)
		if s, ok := spec.Start[id]; ok {
			v = s
		}
		f.start = append(f.start, v)
		f.scale = append(f.scale, calScales[id])
	}
	if _, err := f.curve(f.start); err != nil {
		return nil, fault.New(fault.InvalidParameter, "start", "the starting model is not valid: %v", err)
	}
	return f, nil
}

// get is the base value of parameter id.
func (f *family) get(id string) float64 {
	p, c := f.spec.Base, f.spec.Curve
	switch {
	case id == CalPlateThickness:
		return p.PlateThicknessKm
	case id == CalMantleTemperature:
		return p.MantleTemperatureC
	case id == CalRidgeDepth && f.spec.Family == FamilyPlate:
		return p.RidgeDepthM
	case id == CalRidgeDepth:
		return c.RidgeDepthM
	case id == CalSqrtSlope:
		return c.SqrtAgeSlopeMPerMyr
	default:
		return c.AsymptoticDepthM
	}
}

// depthFunc is a depth–age curve (m positive down against Ma).
type depthFunc func(ageMa float64) float64

// curve is the family's curve at free values x (an error when they make no valid model).
func (f *family) curve(x []float64) (depthFunc, error) {
	if f.spec.Family == FamilyPlate {
		p := f.params(x)
		m, err := thermal.NewModel(p)
		if err != nil {
			return nil, err
		}
		return m.DepthM, nil
	}
	c := f.sqrtExp(x)
	if err := c.Validate(); err != nil {
		return nil, err
	}
	return c.DepthM, nil
}

func (f *family) params(x []float64) thermal.Params {
	p := f.spec.Base
	p.Kind = thermal.KindPlate
	for i, id := range f.ids {
		switch id {
		case CalPlateThickness:
			p.PlateThicknessKm = x[i]
		case CalMantleTemperature:
			p.MantleTemperatureC = x[i]
		case CalRidgeDepth:
			p.RidgeDepthM = x[i]
		}
	}
	return p
}

func (f *family) sqrtExp(x []float64) thermal.SqrtExpCurve {
	c := f.spec.Curve
	if c.CrossoverAgeMa == 0 {
		c.CrossoverAgeMa = thermal.GDH1CrossoverAgeMa
	}
	for i, id := range f.ids {
		switch id {
		case CalRidgeDepth:
			c.RidgeDepthM = x[i]
		case CalSqrtSlope:
			c.SqrtAgeSlopeMPerMyr = x[i]
		case CalAsymptote:
			c.AsymptoticDepthM = x[i]
		}
	}
	return c
}

// bins are the sufficient statistics of the weighted least-squares objective in bins uniform
// in √age: Σw, Σw·t, Σw·d, Σw·d². Evaluating the curve at each bin's mean age t̄ makes
// Σ w (d − m(t))² ≈ Σ_b [Σw·d² − 2 m(t̄) Σw·d + m(t̄)² Σw]; the error is of second order in
// the bin width (under 0.1 m² per cell for the models here).
type bins struct {
	w, wt, wd, wdd []float64
	age            []float64 // mean ages of the non-empty bins (after finish)
	idx            []int     // their indices
}

func newBins() *bins {
	return &bins{w: make([]float64, fitBins), wt: make([]float64, fitBins), wd: make([]float64, fitBins), wdd: make([]float64, fitBins)}
}

func (b *bins) reset() {
	clear(b.w)
	clear(b.wt)
	clear(b.wd)
	clear(b.wdd)
	b.age, b.idx = b.age[:0], b.idx[:0]
}

func (b *bins) finish() {
	for i, w := range b.w {
		if w > 0 {
			b.idx = append(b.idx, i)
			b.age = append(b.age, b.wt[i]/w)
		}
	}
}

// sse is the weighted mean squared residual of curve m (m²).
func (b *bins) sse(m depthFunc) float64 {
	var s, wsum float64
	for k, i := range b.idx {
		d := m(b.age[k])
		s += b.wdd[i] - 2*d*b.wd[i] + d*d*b.w[i]
		wsum += b.w[i]
	}
	return math.Max(0, s/wsum)
}

// fitter holds one calibration's samples and scratch.
type fitter struct {
	fam     *family
	s       *CalSamples
	sqrtMax float64
	binOf   []int32
	resid   []float64
	nodes   []float64
	nodeD   []float64
	b       *bins
}

func newFitter(fam *family, s *CalSamples) *fitter {
	ft := &fitter{fam: fam, s: s, b: newBins(), binOf: make([]int32, s.Len()), resid: make([]float64, s.Len()),
		nodes: make([]float64, curveNodes), nodeD: make([]float64, curveNodes)}
	maxAge := slices.Max(s.AgeMa)
	ft.sqrtMax = math.Sqrt(maxAge) * (1 + 1e-9)
	if ft.sqrtMax == 0 {
		ft.sqrtMax = 1
	}
	for i, a := range s.AgeMa {
		ft.binOf[i] = int32(min(fitBins-1, int(math.Sqrt(a)/ft.sqrtMax*fitBins)))
	}
	for i := range ft.nodes {
		r := ft.sqrtMax * float64(i) / float64(curveNodes-1)
		ft.nodes[i] = r * r
	}
	return ft
}

// fill accumulates the samples not excluded, each weight times mult[i] (nil: 1).
func (ft *fitter) fill(excl []bool, mult []float64) {
	b := ft.b
	b.reset()
	s := ft.s
	for i, w := range s.Weight {
		if excl != nil && excl[i] {
			continue
		}
		if mult != nil {
			w *= mult[i]
			if w == 0 {
				continue
			}
		}
		k := ft.binOf[i]
		d := s.DepthM[i]
		b.w[k] += w
		b.wt[k] += w * s.AgeMa[i]
		b.wd[k] += w * d
		b.wdd[k] += w * d * d
	}
	b.finish()
}

// minimize fits the free parameters to the current bins from x0 by Nelder–Mead simplex
// (gonum/optimize), in units of the parameters' typical steps. Outside the family's valid
// range the objective is 1e30 (so the simplex contracts away from it).
func (ft *fitter) minimize(x0 []float64, simplex float64) ([]float64, float64, error) {
	n := len(x0)
	sc := ft.fam.scale
	x := make([]float64, n)
	p := optimize.Problem{Func: func(y []float64) float64 {
		for i := range y {
			x[i] = y[i] * sc[i]
		}
		m, err := ft.fam.curve(x)
		if err != nil {
			return 1e30
		}
		return ft.b.sse(m)
	}}
	y0 := make([]float64, n)
	for i := range x0 {
		y0[i] = x0[i] / sc[i]
	}
	set := &optimize.Settings{
		FuncEvaluations: 4000,
		Converger:       &optimize.FunctionConverge{Absolute: 1e-7, Relative: 1e-12, Iterations: 20 * (n + 1)},
	}
	res, err := optimize.Minimize(p, y0, set, &optimize.NelderMead{SimplexSize: simplex})
	if err != nil && res == nil {
		return nil, 0, err
	}
	out := make([]float64, n)
	for i := range out {
		out[i] = res.X[i] * sc[i]
	}
	if res.F >= 1e30 {
		return nil, 0, fmt.Errorf("no valid model near the start")
	}
	return out, res.F, nil
}

// residuals sets ft.resid to depth − m(age) for every sample, m interpolated linearly in √age
// between curveNodes nodes.
func (ft *fitter) residuals(m depthFunc) {
	for i, a := range ft.nodes {
		ft.nodeD[i] = m(a)
	}
	step := ft.sqrtMax / float64(curveNodes-1)
	for i, a := range ft.s.AgeMa {
		u := math.Sqrt(a) / step
		k := min(curveNodes-2, int(u))
		f := u - float64(k)
		ft.resid[i] = ft.s.DepthM[i] - (ft.nodeD[k]*(1-f) + ft.nodeD[k+1]*f)
	}
}

// valueWeight is one value with its area weight, for weighted quantiles.
type valueWeight struct{ v, w float64 }

// weightedQuantiles sorts vw by value and answers its area-weighted qs-quantiles: the first
// value at which the cumulative weight reaches q of the total (the lower weighted quantile).
func weightedQuantiles(vw []valueWeight, qs ...float64) []float64 {
	slices.SortFunc(vw, func(a, b valueWeight) int { return cmp.Compare(a.v, b.v) })
	var tot float64
	for _, x := range vw {
		tot += x.w
	}
	out := make([]float64, len(qs))
	for j, q := range qs {
		out[j] = vw[len(vw)-1].v
		var acc float64
		for _, x := range vw {
			acc += x.w
			if acc >= q*tot {
				out[j] = x.v
				break
			}
		}
	}
	return out
}

// Fit fits spec's family to the samples by area-weighted least squares with iterative k·MAD
// trimming (OutlierRule) and, when spec.Bootstrap > 0, bootstrap uncertainties
// (BootstrapMethod). progress, if not nil, hears fractions in [0, 1].
func Fit(s *CalSamples, spec FitSpec, progress func(float64)) (*FitResult, error) {
	if progress == nil {
		progress = func(float64) {}
	}
	fam, err := newFamily(spec)
	if err != nil {
		return nil, err
	}
	k := spec.ClipMAD
	if k == 0 {
		k = DefaultClipMAD
	}
	if !(k >= 1 && k <= 20) {
		return nil, fault.New(fault.InvalidParameter, "clip_mad", "clip_mad=%g must lie between 1 and 20", k)
	}
	if spec.Bootstrap < 0 || spec.Bootstrap > MaxBootstrap {
		return nil, fault.Over("max_bootstrap", MaxBootstrap, int64(spec.Bootstrap), "bootstrap", "bootstrap=%d resamples; the limit is %d", spec.Bootstrap, MaxBootstrap)
	}
	n := s.Len()
	if n < 3*len(fam.ids)+3 {
		return nil, fault.New(fault.NoData, "", "%d cells with both an age and a corrected depth: too few to fit %d parameters", n, len(fam.ids))
	}
	ft := newFitter(fam, s)
	excl := make([]bool, n)
	vw := make([]valueWeight, n)
	x := fam.start
	res := &FitResult{Family: spec.Family, ClipMAD: k, Rule: OutlierRule, Cells: n}
	var med, sigma float64
	for round := 1; ; round++ {
		ft.fill(excl, nil)
		xb, _, err := ft.minimize(x, 0.5)
		if err != nil {
			return nil, fault.New(fault.NoData, "", "the fit found no valid model: %v", err)
		}
		x = xb
		m, _ := fam.curve(x)
		ft.residuals(m)
		for i, r := range ft.resid {
			vw[i] = valueWeight{r, s.Weight[i]}
		}
		med = weightedQuantiles(vw, 0.5)[0]
		for i, r := range ft.resid {
			vw[i] = valueWeight{math.Abs(r - med), s.Weight[i]}
		}
		sigma = 1.4826 * weightedQuantiles(vw, 0.5)[0]
		changed, kept := 0, 0
		for i, r := range ft.resid {
			out := math.Abs(r-med) > k*sigma
			if out != excl[i] {
				changed++
				excl[i] = out
			}
			if !out {
				kept++
			}
		}
		res.Rounds = round
		progress(0.5 * float64(round) / MaxClipRounds)
		if kept < 3*len(fam.ids)+3 {
			return nil, fault.New(fault.NoData, "", "the outlier rule left %d cells; too few to fit (is the robust spread zero?)", kept)
		}
		if changed == 0 || round >= MaxClipRounds {
			if changed != 0 { // fit the final set
				ft.fill(excl, nil)
				if x, _, err = ft.minimize(x, 0.1); err != nil {
					return nil, fault.New(fault.NoData, "", "the fit found no valid model: %v", err)
				}
				m, _ = fam.curve(x)
				ft.residuals(m)
			}
			break
		}
	}
	progress(0.5)
	// Misfit and excluded fractions.
	var wAll, wOut, wIn, sr, srr float64
	for i, w := range s.Weight {
		wAll += w
		if excl[i] {
			wOut += w
			res.ExcludedCellFraction++
			continue
		}
		wIn += w
		sr += w * ft.resid[i]
		srr += w * ft.resid[i] * ft.resid[i]
	}
	res.Retained = n - int(res.ExcludedCellFraction)
	res.ExcludedCellFraction /= float64(n)
	res.ExcludedAreaFraction = wOut / wAll
	res.Misfit = Misfit{RMSM: math.Sqrt(srr / wIn), RobustSigmaM: sigma, MedianResidualM: med, MeanResidualM: sr / wIn}
	res.Excluded = excl
	for i, id := range fam.ids {
		res.Parameters = append(res.Parameters, ParamEstimate{ID: id, Unit: calUnits[id], Value: x[i], Start: fam.start[i]})
	}
	if spec.Family == FamilyPlate {
		p := fam.params(x)
		res.Params = &p
	} else {
		c := fam.sqrtExp(x)
		res.Curve = &c
	}
	// Bootstrap.
	res.Bootstrap.Resamples, res.Bootstrap.Seed, res.Bootstrap.Method = spec.Bootstrap, spec.Seed, BootstrapMethod
	if spec.Bootstrap > 0 {
		rng := rand.New(rand.NewPCG(spec.Seed, 0x5eaf100f))
		mult := make([]float64, n)
		draws := make([][]float64, len(x))
		for b := 0; b < spec.Bootstrap; b++ {
			for i := range mult {
				mult[i] = poisson1(rng)
			}
			ft.fill(excl, mult)
			xb, _, err := ft.minimize(x, 0.05)
			if err != nil {
				continue
			}
			for j := range xb {
				draws[j] = append(draws[j], xb[j])
			}
			progress(0.5 + 0.5*float64(b+1)/float64(spec.Bootstrap))
		}
		for j := range res.Parameters {
			d := draws[j]
			if len(d) < 2 {
				continue
			}
			var mean, ss float64
			for _, v := range d {
				mean += v
			}
			mean /= float64(len(d))
			for _, v := range d {
				ss += (v - mean) * (v - mean)
			}
			slices.Sort(d)
			lo, hi := quantileSorted(d, 0.025), quantileSorted(d, 0.975)
			pe := &res.Parameters[j]
			pe.StdDev = math.Sqrt(ss / float64(len(d)-1))
			pe.P2_5, pe.P97_5 = &lo, &hi
		}
	}
	progress(1)
	return res, nil
}

// quantileSorted is the q-quantile of sorted v by linear interpolation between order
// statistics (Hyndman & Fan 1996, definition 7).
func quantileSorted(v []float64, q float64) float64 {
	h := q * float64(len(v)-1)
	i := int(h)
	if i >= len(v)-1 {
		return v[len(v)-1]
	}
	return v[i] + (h-float64(i))*(v[i+1]-v[i])
}

// poisson1CDF is the cumulative distribution of Poisson(1) at 0, 1, …, 19.
var poisson1CDF = func() [20]float64 {
	var c [20]float64
	p := math.Exp(-1)
	c[0] = p
	for k := 1; k < len(c); k++ {
		p /= float64(k)
		c[k] = c[k-1] + p
	}
	return c
}()

// poisson1 draws a Poisson(1) count by inversion of its cumulative distribution (capped at
// 20, whose probability is below 1e-19).
func poisson1(r *rand.Rand) float64 {
	u := r.Float64()
	for k, c := range poisson1CDF {
		if u <= c {
			return float64(k)
		}
	}
	return float64(len(poisson1CDF))
}
