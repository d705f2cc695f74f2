package evaluate

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"strings"

	"ridgeflank/thermal"
)

// Caution is attached to every answer that carries predicted depths.
const Caution = "model estimate, not for navigation: predicted depths come from a cooling model, not from soundings; defer to nautical charts, surveys and the local hydrographic authority"

// Provenance records how an answer was made: which model with which parameters, which grids
// (with their content hashes), and which software.
type Provenance struct {
	Software string    `json:"software"`
	Model    *ModelRef `json:"model,omitempty"`
	Sediment string    `json:"sediment,omitempty"`
	Dataset  string    `json:"dataset,omitempty"`
	Grids    []GridRef `json:"grids,omitempty"`
	// Label is SyntheticLabel when at least one of Grids is invented data.
	Label   string `json:"label,omitempty"`
	Caution string `json:"caution,omitempty"`
	Note    string `json:"note,omitempty"`
}

// ModelRef names a model and repeats its full parameter set and a hash of it.
type ModelRef struct {
	ID           string         `json:"id"`
	ParamsSHA256 string         `json:"params_sha256"`
	Params       thermal.Params `json:"params"`
}

// GridRef names one input grid by id, role and content hash; Label is SyntheticLabel for a
// grid of invented data.
type GridRef struct {
	ID     string `json:"id"`
	Role   string `json:"role"`
	SHA256 string `json:"sha256"`
	Label  string `json:"label,omitempty"`
}

// SyntheticLabel marks invented data. A grid whose name, provenance or licence says it is
// SYNTHETIC (the demo basin's grids, and its files uploaded again under any name, whose
// provenance keeps the file's source) labels every answer built from it, whatever else the
// dataset holds.
const SyntheticLabel = "SYNTHETIC"

// gridLabel is SyntheticLabel for a grid row describing invented data, else "".
func gridLabel(name, provenance, licence string) string {
	for _, s := range []string{name, provenance, licence} {
		if strings.Contains(s, SyntheticLabel) {
			return SyntheticLabel
		}
	}
	return ""
}

// ProvenanceOf is the provenance of an answer from model m (nil: none).
func (s *Service) ProvenanceOf(m thermal.Model) Provenance {
	p := Provenance{Software: "ridgeflank " + s.version}
	if m != nil {
		p.Model = s.ModelRef(m)
	}
	return p
}

// ModelRef describes m (cached per parameter set). Its Params hold the thermal diffusivity the
// model uses, derived as k / (ρm · cp) where the parameter set leaves it 0, and ParamsSHA256 is
// the SHA-256 of Params as shown (JSON).
func (s *Service) ModelRef(m thermal.Model) *ModelRef {
	params := m.Params()
	if v, ok := s.modelRefs.Load(params); ok {
		return v.(*ModelRef)
	}
	ref := NewModelRef(params)
	s.modelRefs.Store(params, ref)
	return ref
}

// NewModelRef describes the parameter set params (see Service.ModelRef).
func NewModelRef(params thermal.Params) *ModelRef {
	// The diffusivity the model uses, also where it is derived from k / (ρm · cp) (stored as 0).
	shown := params
	shown.DiffusivityM2s = params.EffectiveDiffusivityM2s()
	raw, _ := json.Marshal(shown)
	sum := sha256.Sum256(raw)
	return &ModelRef{ID: params.ID, ParamsSHA256: hex.EncodeToString(sum[:]), Params: shown}
}

// Provenance is the provenance of an answer to q.
func (s *Service) Provenance(q *Query) Provenance {
	var p Provenance
	if q.Predicts() {
		p = s.ProvenanceOf(q.Model)
	} else {
		p = s.ProvenanceOf(nil)
	}
	p.Dataset = q.Dataset.Row.ID
	p.Grids = q.Dataset.Refs
	if q.usesAgeUncertaintyGrid() {
		p.Grids = append(append([]GridRef(nil), p.Grids...), q.Dataset.AgeUncertaintyRef)
	}
	if q.AgeSigmaMa > 0 && q.usesAgeUncertainty() {
		p.Note = fmt.Sprintf("age uncertainty %g Ma (one standard deviation) at every position, given with the question", q.AgeSigmaMa)
	}
	for _, g := range p.Grids {
		if g.Label != "" {
			p.Label = g.Label
		}
	}
	for _, x := range q.Params {
		if x.NeedsDepth && x.Predicted {
			p.Sediment = q.Sediment.Name
		}
	}
	if q.HasPredictedDepth() {
		p.Caution = Caution
	}
	return p
}

// Metadata flattens the provenance into key/value pairs for file formats (netCDF global
// attributes, GeoTIFF metadata).
func (p Provenance) Metadata() map[string]string {
	m := map[string]string{"ridgeflank_software": p.Software}
	if p.Model != nil {
		raw, _ := json.Marshal(p.Model.Params)
		m["ridgeflank_model"] = p.Model.ID
		m["ridgeflank_model_params"] = string(raw)
		m["ridgeflank_model_params_sha256"] = p.Model.ParamsSHA256
	}
	if p.Sediment != "" {
		m["ridgeflank_sediment"] = p.Sediment
	}
	if p.Dataset != "" {
		m["ridgeflank_dataset"] = p.Dataset
	}
	for _, g := range p.Grids {
		m["ridgeflank_grid_"+g.Role] = g.ID + " sha256:" + g.SHA256
		if g.Label != "" {
			m["ridgeflank_grid_"+g.Role] += " (" + g.Label + ")"
		}
	}
	if p.Label != "" {
		m["ridgeflank_data_label"] = p.Label
	}
	if p.Caution != "" {
		m["ridgeflank_caution"] = p.Caution
	}
	if raw, err := json.Marshal(p); err == nil {
		m["ridgeflank_provenance"] = string(raw)
	}
	return m
}
