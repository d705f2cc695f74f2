package server

import (
	"fmt"
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ridgeflank/figure"
)

// figureAnswer answers GET /api/collections/{id}/figure: the map of one parameter over a box
// as a figure (PNG, SVG or PDF) drawn by package figure, the one path for the page's "Save
// map" and for other tools. Query: bbox=west,south,east,north (degrees, east < west crosses
// the antimeridian), parameter-name (one), model, sediment, f=png|svg|pdf (default png),
// width-px (default 1600) and dpi (default 150): the figure is width-px/dpi inches wide, a PNG
// exactly width-px pixels; colour-min and colour-max set the colour range (both or neither).
// Headers say where the map lies in the picture (Ridgeflank-Figure-Map, pixels x0,y0,x1,y1
// from the top left) and the lattice drawn (Ridgeflank-Figure-Lattice).
func (s *server) figureAnswer(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "datasetId")
	v := queryOf(r)
	bb := v.Get("bbox")
	if bb == "" {
		return problem(CodeInvalidParameter, "bbox= is required: west,south,east,north in degrees").withParam("bbox")
	}
	b, err := parseBBox(bb)
	if err != nil {
		return err
	}
	if b.Min[0] < -180 || b.Min[0] > 180 || b.Max[0] < -180 || b.Max[0] > 180 || b.Min[1] == b.Max[1] || b.Min[0] == b.Max[0] {
		return problem(CodeInvalidParameter, "bbox=%q: longitudes within −180..180, west ≠ east, south < north", bb).withParam("bbox")
	}
	req := figure.Request{Dataset: id, Options: queryOptions(r), West: b.Min[0], South: b.Min[1], East: b.Max[0], North: b.Max[1],
		Format: strings.ToLower(v.Get("f")), WidthPx: figure.DefaultPx, DPI: figure.DefaultDPI}
	if req.Format == "" {
		req.Format = figure.PNG
	}
	for _, f := range []struct {
		name string
		dst  *int
	}{{"width-px", &req.WidthPx}, {"dpi", &req.DPI}} {
		if s := v.Get(f.name); s != "" {
			n, err := strconv.Atoi(s)
			if err != nil {
				return problem(CodeInvalidParameter, "%s=%q is not a whole number", f.name, s).withParam(f.name)
			}
			*f.dst = n
		}
	}
	lo, hi := v.Get("colour-min"), v.Get("colour-max")
	if (lo == "") != (hi == "") {
		return problem(CodeInvalidParameter, "give colour-min and colour-max together").withParam("colour-min")
	}
	if lo != "" {
		a, err1 := strconv.ParseFloat(lo, 64)
		c, err2 := strconv.ParseFloat(hi, 64)
		if err1 != nil || err2 != nil || math.IsNaN(a) || math.IsNaN(c) || math.IsInf(a, 0) || math.IsInf(c, 0) {
			return problem(CodeInvalidParameter, "colour-min=%q, colour-max=%q must be numbers", lo, hi).withParam("colour-min")
		}
		req.ColourMin, req.ColourMax = &a, &c
	}
	fig, err := figure.Render(r.Context(), s.ev, req)
	if err != nil {
		return err
	}
	res := fig.Area
	s.metrics.cells.Add(float64(len(res.Lattice.Data)))
	prov := s.ev.Provenance(res.Query)
	setProvenance(w, prov)
	setAnswerHeaders(w, res.Flags, res.Region.Repairs)
	m, g := fig.Layout.Map, res.Lattice
	w.Header().Set("Ridgeflank-Figure-Map", fmt.Sprintf("%d,%d,%d,%d", m.Min.X, m.Min.Y, m.Max.X, m.Max.Y))
	w.Header().Set("Ridgeflank-Figure-Lattice", fmt.Sprintf("west=%g, north=%g, dx=%g, dy=%g, nx=%d, ny=%d", g.West, g.North, g.DX, g.DY, g.NX, g.NY))
	w.Header().Set("Content-Type", figure.ContentType(req.Format))
	p := res.Query.Params[0]
	name := id + "-" + p.ID
	if p.Predicted {
		name += "-" + res.Query.Model.Params().ID
	}
	w.Header().Set("Content-Disposition", `attachment; filename="`+name+"."+req.Format+`"`)
	raw := fig.Bytes
	if req.Format == figure.PNG {
		raw = withPNGCaution(raw, prov.Caution) // drawn in the picture and kept in its text chunk
	}
	_, err = w.Write(raw)
	return err
}
