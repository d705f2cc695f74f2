package evaluate

import (
	"context"
	"math"
	"strings"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/thermal"
)

// Options are the choices of one question, as plain values a way in fills from its request
// (the HTTP layer from model=, sediment= and parameter-name=).
type Options struct {
	// Model is a built-in or stored model id; "" means DefaultModel.
	Model string `json:"model,omitempty"`
	// Sediment is the compaction law of the sediment correction; "" means DefaultSediment.
	Sediment string `json:"sediment,omitempty"`
	// Parameters lists parameter ids; empty means every parameter the dataset answers.
	Parameters []string `json:"parameters,omitempty"`
	// AgeUncertaintyMa is one seafloor-age uncertainty (Ma, one standard deviation) for every
	// position of the question, in place of the dataset's age-uncertainty grid; 0 means the
	// grid (the request's age-uncertainty-ma).
	AgeUncertaintyMa float64 `json:"age_uncertainty_ma,omitempty"`
}

// MaxAgeUncertaintyMa is the largest single age uncertainty a question may give (Ma).
const MaxAgeUncertaintyMa = 100

// DefaultSediment is the compaction law used when a question names none.
const DefaultSediment = "shale"

// Query is a question's dataset and options resolved: the model, the compaction law and the
// parameters, each checked.
type Query struct {
	Dataset  *Dataset
	Model    thermal.Model
	Sediment thermal.Compaction
	Params   []Parameter
	// AgeSigmaMa is the question's single age uncertainty (Ma, one standard deviation); 0 means
	// the dataset's age-uncertainty grid, read when a parameter needs it.
	AgeSigmaMa float64
	// meanUnc is set on a statistics answer's question when the age uncertainty was used for
	// the uncertainty of its means (its provenance then names the source).
	meanUnc bool
}

// param returns the question's parameter id.
func (q *Query) param(id string) (Parameter, bool) {
	for _, p := range q.Params {
		if p.ID == id {
			return p, true
		}
	}
	return Parameter{}, false
}

// usesAgeUncertainty reports whether some parameter propagates the age uncertainty.
func (q *Query) usesAgeUncertainty() bool {
	if q.meanUnc {
		return true
	}
	for _, p := range q.Params {
		if p.NeedsAgeUncertainty() {
			return true
		}
	}
	return false
}

// usesAgeUncertaintyGrid reports whether the question reads the dataset's age-uncertainty grid.
func (q *Query) usesAgeUncertaintyGrid() bool {
	return q.AgeSigmaMa == 0 && (q.meanUnc || q.usesAgeUncertainty())
}

// ageSigma sets the age-uncertainty inputs of in from the question and its window v (the grid
// window is nil where the grid does not reach: no data).
func (q *Query) ageSigma(in *geo.Inputs, v *Dataset) {
	if q.AgeSigmaMa > 0 {
		in.AgeSigmaMa = q.AgeSigmaMa
		return
	}
	if v != nil && v.AgeUncertainty != nil {
		in.AgeSigma = v.AgeUncertainty
		return
	}
	if q.usesAgeUncertaintyGrid() {
		in.AgeSigmaMa = math.NaN() // the grid does not reach the window: no data
	}
}

// Resolve checks o against dataset d: an unknown model is fault.UnknownModel, an unknown
// compaction law fault.UnknownSediment, an unknown or unavailable parameter
// fault.UnknownParameter, more than Limits.MaxParameters a fault.Over("max_parameters").
func (s *Service) Resolve(ctx context.Context, d *Dataset, o Options) (*Query, error) {
	m, err := s.Model(ctx, o.Model)
	if err != nil {
		return nil, err
	}
	q := &Query{Dataset: d, Model: m}
	if u := o.AgeUncertaintyMa; !(u >= 0 && u <= MaxAgeUncertaintyMa) {
		return nil, fault.New(fault.InvalidParameter, geo.AgeSigmaField, "%s=%g: give a number of Ma from 0 to %d", geo.AgeSigmaField, u, MaxAgeUncertaintyMa)
	}
	q.AgeSigmaMa = o.AgeUncertaintyMa
	sed := strings.TrimSpace(o.Sediment)
	if sed == "" {
		sed = DefaultSediment
	}
	c, err := thermal.CompactionByName(sed)
	if err != nil {
		return nil, fault.New(fault.UnknownSediment, "sediment", "sediment=%q: choose one of %s", sed, strings.Join(thermal.CompactionNames(), ", "))
	}
	q.Sediment = c
	if len(o.Parameters) == 0 {
		for _, p := range Parameters {
			if d.answers(p) || p.NeedsAgeUncertainty() && q.AgeSigmaMa > 0 && (!p.NeedsDepth || d.HasDepth) {
				q.Params = append(q.Params, p)
			}
		}
		return q, nil
	}
	seen := map[string]bool{}
	for _, n := range o.Parameters {
		n = strings.TrimSpace(n)
		if n == "" {
			return nil, fault.New(fault.UnknownParameter, "parameter-name", "parameter-name has an empty name (a stray comma?); choose from %s", strings.Join(ParameterIDs(), ", "))
		}
		if seen[n] {
			continue
		}
		seen[n] = true
		p, ok := ParameterByID(n)
		if !ok {
			return nil, fault.New(fault.UnknownParameter, "parameter-name", "parameter-name %q is not known; choose from %s", n, strings.Join(ParameterIDs(), ", "))
		}
		if p.NeedsAgeUncertainty() && !d.HasAgeUncertainty() && q.AgeSigmaMa == 0 && (!p.NeedsDepth || d.HasDepth) {
			return nil, fault.New(fault.UnknownParameter, "parameter-name", "parameter %q needs an age uncertainty: dataset %q has no age-uncertainty grid; give one value with %s", n, d.Row.ID, geo.AgeSigmaField)
		}
		if !d.answers(p) && !(p.NeedsAgeUncertainty() && q.AgeSigmaMa > 0 && (!p.NeedsDepth || d.HasDepth)) {
			return nil, fault.New(fault.UnknownParameter, "parameter-name", "parameter %q needs a grid dataset %q does not have", n, d.Row.ID)
		}
		q.Params = append(q.Params, p)
	}
	if len(q.Params) > s.limits.MaxParameters {
		return nil, fault.Over("max_parameters", int64(s.limits.MaxParameters), int64(len(q.Params)), "parameter-name",
			"%d parameter names; the limit is %d", len(q.Params), s.limits.MaxParameters)
	}
	if len(q.Params) == 0 {
		return nil, fault.New(fault.InvalidParameter, "parameter-name", "parameter-name is empty")
	}
	return q, nil
}

// Predicts reports whether some parameter depends on the model.
func (q *Query) Predicts() bool {
	for _, p := range q.Params {
		if p.Predicted {
			return true
		}
	}
	return false
}

// HasPredictedDepth reports whether some parameter carries a predicted depth or its
// uncertainty (and so the navigation caution: a depth's model uncertainty is no measure of
// how far a sounding would be from it either).
func (q *Query) HasPredictedDepth() bool {
	for _, p := range q.Params {
		switch p.ID {
		case PPredictedDepth, PResidualDepth, PCorrectedDepth, PPredictedDepthUncertainty, PResidualDepthUncertainty:
			return true
		}
	}
	return false
}

// outputs are the geo outputs the parameters need.
func (q *Query) outputs() geo.Outputs {
	var want geo.Outputs
	for _, p := range q.Params {
		want |= p.Output
	}
	return want
}

// load resolves datasetID and o: the dataset with its grids and the checked options.
func (s *Service) load(ctx context.Context, datasetID string, o Options) (*Query, error) {
	d, err := s.Dataset(ctx, datasetID)
	if err != nil {
		return nil, err
	}
	return s.Resolve(ctx, d, o)
}
