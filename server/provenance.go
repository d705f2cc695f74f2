package server

import (
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"hash/maphash"
	"net/http"
	"slices"
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

// provCache holds, per distinct provenance, its header value and its JSON: quoting the header
// and encoding the model's parameters cost a position query more than its arithmetic, and
// answers share a handful of provenances (model × dataset × sediment law). Entries are found by
// a hash of every field and confirmed field by field; when it holds provCacheMax entries it is
// emptied and refilled.
var provCache = struct {
	sync.RWMutex
	m map[uint64]*provEntry
}{m: map[uint64]*provEntry{}}

const provCacheMax = 1024

var provSeed = maphash.MakeSeed()

type provEntry struct {
	p      Provenance
	model  evaluate.ModelRef // *p.Model, copied (p.Model is cleared)
	header string
	json   []byte
}

// provenanceEntry returns the cached header and JSON of p, making them the first time.
func provenanceEntry(p *Provenance) (*provEntry, error) {
	var h maphash.Hash
	h.SetSeed(provSeed)
	str := func(s string) { h.WriteString(s); h.WriteByte(0) }
	str(p.Software)
	if p.Model != nil {
		str("model")
		str(p.Model.ID)
		str(p.Model.ParamsSHA256)
	}
	str(p.Sediment)
	str(p.Dataset)
	for _, g := range p.Grids {
		str(g.Role)
		str(g.ID)
		str(g.SHA256)
		str(g.Label)
	}
	str(p.Label)
	str(p.Caution)
	str(p.Note)
	key := h.Sum64()
	provCache.RLock()
	e := provCache.m[key]
	provCache.RUnlock()
	if e != nil && e.matches(p) {
		return e, nil
	}
	e = &provEntry{p: *p, header: provenanceHeader(*p)}
	e.p.Grids = slices.Clone(p.Grids)
	if p.Model != nil {
		e.model = *p.Model
		e.p.Model = nil
	}
	var err error
	if e.json, err = appendEncoded(nil, p); err != nil {
		return nil, err
	}
	provCache.Lock()
	if len(provCache.m) >= provCacheMax {
		provCache.m = map[uint64]*provEntry{}
	}
	provCache.m[key] = e
	provCache.Unlock()
	return e, nil
}

// matches reports whether e was made from a provenance equal to p.
func (e *provEntry) matches(p *Provenance) bool {
	q := &e.p
	if q.Software != p.Software || q.Sediment != p.Sediment || q.Dataset != p.Dataset || q.Label != p.Label ||
		q.Caution != p.Caution || q.Note != p.Note || !slices.Equal(q.Grids, p.Grids) {
		return false
	}
	if p.Model == nil {
		return e.model.ID == "" && e.model.ParamsSHA256 == ""
	}
	return e.model.ID == p.Model.ID && e.model.ParamsSHA256 == p.Model.ParamsSHA256 && e.model.Params == p.Model.Params
}

// cachedProvenanceHeader is provenanceHeader(p), from the cache when p was seen before.
func cachedProvenanceHeader(p Provenance) string {
	e, err := provenanceEntry(&p)
	if err != nil {
		return provenanceHeader(p)
	}
	return e.header
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
