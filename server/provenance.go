package server

import (
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"net/http"
	"strings"
	"sync"

	"ridgeflank/evaluate"
	"ridgeflank/thermal"
)

// Caution is attached to every response that carries predicted depths.
const Caution = evaluate.Caution

// Provenance, ModelRef and GridRef are the evaluate service's (one definition).
type (
	Provenance = evaluate.Provenance
	ModelRef   = evaluate.ModelRef
	GridRef    = evaluate.GridRef
)

func (s *server) provenance(m thermal.Model) Provenance { return s.ev.ProvenanceOf(m) }

// setProvenance puts the provenance in response headers (for formats with no place of their
// own for it: CSV, PNG, and as a duplicate for all others).
func setProvenance(w http.ResponseWriter, p Provenance) {
	w.Header().Set("Ridgeflank-Provenance", cachedProvenanceHeader(p))
	if p.Caution != "" {
		w.Header().Set("Ridgeflank-Caution", p.Caution)
	}
}

// provenanceHeader is the value of the Ridgeflank-Provenance header for p.
func provenanceHeader(p Provenance) string {
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
	if p.Label != "" {
		parts = append(parts, fmt.Sprintf("label=%q", p.Label))
	}
	return strings.Join(parts, ", ")
}

// provHeaders caches provenanceHeader by its inputs: quoting the header cost a position query
// more than its arithmetic, and answers share a handful of provenances (model × dataset ×
// sediment law). When it holds provHeadersMax values it is emptied and refilled.
var provHeaders = struct {
	sync.RWMutex
	m map[string]string
}{m: map[string]string{}}

const provHeadersMax = 1024

// cachedProvenanceHeader is provenanceHeader(p), from the cache when p's header fields were seen
// before.
func cachedProvenanceHeader(p Provenance) string {
	var k strings.Builder
	add := func(s string) { k.WriteString(s); k.WriteByte(0) }
	add(p.Software)
	if p.Model != nil {
		add("model")
		add(p.Model.ID)
		add(p.Model.ParamsSHA256)
	}
	add(p.Sediment)
	add(p.Dataset)
	for _, g := range p.Grids {
		add(g.Role)
		add(g.ID)
		add(g.SHA256)
	}
	add(p.Label)
	key := k.String()
	provHeaders.RLock()
	h, ok := provHeaders.m[key]
	provHeaders.RUnlock()
	if ok {
		return h
	}
	h = provenanceHeader(p)
	provHeaders.Lock()
	if len(provHeaders.m) >= provHeadersMax {
		provHeaders.m = map[string]string{}
	}
	provHeaders.m[key] = h
	provHeaders.Unlock()
	return h
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
