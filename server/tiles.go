package server

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"image"
	"image/png"
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"
	"github.com/paulmach/orb"

	"ridgeflank/colour"
	"ridgeflank/geo"
)

// TileSize is the width and height of map tiles in pixels.
const TileSize = 256

// Web-mercator tile maths (the XYZ tiling scheme of EPSG:3857: tile (0,0)
// at the north-west corner, latitude of a tile row from the inverse
// Mercator projection φ = atan(sinh(π(1 − 2y/2^z)))).

func tileLon(x float64, n float64) float64 { return x/n*360 - 180 }

func tileLat(y float64, n float64) float64 {
	return math.Atan(math.Sinh(math.Pi*(1-2*y/n))) * 180 / math.Pi
}

// tile renders /tiles/{datasetId}/{parameter}/{z}/{x}/{y}.png: one
// parameter colour-mapped with the shared colour scale (package colour). At
// low zoom the grids are first coarsened (cached overviews, area-weighted
// block means by powers of two) so a tile never reads many more cells than
// it has pixels.
func (s *server) tile(w http.ResponseWriter, r *http.Request) error {
	z, err1 := strconv.Atoi(chi.URLParam(r, "z"))
	x, err2 := strconv.Atoi(chi.URLParam(r, "x"))
	y, err3 := strconv.Atoi(strings.TrimSuffix(chi.URLParam(r, "y"), ".png"))
	if err1 != nil || err2 != nil || err3 != nil {
		return problem(CodeInvalidParameter, "tile address z/x/y must be whole numbers")
	}
	if z < 0 || z > s.limits.MaxTileZoom {
		return limitProblem(http.StatusUnprocessableEntity, "max_tile_zoom", int64(s.limits.MaxTileZoom), "zoom %d is outside 0 to %d", z, s.limits.MaxTileZoom).withParam("z")
	}
	n := 1 << z
	if x < 0 || x >= n || y < 0 || y >= n {
		return problem(CodeNotFound, "tile %d/%d/%d does not exist (x and y run from 0 to %d at zoom %d)", z, x, y, n-1, z)
	}
	d, err := s.datasetFromPath(r)
	if err != nil {
		return err
	}
	pname := chi.URLParam(r, "parameter")
	p, ok := paramByID(pname)
	if !ok || p.NeedsDepth && !d.HasDepth || p.NeedsSed && !d.HasSediment {
		return problem(CodeUnknownParameter, "dataset %q has no parameter %q", d.Row.ID, pname).withParam("parameter")
	}
	q := r.URL.Query()
	q.Set("parameter-name", pname)
	r.URL.RawQuery = q.Encode()
	o, err := s.parseQueryOpts(r, d)
	if err != nil {
		return err
	}
	binding, _ := colour.BindingFor(pname)
	prov := s.provenanceFor(d, o)

	// ETag: everything the picture depends on.
	h := sha256.New()
	fmt.Fprintf(h, "%s|%s|%d/%d/%d|%+v|", s.deps.Version, pname, z, x, y, binding)
	for _, g := range d.Refs {
		fmt.Fprintf(h, "%s=%s|", g.Role, g.SHA256)
	}
	if p.Predicted {
		fmt.Fprintf(h, "%s|%s|", s.modelRef(o.Model).ParamsSHA256, o.Sediment.Name)
	}
	tag := `"` + hex.EncodeToString(h.Sum(nil))[:32] + `"`
	w.Header().Set("ETag", tag)
	w.Header().Set("Cache-Control", fmt.Sprintf("public, max-age=%d", s.deps.Config.TileMaxAgeSeconds))
	prov.setHeaders(w)
	setColourHeaders(w, binding)
	if inm := r.Header.Get("If-None-Match"); inm != "" && strings.Contains(inm, tag) {
		w.WriteHeader(http.StatusNotModified)
		return nil
	}
	img, err := s.renderTile(r, d, o, p, binding, z, x, y)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&buf, img); err != nil {
		return err
	}
	s.metrics.tiles.Inc()
	w.Header().Set("Content-Type", MediaPNG)
	_, err = w.Write(withPNGCaution(buf.Bytes(), prov.Caution))
	return err
}

// overview returns g coarsened by factor f (cached), or g itself for f = 1.
func (s *server) overview(g *geo.Grid, ref string, f int) (*geo.Grid, error) {
	if f <= 1 || g == nil {
		return g, nil
	}
	return s.grids.load(fmt.Sprintf("%s@%d", ref, f), func() (*geo.Grid, error) {
		return g.Resample(float64(f)*g.DX, float64(f)*g.DY)
	})
}

func (s *server) renderTile(r *http.Request, d *dataset, o queryOpts, p paramInfo, b colour.Binding, z, x, y int) (*image.NRGBA, error) {
	img := image.NewNRGBA(image.Rect(0, 0, TileSize, TileSize))
	n := float64(int(1) << z)
	west, east := tileLon(float64(x), n), tileLon(float64(x+1), n)
	north, south := tileLat(float64(y), n), tileLat(float64(y+1), n)

	// Overview factor: the largest power of two whose cell is no wider than
	// a pixel at the tile's centre latitude.
	pixDeg := (east - west) / TileSize
	f := 1
	for float64(2*f)*d.Age.DX <= pixDeg && 2*f <= d.Age.NX/2 && 2*f <= d.Age.NY/2 {
		f *= 2
	}
	ref := func(role string) string {
		for _, g := range d.Refs {
			if g.Role == role {
				return g.SHA256
			}
		}
		return role
	}
	age, err := s.overview(d.Age, ref(PSeafloorAge), f)
	if err != nil {
		return nil, err
	}
	pad := 2 * age.DX
	bound := orb.Bound{Min: orb.Point{west - pad, math.Max(-90, south-pad)}, Max: orb.Point{east + pad, math.Min(90, north+pad)}}
	win, err := age.Window(bound)
	if err != nil {
		if errors.Is(err, geo.ErrEmptyWindow) {
			return img, nil // outside the dataset: a transparent tile
		}
		return nil, err
	}
	var vals *geo.Grid
	switch p.ID {
	case PSeafloorAge:
		vals = win
	case PObservedDepth, PSedimentThickness:
		src, role := d.Depth, PObservedDepth
		if p.ID == PSedimentThickness {
			src, role = d.Sediment, PSedimentThickness
		}
		if sameLattice(d.Age, src) {
			if src, err = s.overview(src, ref(role), f); err != nil {
				return nil, err
			}
		}
		vals = sampleOnto(win, src)
		if p.ID == PObservedDepth {
			toDepthM(vals, d.DepthSense)
		}
	default:
		in := geo.Inputs{Age: win, Model: o.Model, Compaction: o.Sediment, Workers: 1}
		if p.NeedsDepth {
			in.DepthSense = d.DepthSense
			in.Depth, in.Sediment, in.Crust = d.Depth, d.Sediment, d.Crust
			for _, c := range []struct {
				g    **geo.Grid
				role string
			}{{&in.Depth, PObservedDepth}, {&in.Sediment, PSedimentThickness}, {&in.Crust, "crustal_thickness"}} {
				if *c.g != nil && sameLattice(d.Age, *c.g) {
					if *c.g, err = s.overview(*c.g, ref(c.role), f); err != nil {
						return nil, err
					}
				}
			}
		}
		res, err := geo.Evaluate(r.Context(), in, p.Output)
		if err != nil {
			return nil, err
		}
		vals = modelGrid(res, p.ID)
	}
	s.metrics.cells.Add(float64(len(vals.Data)))
	ramp, _ := colour.RampByID(b.Ramp)
	pal := ramp.Palette(256)
	// Nearest sample of each pixel centre: columns and rows are separable,
	// so each is found once (the same rule as geo.Grid.SampleNearest).
	cols := make([]int, TileSize)
	for i := range cols {
		lon := tileLon(float64(x)+(float64(i)+0.5)/TileSize, n)
		c := math.Round((lon - vals.West) / vals.DX)
		if c < 0 || c >= float64(vals.NX) { // try the other longitude conventions
			for _, k := range []float64{360, -360, 720} {
				if c2 := math.Round((lon + k - vals.West) / vals.DX); c2 >= 0 && c2 < float64(vals.NX) {
					c = c2
					break
				}
			}
		}
		cols[i] = int(c)
		if c < 0 || c >= float64(vals.NX) {
			cols[i] = -1
		}
	}
	// Diverging ramps centre on Binding.Centre; precompute the linear map.
	lo, span := b.Min, b.Max-b.Min
	if ramp.Kind == colour.Diverging {
		half := math.Max(b.Max-b.Centre, b.Centre-b.Min)
		lo, span = b.Centre-half, 2*half
	}
	for j := 0; j < TileSize; j++ {
		lat := tileLat(float64(y)+(float64(j)+0.5)/TileSize, n) // mercator rows
		r := math.Round((vals.North - lat) / vals.DY)
		if r < 0 || r >= float64(vals.NY) {
			continue
		}
		row := vals.Data[int(r)*vals.NX : (int(r)+1)*vals.NX]
		pix := img.Pix[j*img.Stride : (j+1)*img.Stride]
		for i, c := range cols {
			if c < 0 {
				continue
			}
			v := float64(row[c])
			if v != v {
				continue
			}
			k := int((v-lo)/span*255 + 0.5)
			k = max(0, min(255, k))
			p := pal[k]
			pix[4*i], pix[4*i+1], pix[4*i+2], pix[4*i+3] = p.R, p.G, p.B, p.A
		}
	}
	return img, nil
}
