package server

import (
	"bytes"
	"fmt"
	"image/png"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ridgeflank/evaluate"
)

// TileSize is the width and height of map tiles in pixels.
const TileSize = evaluate.TileSize

// parseColourRange reads the tile query's range=min,max.
func parseColourRange(s string) (lo, hi float64, ok bool) {
	a, b, found := strings.Cut(s, ",")
	if !found {
		return 0, 0, false
	}
	lo, err1 := strconv.ParseFloat(strings.TrimSpace(a), 64)
	hi, err2 := strconv.ParseFloat(strings.TrimSpace(b), 64)
	return lo, hi, err1 == nil && err2 == nil
}

// tile renders /tiles/{datasetId}/{parameter}/{z}/{x}/{y}.png: one parameter colour-mapped with
// the shared colour scale (package colour), computed by the evaluate service. The query's
// range=min,max (units of the parameter) draws another value range than the scale's default.
// A tile rendered before under the same ETag is answered from the tile cache (s.tiles).
func (s *server) tile(w http.ResponseWriter, r *http.Request) error {
	z, err1 := strconv.Atoi(chi.URLParam(r, "z"))
	x, err2 := strconv.Atoi(chi.URLParam(r, "x"))
	y, err3 := strconv.Atoi(strings.TrimSuffix(chi.URLParam(r, "y"), ".png"))
	if err1 != nil || err2 != nil || err3 != nil {
		return problem(CodeInvalidParameter, "tile address z/x/y must be whole numbers")
	}
	o := queryOptions(r)
	plan, err := s.ev.Tile(r.Context(), chi.URLParam(r, "datasetId"), chi.URLParam(r, "parameter"), z, x, y, o)
	if err != nil {
		return err
	}
	if rs := queryOf(r).Get("range"); rs != "" {
		lo, hi, ok := parseColourRange(rs)
		if !ok {
			return problem(CodeInvalidParameter, "range must be two numbers min,max (units of the parameter), got %q", rs)
		}
		if err := plan.WithRange(lo, hi); err != nil {
			return err
		}
	}
	w.Header().Set("ETag", plan.ETag)
	w.Header().Set("Cache-Control", fmt.Sprintf("public, max-age=%d", s.deps.Config.TileMaxAgeSeconds))
	prov := s.ev.Provenance(plan.Query)
	setProvenance(w, prov)
	setColourHeaders(w, plan.Binding)
	if inm := r.Header.Get("If-None-Match"); inm != "" && strings.Contains(inm, plan.ETag) {
		w.WriteHeader(http.StatusNotModified)
		return nil
	}
	if raw, ok := s.tiles.get(plan.ETag); ok { // rendered before: the same bytes
		w.Header().Set("Content-Type", MediaPNG)
		_, err = w.Write(withPNGCaution(raw, prov.Caution))
		return err
	}
	img, cells, err := plan.Render(r.Context())
	if err != nil {
		return err
	}
	s.metrics.cells.Add(float64(cells))
	var buf bytes.Buffer
	if err := (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&buf, img); err != nil {
		return err
	}
	s.metrics.tiles.Inc()
	s.tiles.put(plan.ETag, buf.Bytes())
	w.Header().Set("Content-Type", MediaPNG)
	_, err = w.Write(withPNGCaution(buf.Bytes(), prov.Caution))
	return err
}
