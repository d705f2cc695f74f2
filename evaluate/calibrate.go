package evaluate

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

// CalibrateRequest is one calibration: a region of a dataset, the family and its free
// parameters, and the options of the fit. JSON names are the API's.
type CalibrateRequest struct {
	DatasetID string `json:"-"`
	// RegionID names a stored region; Geometry is a GeoJSON Polygon or MultiPolygon (geometry,
	// Feature) instead. Exactly one is given.
	RegionID string          `json:"region_id,omitempty"`
	Geometry json.RawMessage `json:"geometry,omitempty"`
	// Family is FamilyPlate (default) or FamilySqrtExp; Free its free parameters.
	Family string   `json:"family,omitempty"`
	Free   []string `json:"free"`
	// BaseModel supplies the fixed values of a plate fit and the start of the free ones (a
	// built-in or stored model of kind plate; "" is gdh1).
	BaseModel string `json:"base_model,omitempty"`
	// Start overrides the start of free parameters, by id.
	Start map[string]float64 `json:"start,omitempty"`
	// Sediment is the compaction law of the sediment correction ("" is DefaultSediment).
	Sediment string `json:"sediment,omitempty"`
	// ResolutionDeg coarsens the age lattice to about this many degrees (0: the grid's own).
	ResolutionDeg float64 `json:"resolution_deg,omitempty"`
	// MinAgeMa and MaxAgeMa limit the ages fitted (0, 0: all).
	MinAgeMa float64 `json:"min_age_ma,omitempty"`
	MaxAgeMa float64 `json:"max_age_ma,omitempty"`
	// ClipMAD is k of the outlier rule (0: DefaultClipMAD).
	ClipMAD float64 `json:"clip_mad,omitempty"`
	// Bootstrap is the number of resamples (nil: DefaultBootstrap; 0: none); Seed seeds them
	// (nil: DefaultBootstrapSeed).
	Bootstrap *int    `json:"bootstrap,omitempty"`
	Seed      *uint64 `json:"seed,omitempty"`
	// SaveAs stores a plate fit as a custom model with this id (and Name, if given).
	SaveAs string `json:"save_as,omitempty"`
	Name   string `json:"name,omitempty"`
}

// DepthAgeBin is one age bin of the retained cells' corrected depths (area-weighted
// percentiles).
type DepthAgeBin struct {
	AgeMa        float64 `json:"age_ma"` // bin centre
	MedianDepthM float64 `json:"median_depth_m"`
	P16DepthM    float64 `json:"p16_depth_m"`
	P84DepthM    float64 `json:"p84_depth_m"`
	Cells        int     `json:"cells"`
}

// Calibration is the answer of Calibrate: the fit with its provenance, the binned depths the
// plot shows and the saved model, if any.
type Calibration struct {
	Dataset       string    `json:"dataset"`
	Region        string    `json:"region,omitempty"`
	BaseModel     string    `json:"base_model,omitempty"`
	Sediment      string    `json:"sediment"`
	ResolutionDeg float64   `json:"resolution_deg"`
	AgeRangeMa    []float64 `json:"age_range_ma"`
	FitResult
	Bins       []DepthAgeBin `json:"bins"`
	SavedModel string        `json:"saved_model,omitempty"`
	Software   string        `json:"software"`
	CreatedAt  time.Time     `json:"created_at"`
	Caution    string        `json:"caution"`
}

// Calibrate fits a cooling model to the area-weighted (age, sediment-corrected depth) cells of
// a region of a dataset: cells are read band by band on the age lattice (coarsened to
// req.ResolutionDeg) as Statistics reads them, weighted by their area on the WGS84 ellipsoid
// (geo.Grid.CellAreaM2), and fitted by Fit (least squares by gonum/optimize's Nelder–Mead with
// iterative k·MAD trimming, OutlierRule; bootstrap uncertainties, BootstrapMethod). A plate fit
// is stored as a custom model when req.SaveAs is given (validated as POST /api/models
// validates). progress hears fractions in [0, 1]: reading is the first half. Over
// MaxCalibrationSamples cells is fault.Over("max_calibration_samples").
func (s *Service) Calibrate(ctx context.Context, req CalibrateRequest, progress func(float64)) (*Calibration, error) {
	if progress == nil {
		progress = func(float64) {}
	}
	cp, err := s.prepareCalibration(ctx, req)
	if err != nil {
		return nil, err
	}
	req, spec, base, q, r := cp.req, cp.spec, cp.base, cp.q, cp.r
	samples, err := s.calibrationSamples(ctx, q, r, req, func(f float64) { progress(0.5 * f) })
	if err != nil {
		return nil, err
	}
	fit, err := Fit(samples, spec, func(f float64) { progress(0.5 + 0.5*f) })
	if err != nil {
		return nil, err
	}
	sed := req.Sediment
	if sed == "" {
		sed = DefaultSediment
	}
	c := &Calibration{Dataset: req.DatasetID, Region: req.RegionID, BaseModel: base, Sediment: sed, ResolutionDeg: req.ResolutionDeg,
		AgeRangeMa: []float64{slices.Min(samples.AgeMa), slices.Max(samples.AgeMa)}, FitResult: *fit,
		Software: "ridgeflank " + s.version, CreatedAt: time.Now().UTC(), Caution: Caution}
	if req.Family != FamilyPlate {
		c.BaseModel = ""
	}
	c.Bins = depthAgeBins(samples, fit.Excluded)
	if req.SaveAs != "" {
		p := *fit.Params
		p.ID = req.SaveAs
		p.Name = req.Name
		if p.Name == "" {
			p.Name = "Calibrated " + req.SaveAs
		}
		p.Source = c.provenanceText()
		if err := CheckModel(p); err != nil {
			return nil, err
		}
		if err := s.SaveModel(ctx, p); err != nil {
			return nil, err
		}
		c.SavedModel = p.ID
		c.Params = &p
	}
	progress(1)
	return c, nil
}

// calibrationPlan is a calibration request checked and resolved (no grid read yet).
type calibrationPlan struct {
	req  CalibrateRequest
	spec FitSpec
	base string
	q    *Query
	r    geo.PreparedRegion
}

// CheckCalibration checks req as Calibrate does before it reads any grid (for answering a
// bad request at once rather than from a job).
func (s *Service) CheckCalibration(ctx context.Context, req CalibrateRequest) error {
	_, err := s.prepareCalibration(ctx, req)
	return err
}

func (s *Service) prepareCalibration(ctx context.Context, req CalibrateRequest) (*calibrationPlan, error) {
	if req.Family == "" {
		req.Family = FamilyPlate
	}
	spec, base, err := s.calibrationSpec(ctx, req)
	if err != nil {
		return nil, err
	}
	if req.SaveAs != "" {
		if req.Family != FamilyPlate {
			return nil, fault.New(fault.InvalidParameter, "save_as", "only a plate fit can be saved as a model: the %s curve gives depth alone, no temperature or heat flow", req.Family)
		}
		if err := s.checkNewModelID(ctx, req.SaveAs); err != nil {
			return nil, err
		}
	}
	if req.MinAgeMa < 0 || req.MaxAgeMa < 0 || math.IsNaN(req.MinAgeMa) || math.IsNaN(req.MaxAgeMa) || (req.MaxAgeMa > 0 && req.MaxAgeMa <= req.MinAgeMa) {
		return nil, fault.New(fault.InvalidParameter, "max_age_ma", "min_age_ma=%g and max_age_ma=%g must satisfy 0 ≤ min < max (max 0: no limit)", req.MinAgeMa, req.MaxAgeMa)
	}
	if res := req.ResolutionDeg; math.IsNaN(res) || res < 0 || res > 10 {
		return nil, fault.New(fault.InvalidParameter, "resolution_deg", "resolution_deg=%g must lie between 0 (the grid's own) and 10 degrees", res)
	}
	var r geo.PreparedRegion
	switch {
	case (req.RegionID == "") == (len(req.Geometry) == 0):
		return nil, fault.New(fault.InvalidParameter, "region_id", "give either region_id (a stored region) or geometry (a GeoJSON polygon), not both or neither")
	case req.RegionID != "":
		if _, r, err = s.storedRegion(ctx, req.RegionID); err != nil {
			return nil, err
		}
	default:
		if r, err = s.PrepareRegionGeoJSON(req.Geometry, "geometry"); err != nil {
			return nil, err
		}
	}
	o := Options{Model: base, Sediment: req.Sediment, Parameters: []string{PSeafloorAge, PCorrectedDepth}}
	q, err := s.load(ctx, req.DatasetID, o)
	if err != nil {
		return nil, err
	}
	if !q.Dataset.HasDepth {
		return nil, fault.New(fault.NoData, "", "dataset %q has no depth grid: a calibration needs observed depths", q.Dataset.Row.ID)
	}
	return &calibrationPlan{req: req, spec: spec, base: base, q: q, r: r}, nil
}

// provenanceText says where a calibrated model comes from, in one line (the model's source).
func (c *Calibration) provenanceText() string {
	var b strings.Builder
	fmt.Fprintf(&b, "calibrated by %s on %s to dataset %s", c.Software, c.CreatedAt.Format(time.RFC3339), c.Dataset)
	if c.Region != "" {
		fmt.Fprintf(&b, ", region %s", c.Region)
	}
	fmt.Fprintf(&b, " (%d cells, %.1f %% of the area excluded by %g·MAD trimming; base %s; free:", c.Cells, 100*c.ExcludedAreaFraction, c.ClipMAD, c.BaseModel)
	for _, p := range c.Parameters {
		fmt.Fprintf(&b, " %s %.4g ± %.2g %s", p.ID, p.Value, p.StdDev, p.Unit)
	}
	fmt.Fprintf(&b, "; RMS %.0f m)", c.Misfit.RMSM)
	return b.String()
}

// calibrationSpec resolves the family's fixed values: a plate fit's from the base model (kind
// plate), an empirical fit's from GDH1's coefficients. It answers the base model's id.
func (s *Service) calibrationSpec(ctx context.Context, req CalibrateRequest) (FitSpec, string, error) {
	spec := FitSpec{Family: req.Family, Free: req.Free, Start: req.Start, ClipMAD: req.ClipMAD,
		Bootstrap: DefaultBootstrap, Seed: DefaultBootstrapSeed, Curve: thermal.GDH1Curve}
	if req.Bootstrap != nil {
		spec.Bootstrap = *req.Bootstrap
	}
	if req.Seed != nil {
		spec.Seed = *req.Seed
	}
	base := strings.TrimSpace(req.BaseModel)
	if base == "" {
		base = thermal.IDGDH1
	}
	if req.Family == FamilyPlate {
		m, err := s.Model(ctx, base)
		if err != nil {
			return spec, "", err
		}
		if m.Params().Kind != thermal.KindPlate {
			return spec, "", fault.New(fault.InvalidParameter, "base_model", "base_model %q is of kind %s; a plate fit needs a plate model", base, m.Params().Kind)
		}
		spec.Base = m.Params()
	}
	if _, err := newFamily(spec); err != nil {
		return spec, "", err
	}
	return spec, base, nil
}

// checkNewModelID refuses an id a new custom model cannot take (bad characters, built-in, or
// taken) before any work is done.
func (s *Service) checkNewModelID(ctx context.Context, id string) error {
	if !ValidID(id) {
		return fault.New(fault.InvalidParameter, "save_as", "save_as %q must be 1 to 64 characters from a-z, 0-9, '-' and '_'", id)
	}
	if IsBuiltin(id) {
		return fault.New(fault.Conflict, "save_as", "%q is a built-in model id", id)
	}
	if _, err := s.CustomModel(ctx, id); err == nil {
		return fault.New(fault.Conflict, "save_as", "a model with id %q already exists", id)
	} else if !errors.Is(err, store.ErrNotFound) {
		return err
	}
	return nil
}

// ValidID accepts the ids clients may choose for what they store (models, regions, datasets):
// 1 to 64 characters from a-z, 0-9, '-' and '_'. It is the one rule every way in applies.
func ValidID(id string) bool {
	if id == "" || len(id) > 64 {
		return false
	}
	for _, c := range id {
		if !(c >= 'a' && c <= 'z' || c >= '0' && c <= '9' || c == '-' || c == '_') {
			return false
		}
	}
	return true
}

// SaveModel stores p as a custom model (p must have passed CheckModel); an id already taken is
// fault.Conflict.
func (s *Service) SaveModel(ctx context.Context, p thermal.Params) error {
	if s.st == nil {
		return errors.New("no store to save models in")
	}
	raw, err := json.Marshal(p)
	if err != nil {
		return err
	}
	_, err = s.st.CreateModel(ctx, store.Model{ID: p.ID, Name: p.Name, Description: p.Source, Params: raw})
	if errors.Is(err, store.ErrConflict) {
		return fault.New(fault.Conflict, "save_as", "a model with id %q already exists%w", p.ID, quiet(err))
	}
	return err
}

// calibrationSamples reads the cells of r band by band (as statistics do) and keeps those
// with an age in the asked range and a corrected depth, weighted by cell area.
func (s *Service) calibrationSamples(ctx context.Context, q *Query, r geo.PreparedRegion, req CalibrateRequest, progress func(float64)) (*CalSamples, error) {
	d := q.Dataset
	res := req.ResolutionDeg
	plan, err := planArea(d, r.Bound, res, res)
	if err != nil {
		return nil, err
	}
	if out := plan.outCells(); out > MaxCalibrationSamples {
		age := d.AgeHeader()
		need := math.Sqrt(float64(out)/MaxCalibrationSamples) * math.Max(age.DX*float64(plan.k*plan.rx), age.DY*float64(plan.k*plan.ry))
		return nil, fault.Over("max_calibration_samples", MaxCalibrationSamples, out, "resolution_deg",
			"the region has about %d cells; a calibration holds at most %d: set resolution_deg to about %.3g or more", out, MaxCalibrationSamples, need)
	}
	if in := plan.readCells(); in > int64(s.limits.MaxStatisticsCells) {
		return nil, fault.Over("max_statistics_cells", int64(s.limits.MaxStatisticsCells), in, "resolution_deg",
			"the calibration would read about %d cells; the limit is %d", in, s.limits.MaxStatisticsCells)
	}
	bands, err := rowBands(d.Files.Age, r.Bound, plan)
	if err != nil {
		if isEmptyWindow(err) {
			return nil, fault.New(fault.NoData, "geometry", "the region does not overlap dataset %q", d.Row.ID)
		}
		return nil, err
	}
	fl := newFlagger(q.Params)
	scan := s.scans(plan)
	out := &CalSamples{}
	maxAge := req.MaxAgeMa
	if maxAge == 0 {
		maxAge = math.Inf(1)
	}
	for i, b := range bands {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		ar, err := s.evalWindow(ctx, q, r, b, plan, fl, scan)
		if err != nil {
			if isEmptyWindow(err) || fault.KindOf(err) == fault.NoData {
				continue
			}
			return nil, err
		}
		if ar == nil {
			continue
		}
		ages, depths, lat := ar.Grids[0], ar.Grids[1], ar.Lattice
		for row := 0; row < lat.NY; row++ {
			w := lat.CellAreaM2(row) / 1e6 // km²
			for col := 0; col < lat.NX; col++ {
				k := row*lat.NX + col
				if !ar.Mask.Get(k) {
					continue
				}
				a := float64(ages.Data[k])
				if a < req.MinAgeMa || a > maxAge {
					continue
				}
				out.Add(a, float64(depths.Data[k]), w)
			}
		}
		progress(float64(i+1) / float64(len(bands)))
	}
	if out.Len() == 0 {
		return nil, fault.New(fault.NoData, "geometry", "no cell of the region has both an age (in the asked range) and a corrected depth in dataset %q", d.Row.ID)
	}
	return out, nil
}

// depthAgeBins are the area-weighted median and 16th/84th percentiles of the retained cells'
// depths in age bins of 5 Myr (narrower for a young region: at least 10 bins).
func depthAgeBins(s *CalSamples, excl []bool) []DepthAgeBin {
	maxAge := slices.Max(s.AgeMa)
	width := 5.0
	if maxAge < 50 {
		width = math.Max(maxAge/10, 0.1)
	}
	n := int(maxAge/width) + 1
	idx := make([][]int, n)
	for i, a := range s.AgeMa {
		if excl[i] {
			continue
		}
		k := min(n-1, int(a/width))
		idx[k] = append(idx[k], i)
	}
	var out []DepthAgeBin
	for k, ix := range idx {
		if len(ix) == 0 {
			continue
		}
		vw := make([]valueWeight, len(ix))
		for j, i := range ix {
			vw[j] = valueWeight{s.DepthM[i], s.Weight[i]}
		}
		q := weightedQuantiles(vw, 0.5, 0.16, 0.84)
		out = append(out, DepthAgeBin{AgeMa: (float64(k) + 0.5) * width, MedianDepthM: q[0], P16DepthM: q[1], P84DepthM: q[2], Cells: len(ix)})
	}
	return out
}
