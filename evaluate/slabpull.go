package evaluate

import (
	"context"
	"math"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/thermal"
)

// Field names of the slab answers (units in the names).
const (
	SlabPullColumn         = "slab_pull_n_m"                 // newtons per metre of trench
	ThermalParameterColumn = "thermal_parameter_km"          // age × vertical descent rate, km
	SlabCoreDepthColumn    = "slab_core_below_600c_depth_km" // depth the slab core stays below 600 °C, km
)

// MaxSlabSamples bounds the samples of one slab-pull trench line ("max_slab_samples"): each
// sample solves the slab's conductive heating (thermal.SlabCoreDepthKm, about 10 ms).
const MaxSlabSamples = 2000

// SlabSettings are the slab a slab-pull question assumes at every sample of the trench.
type SlabSettings struct {
	ConvergenceMmYr float64 `json:"convergence_mm_yr"` // convergence rate normal to the trench, mm/yr, 0–300
	SlabLengthKm    float64 `json:"slab_length_km"`    // slab length along dip, km, 0–3000
	DipDeg          float64 `json:"dip_deg"`           // slab dip, degrees, (0, 90]
}

// Check names the first bad setting in a fault.InvalidParameter (fields as the request names
// them: convergence-mm-yr, slab-length-km, dip-deg).
func (st SlabSettings) Check() error {
	switch {
	case !(st.ConvergenceMmYr >= 0 && st.ConvergenceMmYr <= 300):
		return fault.New(fault.InvalidParameter, "convergence-mm-yr", "convergence-mm-yr must be from 0 to 300 mm/yr")
	case !(st.SlabLengthKm >= 0 && st.SlabLengthKm <= 3000):
		return fault.New(fault.InvalidParameter, "slab-length-km", "slab-length-km must be from 0 to 3000 km")
	case !(st.DipDeg > 0 && st.DipDeg <= 90):
		return fault.New(fault.InvalidParameter, "dip-deg", "dip-deg must be above 0 and at most 90 degrees")
	}
	return nil
}

// SlabValues are the slab answers for lithosphere of one arrival age (NaN where the age is).
type SlabValues struct {
	AgeMa              float64 `json:"age_ma"`
	SlabPullNPerM      float64 `json:"slab_pull_n_m"`
	ThermalParameterKm float64 `json:"thermal_parameter_km"`
	CoreDepthKm        float64 `json:"slab_core_below_600c_depth_km"`
}

// SlabAt computes the slab answers for an arrival age under model m: thermal.SlabPullNPerM,
// thermal.ThermalParameterKm and thermal.SlabCoreDepthKm at thermal.SlabCoreIsothermC.
func SlabAt(m thermal.Model, ageMa float64, st SlabSettings) SlabValues {
	if math.IsNaN(ageMa) {
		return SlabValues{math.NaN(), math.NaN(), math.NaN(), math.NaN()}
	}
	return SlabValues{
		AgeMa:              ageMa,
		SlabPullNPerM:      thermal.SlabPullNPerM(m, ageMa, st.SlabLengthKm, st.DipDeg),
		ThermalParameterKm: thermal.ThermalParameterKm(ageMa, st.ConvergenceMmYr, st.DipDeg),
		CoreDepthKm:        thermal.SlabCoreDepthKm(m, ageMa, st.ConvergenceMmYr, st.DipDeg, thermal.SlabCoreIsothermC),
	}
}

// SlabAges answers SlabAt for each age (checked as CheckAges, field names the request's).
func SlabAges(ctx context.Context, m thermal.Model, field string, ages []float64, st SlabSettings) ([]SlabValues, error) {
	if err := st.Check(); err != nil {
		return nil, err
	}
	if err := CheckAges(field, ages...); err != nil {
		return nil, err
	}
	out := make([]SlabValues, len(ages))
	for i, a := range ages {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		out[i] = SlabAt(m, a, st)
	}
	return out, nil
}

// SlabPullResult is the slab answer along a trench line: each sample's values and the
// trench-length-weighted mean over the samples with an age.
type SlabPullResult struct {
	Track    *TrackResult // the trench samples (parameter seafloor_age)
	Settings SlabSettings
	Samples  []SlabValues // per sample, NaN off the age grid
	// Mean is Σ wᵢ·vᵢ / Σ wᵢ over samples with an age, wᵢ the trench length the sample stands
	// for (half the distance to each neighbour along the line: trapezoid weights).
	Mean SlabValues
	// AnsweredKm is Σ wᵢ (the trench length with an age, km); TotalSlabPullN is Σ wᵢ·Fᵢ (N),
	// the slab pull summed along that length.
	AnsweredKm     float64
	TotalSlabPullN float64
}

// SlabPull samples the trench line through waypoints exactly as Track does (WGS84 geodesics,
// geo.Densify; spacingKm ≤ 0 the age grid's row spacing), reads the seafloor age arriving at
// each sample and answers SlabAt there, with the trench-length-weighted mean. Limits: as Track,
// and more than MaxSlabSamples samples is fault.Over("max_slab_samples"); bad settings are
// SlabSettings.Check's faults; a line entirely off the age grid is a fault.NoData.
func (s *Service) SlabPull(ctx context.Context, datasetID string, o Options, waypoints []geo.Waypoint, st SlabSettings, spacingKm float64) (*SlabPullResult, error) {
	if err := st.Check(); err != nil {
		return nil, err
	}
	o.Parameters = []string{PSeafloorAge}
	o.AgeUncertaintyMa = 0
	tr, err := s.Track(ctx, datasetID, o, waypoints, spacingKm)
	if err != nil {
		return nil, err
	}
	n := len(tr.Lons)
	if n > MaxSlabSamples {
		return nil, fault.Over("max_slab_samples", MaxSlabSamples, int64(n), "spacing-km",
			"the trench line gives %d samples; the limit is %d (widen spacing-km)", n, MaxSlabSamples)
	}
	res := &SlabPullResult{Track: tr, Settings: st, Samples: make([]SlabValues, n)}
	m := tr.Query.Model
	ages := tr.Values[0]
	var sw, sa, sf, sp, sd float64
	for i := range n {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		v := SlabAt(m, ages[i], st)
		res.Samples[i] = v
		if math.IsNaN(v.AgeMa) {
			continue
		}
		w := 0.0
		if i > 0 {
			w += (tr.DistanceKm[i] - tr.DistanceKm[i-1]) / 2
		}
		if i < n-1 {
			w += (tr.DistanceKm[i+1] - tr.DistanceKm[i]) / 2
		}
		sw += w
		sa += w * v.AgeMa
		sf += w * v.SlabPullNPerM
		sp += w * v.ThermalParameterKm
		sd += w * v.CoreDepthKm
	}
	if sw == 0 && !anyAge(ages) {
		return nil, fault.New(fault.NoData, "coords", "no sample of the trench line lies on dataset %q's age grid", datasetID)
	}
	res.AnsweredKm = sw
	res.TotalSlabPullN = sf * 1000
	if sw > 0 {
		res.Mean = SlabValues{sa / sw, sf / sw, sp / sw, sd / sw}
	} else { // one sample: its own values
		for _, v := range res.Samples {
			if !math.IsNaN(v.AgeMa) {
				res.Mean = v
			}
		}
	}
	return res, nil
}

// anyAge reports whether some age is a number.
func anyAge(ages []float64) bool {
	for _, a := range ages {
		if !math.IsNaN(a) {
			return true
		}
	}
	return false
}

// SlabColumns are the CSV columns of a slab answer along a trench (WriteCSV's rule).
func (r *SlabPullResult) SlabColumns() []CSVColumn {
	n := len(r.Samples)
	age, f, phi, d := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for i, v := range r.Samples {
		age[i], f[i], phi[i], d[i] = v.AgeMa, v.SlabPullNPerM, v.ThermalParameterKm, v.CoreDepthKm
	}
	return []CSVColumn{
		{Name: "lon", Values: r.Track.Lons}, {Name: "lat", Values: r.Track.Lats},
		{Name: "distance_km", Values: r.Track.DistanceKm}, {Name: "age_ma", Values: age},
		{Name: SlabPullColumn, Values: f}, {Name: ThermalParameterColumn, Values: phi},
		{Name: SlabCoreDepthColumn, Values: d},
	}
}

// SlabProvenance is the provenance of a slab answer: the question's grids, and the model, which
// every slab value comes from (the question's only parameter, the seafloor age, names none).
// It carries no navigation caution: a slab answer holds no predicted seafloor depth.
func (s *Service) SlabProvenance(r *SlabPullResult) Provenance {
	p := s.Provenance(r.Track.Query)
	p.Model = s.ModelRef(r.Track.Query.Model)
	return p
}
