package server

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"hash/crc32"
	"net/http"
	"strings"

	"ridgeflank/thermal"
)

// Caution is attached to every response that carries predicted depths.
const Caution = "model estimate, not for navigation: predicted depths come from a cooling model, not from soundings; defer to nautical charts, surveys and the local hydrographic authority"

// Provenance records how a computed answer was made: which model with which
// parameters, which grids (with their content hashes), and which software.
type Provenance struct {
	Software string    `json:"software"`
	Model    *ModelRef `json:"model,omitempty"`
	Sediment string    `json:"sediment,omitempty"`
	Dataset  string    `json:"dataset,omitempty"`
	Grids    []GridRef `json:"grids,omitempty"`
	Caution  string    `json:"caution,omitempty"`
	Note     string    `json:"note,omitempty"`
}

// ModelRef names a model and repeats its full parameter set and a hash of it.
type ModelRef struct {
	ID           string         `json:"id"`
	ParamsSHA256 string         `json:"params_sha256"`
	Params       thermal.Params `json:"params"`
}

// GridRef names one input grid by id, role and content hash.
type GridRef struct {
	ID     string `json:"id"`
	Role   string `json:"role"`
	SHA256 string `json:"sha256"`
}

func (s *server) provenance(m thermal.Model) Provenance {
	p := Provenance{Software: "ridgeflank " + s.deps.Version}
	if m != nil {
		p.Model = s.modelRef(m)
	}
	return p
}

// modelRef describes m; results are cached per parameter set in the server
// (bounded by the number of distinct models used: built-ins plus stored
// custom models).
func (s *server) modelRef(m thermal.Model) *ModelRef {
	params := m.Params()
	if v, ok := s.modelRefs.Load(params); ok {
		return v.(*ModelRef)
	}
	raw, _ := json.Marshal(params)
	sum := sha256.Sum256(raw)
	ref := &ModelRef{ID: params.ID, ParamsSHA256: hex.EncodeToString(sum[:]), Params: params}
	s.modelRefs.Store(params, ref)
	return ref
}

// setHeaders puts the provenance in response headers (for formats with no
// place of their own for it: CSV, PNG, and as a duplicate for all others).
func (p Provenance) setHeaders(w http.ResponseWriter) {
	var parts []string
	parts = append(parts, fmt.Sprintf("software=%q", p.Software))
	if p.Model != nil {
		parts = append(parts, fmt.Sprintf("model=%q", p.Model.ID), fmt.Sprintf("model_params_sha256=%q", p.Model.ParamsSHA256))
	}
	if p.Sediment != "" {
		parts = append(parts, fmt.Sprintf("sediment=%q", p.Sediment))
	}
	if p.Dataset != "" {
		parts = append(parts, fmt.Sprintf("dataset=%q", p.Dataset))
	}
	for _, g := range p.Grids {
		parts = append(parts, fmt.Sprintf("grid=%q", g.Role+":"+g.ID+"@sha256:"+g.SHA256))
	}
	w.Header().Set("Ridgeflank-Provenance", strings.Join(parts, ", "))
	if p.Caution != "" {
		w.Header().Set("Ridgeflank-Caution", p.Caution)
	}
}

// metadata flattens the provenance into key/value pairs for file formats
// (netCDF global attributes, GeoTIFF metadata).
func (p Provenance) metadata() map[string]string {
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
	}
	if p.Caution != "" {
		m["ridgeflank_caution"] = p.Caution
	}
	return m
}

// withPNGCaution returns the PNG file raw with a tEXt chunk under the
// keyword "Disclaimer" (one of the keywords the PNG specification, ISO/IEC
// 15948:2004 section 11.3.4.2, predefines) holding caution, inserted right
// after the IHDR chunk, so a saved picture keeps the navigation caution.
// raw is returned unchanged if caution is empty or raw does not start with
// a PNG signature and IHDR chunk.
func withPNGCaution(raw []byte, caution string) []byte {
	const ihdrEnd = 8 + 4 + 4 + 13 + 4 // signature, IHDR length, type, data, CRC
	if caution == "" || len(raw) < ihdrEnd || string(raw[12:16]) != "IHDR" {
		return raw
	}
	data := append([]byte("Disclaimer\x00"), caution...)
	chunk := make([]byte, 0, 12+len(data))
	chunk = binary.BigEndian.AppendUint32(chunk, uint32(len(data)))
	chunk = append(chunk, "tEXt"...)
	chunk = append(chunk, data...)
	chunk = binary.BigEndian.AppendUint32(chunk, crc32.ChecksumIEEE(chunk[4:]))
	out := make([]byte, 0, len(raw)+len(chunk))
	out = append(out, raw[:ihdrEnd]...)
	out = append(out, chunk...)
	return append(out, raw[ihdrEnd:]...)
}

func asMaxBytes(err error, target **http.MaxBytesError) bool { return errors.As(err, target) }
