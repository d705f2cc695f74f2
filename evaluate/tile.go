package evaluate

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"image"
	"image/color"
	"math"

	"github.com/paulmach/orb"

	"ridgeflank/colour"
	"ridgeflank/fault"
	"ridgeflank/geo"
)

// TileSize is the width and height of map tiles in pixels.
const TileSize = 256

// Web-mercator tile maths (the XYZ tiling scheme of EPSG:3857: tile (0,0) at the north-west
// corner, latitude of a tile row from the inverse Mercator projection φ = atan(sinh(π(1 − 2y/2^z)))).

func tileLon(x float64, n float64) float64 { return x/n*360 - 180 }

func tileLat(y float64, n float64) float64 {
	return math.Atan(math.Sinh(math.Pi*(1-2*y/n))) * 180 / math.Pi
}

// TilePlan is a checked tile question: what the picture depends on (ETag) and how its colours
// are bound, known before anything is computed.
type TilePlan struct {
	Query   *Query
	Param   Parameter
	Binding colour.Binding
	ETag    string // quoted entity tag: changes whenever the picture could
	z, x, y int
	s       *Service
}

// Tile checks a tile question: parameter of dataset datasetID at z/x/y (XYZ scheme) with the
// options o (o.Parameters is ignored). A zoom beyond Limits.MaxTileZoom is
// fault.Over("max_tile_zoom"); a tile address that does not exist fault.NotFound.
func (s *Service) Tile(ctx context.Context, datasetID, parameter string, z, x, y int, o Options) (*TilePlan, error) {
	if z < 0 || z > s.limits.MaxTileZoom {
		return nil, fault.Over("max_tile_zoom", int64(s.limits.MaxTileZoom), int64(z), "z", "zoom %d is outside 0 to %d", z, s.limits.MaxTileZoom)
	}
	n := 1 << z
	if x < 0 || x >= n || y < 0 || y >= n {
		return nil, fault.New(fault.NotFound, "", "tile %d/%d/%d does not exist (x and y run from 0 to %d at zoom %d)", z, x, y, n-1, z)
	}
	d, err := s.Dataset(ctx, datasetID)
	if err != nil {
		return nil, err
	}
	p, ok := ParameterByID(parameter)
	// an uncertainty parameter of a dataset without an age-uncertainty grid is answered when
	// the question gives one age uncertainty (Resolve's rule)
	given := ok && p.NeedsAgeUncertainty() && o.AgeUncertaintyMa > 0 && (!p.NeedsDepth || d.HasDepth)
	if !ok || !d.answers(p) && !given {
		return nil, fault.New(fault.UnknownParameter, "parameter", "dataset %q has no parameter %q", d.Row.ID, parameter)
	}
	o.Parameters = []string{parameter}
	q, err := s.Resolve(ctx, d, o)
	if err != nil {
		return nil, err
	}
	b, ok := colour.BindingFor(parameter)
	if !ok {
		return nil, fmt.Errorf("no colour binding for %s", parameter)
	}
	h := sha256.New()
	fmt.Fprintf(h, "%s|%s|%d/%d/%d|%+v|", s.version, parameter, z, x, y, b)
	for _, g := range d.Refs {
		fmt.Fprintf(h, "%s=%s|", g.Role, g.SHA256)
	}
	if p.Predicted {
		fmt.Fprintf(h, "%s|%s|", s.ModelRef(q.Model).ParamsSHA256, q.Sediment.Name)
	}
	if p.NeedsAgeUncertainty() {
		// the single value given, else the grid read
		fmt.Fprintf(h, "σ=%g|%s|", q.AgeSigmaMa, d.AgeUncertaintyRef.SHA256)
	}
	tag := `"` + hex.EncodeToString(h.Sum(nil))[:32] + `"`
	return &TilePlan{Query: q, Param: p, Binding: b, ETag: tag, z: z, x: x, y: y, s: s}, nil
}

// WithRange redraws the tile with the value range [lo, hi] (units of the parameter) instead of
// the binding's default (colour.Binding.WithRange: finite ends, lo < hi; diverging ramps stay
// centred). A bad range is fault.InvalidParameter on the field "range". The ETag changes with
// the range.
func (t *TilePlan) WithRange(lo, hi float64) error {
	b, err := t.Binding.WithRange(lo, hi)
	if err != nil {
		return fault.New(fault.InvalidParameter, "range", "%v", err)
	}
	t.Binding = b
	h := sha256.New()
	fmt.Fprintf(h, "%s|range=%g,%g", t.ETag, lo, hi)
	t.ETag = `"` + hex.EncodeToString(h.Sum(nil))[:32] + `"`
	return nil
}

// Render computes the tile: the parameter colour-mapped through package colour (Paint). Cells
// of the grid without a value (no data, refused values) carry the no-data hatch of package
// colour (colour.NoDataAt, in whole-map pixels so it runs on across tiles); outside the grid the
// tile is transparent. The grids are read at the coarsest overview whose cell
// is no wider than a pixel (window), so a tile never reads many more cells than it has pixels,
// whatever the grid's size. It returns the number of grid cells evaluated too.
func (t *TilePlan) Render(ctx context.Context) (*image.NRGBA, int, error) {
	s, q, p, d := t.s, t.Query, t.Param, t.Query.Dataset
	z, x, y := t.z, t.x, t.y
	img := image.NewNRGBA(image.Rect(0, 0, TileSize, TileSize))
	n := float64(int(1) << z)
	west, east := tileLon(float64(x), n), tileLon(float64(x+1), n)
	north, south := tileLat(float64(y), n), tileLat(float64(y+1), n)

	// The coarsest level (overview) whose cell is no wider than a pixel.
	pixDeg := (east - west) / TileSize
	lvl := d.Files.Age.LevelFor(pixDeg, false)
	lg := d.Files.Age.Levels()[lvl].Grid
	pad := 2 * lg.DX
	bound := orb.Bound{Min: orb.Point{west - pad, math.Max(-90, south-pad)}, Max: orb.Point{east + pad, math.Min(90, north+pad)}}
	fl := newFlagger(q.Params)
	read := roleAge
	if p.NeedsDepth {
		read |= roleDepth | roleSed | roleCrust
	}
	if fl.need&inObs != 0 {
		read |= roleDepth
	}
	if fl.need&inSed != 0 {
		read |= roleSed
	}
	if q.usesAgeUncertaintyGrid() {
		read |= roleAgeUnc
	}
	v, err := s.window(ctx, d, bound, lvl, read)
	if err != nil {
		if isEmptyWindow(err) {
			return img, 0, nil // outside the dataset: a transparent tile
		}
		return nil, 0, err
	}
	win := v.Age
	var obsL, sedL, crustL, corrL *geo.Grid
	if fl.need&inObs != 0 && v.Depth != nil {
		obsL = sampleOnto(win, v.Depth)
		toDepthM(obsL, d.DepthSense)
	}
	if fl.need&inSed != 0 && v.Sediment != nil {
		sedL = sampleOnto(win, v.Sediment)
	}
	vals, isInput := inputGrid(p.ID, win, obsL, sedL)
	if !isInput {
		want := p.Output
		in := geo.Inputs{Age: win, Model: q.Model, Compaction: q.Sediment, Workers: 1}
		q.ageSigma(&in, v)
		if p.NeedsDepth {
			in.DepthSense = d.DepthSense
			in.Depth, in.Sediment, in.Crust = v.Depth, v.Sediment, v.Crust
			if in.Crust != nil {
				crustL = sampleOnto(win, in.Crust)
			}
		}
		res, err := geo.Evaluate(ctx, in, want)
		if err != nil {
			return nil, 0, err
		}
		vals, corrL = modelGrid(res, p.ID), res.CorrectedDepthM
		if screenCorrOnItsOwn(p.NeedsDepth && v.Depth != nil, want, gridData(obsL), gridData(sedL), in.Crust != nil) {
			ec, err := geo.Evaluate(ctx, in, geo.OutCorrectedDepth)
			if err != nil {
				return nil, 0, err
			}
			corrL = ec.CorrectedDepthM
		}
	}
	screenGrids(fl, []*geo.Grid{vals}, geo.Mask{}, win, obsL, sedL, crustL, corrL)
	// Nearest sample of each pixel centre: columns and rows are separable, so each is found
	// once (the same rule as geo.Grid.SampleNearest).
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
	paint := NewPaint(t.Binding)
	noData, _ := colour.ParseHex(colour.NoDataColour)
	for j := 0; j < TileSize; j++ {
		lat := tileLat(float64(y)+(float64(j)+0.5)/TileSize, n) // mercator rows
		r := math.Round((vals.North - lat) / vals.DY)
		if r < 0 || r >= float64(vals.NY) {
			continue
		}
		row := vals.Data[int(r)*vals.NX : (int(r)+1)*vals.NX]
		pix := img.Pix[j*img.Stride : (j+1)*img.Stride]
		paint.Row(pix, row, cols)
		hatchNoData(pix, cols, x*TileSize, y*TileSize+j, noData)
	}
	return img, len(vals.Data), nil
}

// hatchNoData draws the no-data hatch (colour.NoDataAt) in the colour nd on the pixels of one
// tile row that lie inside the grid (cols[i] ≥ 0) but were left transparent by Paint.Row; x0 is
// the whole-map pixel column of the row's first pixel and gy its whole-map pixel row.
func hatchNoData(pix []uint8, cols []int, x0, gy int, nd color.NRGBA) {
	for i, c := range cols {
		if c >= 0 && pix[4*i+3] == 0 && colour.NoDataAt(x0+i, gy) {
			px := pix[4*i : 4*i+4 : 4*i+4]
			px[0], px[1], px[2], px[3] = nd.R, nd.G, nd.B, 255
		}
	}
}

// Paint maps values to colours through a colour.Binding (colour.Binding.Position onto a
// 256-entry palette of its ramp); NaN is transparent.
type Paint struct {
	b        colour.Binding
	lo, span float64 // b.Linear()
	pal      []color.NRGBA
}

// NewPaint prepares the palette of b.
func NewPaint(b colour.Binding) *Paint {
	ramp, ok := colour.RampByID(b.Ramp)
	p := &Paint{b: b, pal: make([]color.NRGBA, 256)}
	p.lo, p.span = b.Linear()
	if ok {
		p.pal = ramp.Palette256()
	}
	return p
}

// Row colours pixel i of pix (4 bytes each, non-premultiplied RGBA) with vals[cols[i]], or with
// vals[i] when cols is nil; a negative column or a NaN value leaves the pixel as it is. The
// position is colour.Binding.Position's affine map, computed once in NewPaint.
func (p *Paint) Row(pix []uint8, vals []float32, cols []int) {
	n := len(cols)
	if cols == nil {
		n = len(vals)
	}
	for i := 0; i < n; i++ {
		c := i
		if cols != nil {
			if c = cols[i]; c < 0 {
				continue
			}
		}
		v := float64(vals[c])
		if v != v {
			continue
		}
		t := 0.5
		if p.span > 0 {
			t = (v - p.lo) / p.span
		}
		// Clamped with comparisons: math.Min and math.Max cost more than the rest of the pixel.
		if !(t > 0) {
			t = 0
		} else if t > 1 {
			t = 1
		}
		col := p.pal[int(math.Round(t*255))]
		px := pix[4*i : 4*i+4 : 4*i+4]
		px[0], px[1], px[2], px[3] = col.R, col.G, col.B, col.A
	}
}

// Image colour-maps a lon/lat grid row by row (no data transparent).
func (p *Paint) Image(g *geo.Grid) *image.NRGBA {
	img := image.NewNRGBA(image.Rect(0, 0, g.NX, g.NY))
	for row := 0; row < g.NY; row++ {
		p.Row(img.Pix[row*img.Stride:(row+1)*img.Stride], g.Data[row*g.NX:(row+1)*g.NX], nil)
	}
	return img
}
