package geo

import (
	"math"

	"ridgeflank/thermal"
)

// SampleValues are the inputs and outputs of a residual-depth evaluation at one position. Inputs
// are as sampled (NaN where a grid has no data or is absent); ObservedDepthM is positive down
// whatever the grid's vertical sense. Outputs not asked for are NaN.
type SampleValues struct {
	AgeMa          float64 // seafloor age, Ma
	ObservedDepthM float64 // observed depth, m, positive down
	SedimentM      float64 // sediment thickness, m
	CrustKm        float64 // igneous crustal thickness, km

	PredictedDepthM    float64 // depth_m, positive down
	HeatFlowMWm2       float64 // heat_flow_mw_m2
	ThermalThicknessKm float64 // thickness_km
	Depth600CKm        float64 // depth of the 600 °C isotherm below the seafloor, km
	CorrectedDepthM    float64 // depth_m, positive down
	ResidualDepthM     float64 // predicted − corrected, m; positive = shallower than the model

	AgeSigmaMa              float64 // age uncertainty used, Ma (one standard deviation)
	PredictedDepthSigmaM    float64 // uncertainty of predicted depth from age uncertainty, m
	HeatFlowSigmaMWm2       float64 // uncertainty of heat flow from age uncertainty, mW/m²
	ThermalThicknessSigmaKm float64 // uncertainty of thermal thickness from age uncertainty, km
	ResidualDepthSigmaM     float64 // uncertainty of residual depth from age uncertainty, m
	RidgePushNPerM          float64 // ridge push per unit length of ridge, N/m
}

// NaNSampleValues is a SampleValues with every field NaN (no data).
func NaNSampleValues() SampleValues {
	nan := math.NaN()
	return SampleValues{AgeMa: nan, ObservedDepthM: nan, SedimentM: nan, CrustKm: nan,
		PredictedDepthM: nan, HeatFlowMWm2: nan, ThermalThicknessKm: nan, Depth600CKm: nan, CorrectedDepthM: nan, ResidualDepthM: nan,
		AgeSigmaMa: nan, PredictedDepthSigmaM: nan, HeatFlowSigmaMWm2: nan, ThermalThicknessSigmaKm: nan, ResidualDepthSigmaM: nan, RidgePushNPerM: nan}
}

// PointEvaluator evaluates the residual-depth quantities at single positions with the same
// arithmetic as Evaluate (the same tables, the same per-sample corrected and residual depth):
// the value at a position that is a sample of the output lattice equals Evaluate's value there.
// Grids are sampled bilinearly (Grid.SampleBilinear). Safe for concurrent use.
type PointEvaluator struct {
	p     *residualPlan
	age   *Grid
	sigma *Grid // age uncertainty, if given as a grid
}

// NewPointEvaluator prepares point evaluations of the outputs want from in (Window, Mask,
// Region, Workers and Progress are ignored). It checks in as Evaluate does.
func NewPointEvaluator(in Inputs, want Outputs) (*PointEvaluator, error) {
	in.Window, in.Mask, in.Region = nil, Mask{}, nil
	p, err := newResidualPlan(in, want)
	if err != nil {
		return nil, err
	}
	if want&OutResidualDepth == 0 && p.needPred {
		p.depthTab = depthTableFor(p.tbl)
	}
	return &PointEvaluator{p: p, age: in.Age, sigma: in.AgeSigma}, nil
}

// At evaluates the outputs at (lon, lat), degrees.
func (e *PointEvaluator) At(lon, lat float64) SampleValues {
	p := e.p
	v := NaNSampleValues()
	v.AgeMa = float64(e.age.SampleBilinear(lon, lat))
	age := float32(v.AgeMa)
	if p.want&(OutPredictedDepth|OutResidualDepth) != 0 {
		v.PredictedDepthM = float64(p.depthTab.at(age))
	}
	if p.want&OutHeatFlow != 0 {
		v.HeatFlowMWm2 = p.tbl.HeatFlowMWm2(float64(age))
	}
	if p.want&OutThermalThickness != 0 {
		v.ThermalThicknessKm = p.tbl.ThermalThicknessKm(float64(age))
	}
	if p.want&OutDepth600C != 0 {
		v.Depth600CKm = p.tbl.Depth600CKm(float64(age))
	}
	if !p.needCorr {
		p.pointUnc(&v, e.sigma, lon, lat, math.NaN())
		return v
	}
	obs := p.depth.g.SampleBilinear(lon, lat)
	v.ObservedDepthM = float64(p.sign * obs)
	var sed, crust float32
	if p.sedTab != nil {
		sed = p.sed.g.SampleBilinear(lon, lat)
		v.SedimentM = float64(sed)
	}
	if p.crust.g != nil {
		crust = p.crust.g.SampleBilinear(lon, lat)
		v.CrustKm = float64(crust)
	}
	corr := p.correctedAt(obs, sed, crust)
	if p.want&OutCorrectedDepth != 0 {
		v.CorrectedDepthM = float64(corr)
	}
	if p.want&OutResidualDepth != 0 {
		v.ResidualDepthM = float64(residualAt(float32(v.PredictedDepthM), corr))
	}
	p.pointUnc(&v, e.sigma, lon, lat, float64(corr))
	return v
}

// correctedAt is the corrected depth of one sample, m positive down: the observed value in the
// plan's vertical sense made positive down, plus the sediment correction (thermal's
// SedimentCorrector through its float32 nodes) when the plan has a sediment grid, plus
// thermal.CrustCorrectionM when it has a crust grid. The one definition of corrected depth:
// Evaluate's chunks and PointEvaluator both use it (the fused residual loop inlines the same
// sum and falls back to it).
func (p *residualPlan) correctedAt(obs, sed, crust float32) float32 {
	var crustM float32
	if p.crust.g != nil {
		crustM = float32(thermal.CrustCorrectionM(float64(crust), p.crustKgM3, p.mantleKgM3, p.waterKgM3))
	}
	return correctedDepth(p.sign, obs, p.sedTab, sed, crustM)
}

// correctedDepth is sign·obs + the sediment correction of sed (through st; none when st is nil)
// + crustM, the crust correction already computed (0 without a crust grid).
func correctedDepth(sign, obs float32, st *sedTable, sed, crustM float32) float32 {
	c := sign * obs
	if st != nil {
		c += st.at(sed)
	}
	return c + crustM
}

// residualAt is thermal.ResidualDepthM in float32 (the float64 difference of two float32 values
// rounds to the float32 difference).
func residualAt(pred, corr float32) float32 {
	return float32(thermal.ResidualDepthM(float64(pred), float64(corr)))
}
