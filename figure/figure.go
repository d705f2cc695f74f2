package figure

import (
	"bytes"
	"context"
	"fmt"
	"image"
	"image/color"
	"math"
	"strings"

	"github.com/paulmach/orb"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"

	"ridgeflank/colour"
	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/geo"
)

// Formats of a figure.
const (
	PNG = "png"
	SVG = "svg"
	PDF = "pdf"
)

// ContentType is the media type of a figure format.
func ContentType(format string) string {
	switch format {
	case SVG:
		return "image/svg+xml"
	case PDF:
		return "application/pdf"
	}
	return "image/png"
}

// Limits of a figure's size. The figure is WidthPx/DPI inches wide in every format; a PNG has
// exactly WidthPx × HeightPx pixels.
const (
	MinWidthPx  = 320
	MaxWidthPx  = 8000
	MaxHeightPx = 8000
	MaxPixels   = 16_000_000 // width × height: the RGBA picture and its drawing context take 8 bytes a pixel, 128 MB at most
	MinDPI      = 50
	MaxDPI      = 600
	MinWidthIn  = 2.5 // narrower figures leave no room for the legend's text
	DefaultDPI  = 150
	DefaultPx   = 1600
)

// Request is a figure question: the area (a west, south, east, north box; east < west crosses
// the antimeridian), one parameter, the model and the figure's format and size.
type Request struct {
	Dataset              string
	Options              evaluate.Options // one parameter
	West, South          float64
	East, North          float64
	Format               string // PNG, SVG or PDF
	WidthPx, DPI         int
	ColourMin, ColourMax *float64 // colour range (nil: the parameter's default range)
}

// Layout is where a figure's parts lie, in pixels of the PNG (origin top left, y down; for
// SVG and PDF the same positions scaled by 72/DPI points).
type Layout struct {
	WidthPx, HeightPx, DPI int
	Map                    image.Rectangle // the map area
	West, South            float64         // the map area's box (East > West)
	East, North            float64
	fs                     vg.Length // font size, points
}

// NewLayout places a figure of widthPx pixels at dpi for the box west..east (east > west, up
// to 360° wide), south..north: the map keeps the box's shape on the plate carrée scaled by
// cos(centre latitude), between margins for the title above, the colour bar at the right, and
// the scale bar and the caution below. Sizes outside the limits are faults naming the field.
func NewLayout(west, south, east, north float64, widthPx, dpi int) (Layout, error) {
	if widthPx > MaxWidthPx {
		return Layout{}, fault.Over("max_figure_width_px", MaxWidthPx, int64(widthPx), "width-px",
			"width-px=%d: a figure is %d to %d pixels wide", widthPx, MinWidthPx, MaxWidthPx)
	}
	if widthPx < MinWidthPx {
		return Layout{}, fault.New(fault.InvalidParameter, "width-px", "width-px=%d: a figure is %d to %d pixels wide", widthPx, MinWidthPx, MaxWidthPx)
	}
	if dpi > MaxDPI {
		return Layout{}, fault.Over("max_figure_dpi", MaxDPI, int64(dpi), "dpi", "dpi=%d: the resolution is %d to %d dots per inch", dpi, MinDPI, MaxDPI)
	}
	if dpi < MinDPI {
		return Layout{}, fault.New(fault.InvalidParameter, "dpi", "dpi=%d: the resolution is %d to %d dots per inch", dpi, MinDPI, MaxDPI)
	}
	if in := float64(widthPx) / float64(dpi); in < MinWidthIn {
		return Layout{}, fault.New(fault.InvalidParameter, "width-px", "width-px=%d at dpi=%d is %.2f in wide; a figure is at least %.1f in wide (width-px ≥ %d at this dpi)",
			widthPx, dpi, in, MinWidthIn, int(math.Ceil(MinWidthIn*float64(dpi))))
	}
	if !(east > west) || east-west > 360 || !(north > south) || south < -90 || north > 90 {
		return Layout{}, fault.New(fault.InvalidParameter, "bbox", "the box %g,%g,%g,%g is empty or not on the globe", west, south, east, north)
	}
	px := func(pt vg.Length) int { return int(math.Round(float64(pt) / 72 * float64(dpi))) }
	W := vg.Length(widthPx) / vg.Length(dpi) * 72
	fs := max(6, min(12, W/70))
	left, right, top, bottom := 4.6*fs, 9.8*fs, 4.4*fs, 8.6*fs
	mapW := W - left - right
	aspect := (north - south) / ((east - west) * math.Cos((north+south)/2*math.Pi/180))
	mapH := mapW * vg.Length(aspect)
	if maxH := 1.5 * mapW; mapH > maxH { // tall boxes: narrower map, centred
		mapH = maxH
		w := mapH / vg.Length(aspect)
		left += (mapW - w) / 2
		mapW = w
	}
	l := Layout{WidthPx: widthPx, DPI: dpi, West: west, South: south, East: east, North: north, fs: fs}
	l.Map = image.Rect(px(left), px(top), px(left+mapW), px(top)+max(1, px(mapH)))
	l.HeightPx = l.Map.Max.Y + px(bottom)
	if l.HeightPx > MaxHeightPx {
		return Layout{}, fault.Over("max_figure_height_px", MaxHeightPx, int64(l.HeightPx), "width-px",
			"the figure would be %d pixels high; the limit is %d: ask for a smaller width-px or a wider box", l.HeightPx, MaxHeightPx)
	}
	if n := int64(l.WidthPx) * int64(l.HeightPx); n > MaxPixels {
		return Layout{}, fault.Over("max_figure_pixels", MaxPixels, n, "width-px", "the figure would have %d pixels; the limit is %d", n, MaxPixels)
	}
	return l, nil
}

// Resolution is the lattice spacing (degrees) an area answer for the layout needs: about one
// cell per pixel of the map area (Area coarsens the grid by whole factors, never finer than
// the grid).
func (l Layout) Resolution() (resX, resY float64) {
	return (l.East - l.West) / float64(l.Map.Dx()), (l.North - l.South) / float64(l.Map.Dy())
}

// Figure is a rendered figure.
type Figure struct {
	Bytes  []byte
	Layout Layout
	Area   *evaluate.AreaResult
}

// Render answers a figure request: the area answer of ev over the box at the layout's
// resolution, drawn with the parameter's colour scale (colour.BindingFor; the range of
// ColourMin, ColourMax when given), a graticule labelled in degrees with hemisphere letters, a
// scale bar, a colour bar with the units and the sign convention (evaluate.SignConvention),
// the title, dataset and model, and the caution when the parameter is a model prediction.
func Render(ctx context.Context, ev *evaluate.Service, req Request) (*Figure, error) {
	if req.Format != PNG && req.Format != SVG && req.Format != PDF {
		return nil, fault.New(fault.UnsupportedFormat, "f", "f=%q: a figure is png, svg or pdf", req.Format)
	}
	if len(req.Options.Parameters) != 1 {
		return nil, fault.New(fault.InvalidParameter, "parameter-name", "a figure draws one parameter: give exactly one parameter-name")
	}
	east := req.East
	if east <= req.West {
		east += 360 // crosses the antimeridian
	}
	l, err := NewLayout(req.West, req.South, east, req.North, req.WidthPx, req.DPI)
	if err != nil {
		return nil, err
	}
	box := orb.Ring{{l.West, l.South}, {l.East, l.South}, {l.East, l.North}, {l.West, l.North}, {l.West, l.South}}
	r, err := ev.PrepareRegion(orb.MultiPolygon{{box}}, "bbox")
	if err != nil {
		return nil, err
	}
	resX, resY := l.Resolution()
	res, err := ev.Area(ctx, req.Dataset, req.Options, r, resX, resY)
	if err != nil {
		return nil, err
	}
	p := res.Query.Params[0]
	b, ok := colour.BindingFor(p.ID)
	if !ok {
		return nil, fmt.Errorf("figure: no colour scale for %s", p.ID)
	}
	if req.ColourMin != nil && req.ColourMax != nil {
		if !(*req.ColourMax > *req.ColourMin) {
			return nil, fault.New(fault.InvalidParameter, "colour-range", "the colour range %g..%g is empty", *req.ColourMin, *req.ColourMax)
		}
		b.Min, b.Max = *req.ColourMin, *req.ColourMax
	}
	prov := ev.Provenance(res.Query)
	m := mapData{
		title:   p.Label,
		sub:     fmt.Sprintf("Dataset: %s · model: %s", res.Query.Dataset.Row.Name, res.Query.Model.Params().ID),
		caution: prov.Caution,
		label:   fmt.Sprintf("%s (%s)", p.Label, unitText(p.Unit, b.Units)),
		sign:    evaluate.SignConvention(p.ID),
		scale:   b,
		grid:    res.Grids[0],
	}
	if !p.Predicted {
		m.sub = fmt.Sprintf("Dataset: %s", res.Query.Dataset.Row.Name)
	}
	raw, err := draw1(l, m, req.Format)
	if err != nil {
		return nil, err
	}
	return &Figure{Bytes: raw, Layout: l, Area: res}, nil
}

// mapData is what a figure shows.
type mapData struct {
	title, sub, caution, label, sign string
	scale                            colour.Binding
	grid                             *geo.Grid
}

var (
	ink       = color.NRGBA{0x22, 0x22, 0x22, 0xff}
	noData    = color.NRGBA{0xd9, 0xd9, 0xd9, 0xff} // cells without a value: neutral grey
	gratColor = color.NRGBA{0x33, 0x33, 0x33, 0x80}
	warn      = color.NRGBA{0x9a, 0x1b, 0x1b, 0xff}
)

func draw1(l Layout, m mapData, format string) ([]byte, error) {
	wPt := vg.Length(l.WidthPx) / vg.Length(l.DPI) * 72
	hPt := vg.Length(l.HeightPx) / vg.Length(l.DPI) * 72
	var vc vg.CanvasWriterTo
	var img *vgimg.Canvas
	switch format {
	case PNG:
		img = vgimg.NewWith(vgimg.UseWH(wPt, hPt), vgimg.UseDPI(l.DPI))
		vc = vgimg.PngCanvas{Canvas: img}
	case SVG:
		vc = vgsvg.NewWith(vgsvg.UseWH(wPt, hPt), vgsvg.EmbedFonts(true)) // stands alone: no font needed on the reader's machine
	case PDF:
		pc := vgpdf.New(wPt, hPt)
		pc.EmbedFonts(true)
		vc = pc
	}
	c := draw.New(vc)
	pt := func(x, y int) vg.Point { // pixel (origin top left) to canvas point
		return vg.Point{X: vg.Length(x) * 72 / vg.Length(l.DPI), Y: hPt - vg.Length(y)*72/vg.Length(l.DPI)}
	}
	mapMin, mapMax := pt(l.Map.Min.X, l.Map.Max.Y), pt(l.Map.Max.X, l.Map.Min.Y)
	mapRect := vg.Rectangle{Min: mapMin, Max: mapMax}
	x := func(lon float64) vg.Length {
		return mapMin.X + (mapMax.X-mapMin.X)*vg.Length((lon-l.West)/(l.East-l.West))
	}
	y := func(lat float64) vg.Length {
		return mapMin.Y + (mapMax.Y-mapMin.Y)*vg.Length((lat-l.South)/(l.North-l.South))
	}
	c.SetColor(noData)
	c.Fill(mapRect.Path())
	paint := evaluate.NewPaint(m.scale)
	if img != nil {
		// The map's pixels straight from the lattice (nearest cell), exactly the colours of
		// the tiles' painter.
		if rgba, ok := img.Image().(*image.RGBA); ok {
			blit(rgba.Pix, rgba.Stride, l.Map.Min, l, m.grid, paint)
		}
	} else {
		// The same pixels as an image of the map area's size, so viewers keeping an image's
		// aspect ratio (SVG's default) fill the map area exactly.
		pic := image.NewNRGBA(image.Rect(0, 0, l.Map.Dx(), l.Map.Dy()))
		for i := 0; i < len(pic.Pix); i += 4 {
			pic.Pix[i], pic.Pix[i+1], pic.Pix[i+2], pic.Pix[i+3] = noData.R, noData.G, noData.B, 0xff
		}
		blit(pic.Pix, pic.Stride, image.Point{}, l, m.grid, paint)
		c.DrawImage(mapRect, pic)
	}
	fs := l.fs
	st := func(size vg.Length, col color.Color, xa text.XAlignment, ya text.YAlignment) draw.TextStyle {
		return draw.TextStyle{Color: col, Font: font.From(font.Font{Typeface: "Liberation", Variant: "Sans"}, size),
			Handler: plot.DefaultTextHandler, XAlign: xa, YAlign: ya}
	}
	// Graticule.
	line := draw.LineStyle{Color: gratColor, Width: 0.06 * fs, Dashes: []vg.Length{0.3 * fs, 0.25 * fs}}
	halo := draw.LineStyle{Color: color.NRGBA{0xff, 0xff, 0xff, 0x70}, Width: 0.07 * fs, Dashes: []vg.Length{0.3 * fs, 0.25 * fs}, DashOffs: 0.3 * fs}
	stroke := func(x0, y0, x1, y1 vg.Length) { // dark and light dashes: visible on dark and pale colours
		c.StrokeLine2(halo, x0, y0, x1, y1)
		c.StrokeLine2(line, x0, y0, x1, y1)
	}
	lab := st(0.85*fs, ink, draw.XCenter, draw.YTop)
	step := graticuleStep(math.Max(l.East-l.West, l.North-l.South) / 5)
	for lon := math.Ceil(l.West/step-1e-9) * step; lon <= l.East+1e-9; lon += step {
		stroke(x(lon), mapMin.Y, x(lon), mapMax.Y)
		c.FillText(lab, vg.Point{X: x(lon), Y: mapMin.Y - 0.35*fs}, lonLabel(lon, step))
	}
	labL := st(0.85*fs, ink, draw.XRight, draw.YCenter)
	for lat := math.Ceil(l.South/step-1e-9) * step; lat <= l.North+1e-9; lat += step {
		stroke(mapMin.X, y(lat), mapMax.X, y(lat))
		if y(lat)-mapMin.Y < 0.7*fs && lat > l.South+1e-9 || math.Abs(lat-l.South) < 1e-9 {
			continue // the corner belongs to the longitude label
		}
		c.FillText(labL, vg.Point{X: mapMin.X - 0.35*fs, Y: y(lat)}, latLabel(lat, step))
	}
	frame := draw.LineStyle{Color: ink, Width: 0.08 * fs}
	c.StrokeLines(frame, []vg.Point{mapMin, {X: mapMax.X, Y: mapMin.Y}, mapMax, {X: mapMin.X, Y: mapMax.Y}, mapMin})

	// Title and subtitle.
	c.FillText(st(1.35*fs, ink, draw.XLeft, draw.YTop), vg.Point{X: mapMin.X, Y: hPt - 0.8*fs}, m.title)
	c.FillText(st(0.95*fs, ink, draw.XLeft, draw.YTop), vg.Point{X: mapMin.X, Y: hPt - 2.55*fs}, m.sub)

	// Colour bar.
	drawColourBar(&c, m, vg.Rectangle{Min: vg.Point{X: mapMax.X + 1.6*fs, Y: mapMin.Y}, Max: vg.Point{X: mapMax.X + 2.8*fs, Y: mapMax.Y}}, fs, st)

	// Scale bar, at the map's centre latitude.
	drawScaleBar(&c, l, vg.Point{X: mapMin.X, Y: mapMin.Y - 2.6*fs}, (mapMax.X-mapMin.X)*0.3, fs, st)

	// Caution and the no-data key.
	foot := st(0.9*fs, warn, draw.XLeft, draw.YTop)
	yy := mapMin.Y - 4.9*fs
	if m.caution != "" {
		for _, ln := range wrap(foot, "Caution: "+m.caution, wPt-mapMin.X-fs) {
			c.FillText(foot, vg.Point{X: mapMin.X, Y: yy}, ln)
			yy -= 1.15 * fs
		}
	}
	key := vg.Rectangle{Min: vg.Point{X: mapMax.X - 0.8*fs, Y: mapMin.Y - 3.1*fs}, Max: vg.Point{X: mapMax.X, Y: mapMin.Y - 2.3*fs}}
	c.SetColor(noData)
	c.Fill(key.Path())
	c.StrokeLines(draw.LineStyle{Color: ink, Width: 0.05 * fs}, []vg.Point{key.Min, {X: key.Max.X, Y: key.Min.Y}, key.Max, {X: key.Min.X, Y: key.Max.Y}, key.Min})
	c.FillText(st(0.8*fs, ink, draw.XRight, draw.YCenter), vg.Point{X: key.Min.X - 0.4*fs, Y: (key.Min.Y + key.Max.Y) / 2}, "no value")

	var buf bytes.Buffer
	if _, err := vc.WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// blit colours the map area, whose top left pixel is at origin in pix (4 bytes a pixel, stride
// bytes a row, opaque), from g: each pixel with the cell its centre falls in; pixels of cells
// without a value keep their colour.
func blit(pix []uint8, stride int, origin image.Point, l Layout, g *geo.Grid, paint *evaluate.Paint) {
	w, h := l.Map.Dx(), l.Map.Dy()
	w0 := g.West + 360*math.Round((l.West-g.West)/360) // the lattice in the box's longitude frame
	cols := make([]int, w)
	for i := range cols {
		lon := l.West + (float64(i)+0.5)/float64(w)*(l.East-l.West)
		cols[i] = cellIndex(lon, w0, g.DX, g.NX)
	}
	for j := 0; j < h; j++ {
		lat := l.North - (float64(j)+0.5)/float64(h)*(l.North-l.South)
		r := cellIndex(-lat, -g.North, g.DY, g.NY)
		if r < 0 {
			continue
		}
		off := (origin.Y+j)*stride + 4*origin.X
		// Opaque colours: premultiplied and straight RGBA agree.
		paint.Row(pix[off:off+4*w], g.Data[r*g.NX:(r+1)*g.NX], cols)
	}
}

// cellIndex is the index of the cell (centres first + i·d) holding v, or −1 outside n cells.
func cellIndex(v, first, d float64, n int) int {
	i := int(math.Floor((v-first)/d + 0.5))
	if i < 0 || i >= n {
		return -1
	}
	return i
}

func drawColourBar(c *draw.Canvas, m mapData, bar vg.Rectangle, fs vg.Length, st func(vg.Length, color.Color, text.XAlignment, text.YAlignment) draw.TextStyle) {
	ramp, ok := colour.RampByID(m.scale.Ramp)
	if !ok {
		return
	}
	lo, span := m.scale.Linear()
	// An image of the bar's own shape (about 4 pixels a point), so viewers keeping an image's
	// aspect ratio fill the bar exactly.
	gw, gh := max(1, int(math.Round(float64(bar.Max.X-bar.Min.X)*4))), max(2, int(math.Round(float64(bar.Max.Y-bar.Min.Y)*4)))
	grad := image.NewNRGBA(image.Rect(0, 0, gw, gh))
	for j := 0; j < gh; j++ {
		col := ramp.At(1 - (float64(j)+0.5)/float64(gh)) // top row: the high end
		for k := 0; k < gw; k++ {
			grad.SetNRGBA(k, j, col)
		}
	}
	c.DrawImage(bar, grad)
	// Values beyond the colour range take the end colours: a triangle at that end says so.
	lo0, hi0 := dataRange(m.grid)
	tri := func(base, tip vg.Length, t float64) {
		var p vg.Path
		p.Move(vg.Point{X: bar.Min.X, Y: base})
		p.Line(vg.Point{X: bar.Max.X, Y: base})
		p.Line(vg.Point{X: (bar.Min.X + bar.Max.X) / 2, Y: tip})
		p.Close()
		c.SetColor(ramp.At(t))
		c.Fill(p)
		c.SetLineStyle(draw.LineStyle{Color: ink, Width: 0.05 * fs})
		c.Stroke(p)
	}
	if hi0 > lo+span {
		tri(bar.Max.Y, bar.Max.Y+0.9*fs, 1)
	}
	if lo0 < lo {
		tri(bar.Min.Y, bar.Min.Y-0.9*fs, 0)
	}
	c.StrokeLines(draw.LineStyle{Color: ink, Width: 0.05 * fs}, []vg.Point{bar.Min, {X: bar.Max.X, Y: bar.Min.Y}, bar.Max, {X: bar.Min.X, Y: bar.Max.Y}, bar.Min})
	tick := niceStep(span / 5)
	lab := st(0.8*fs, ink, draw.XLeft, draw.YCenter)
	for v := math.Ceil(lo/tick-1e-9) * tick; v <= lo+span+1e-9; v += tick {
		yv := bar.Min.Y + (bar.Max.Y-bar.Min.Y)*vg.Length((v-lo)/span)
		c.StrokeLine2(draw.LineStyle{Color: ink, Width: 0.05 * fs}, bar.Max.X, yv, bar.Max.X+0.3*fs, yv)
		c.FillText(lab, vg.Point{X: bar.Max.X + 0.45*fs, Y: yv}, trimNum(v))
	}
	name := st(0.85*fs, ink, draw.XCenter, draw.YBottom)
	name.Rotation = math.Pi / 2
	mid := (bar.Min.Y + bar.Max.Y) / 2
	c.FillText(name, vg.Point{X: bar.Max.X + 4.9*fs, Y: mid}, m.label)
	if m.sign != "" {
		sg := st(0.75*fs, ink, draw.XCenter, draw.YBottom)
		sg.Rotation = math.Pi / 2
		c.FillText(sg, vg.Point{X: bar.Max.X + 6.1*fs, Y: mid}, m.sign)
	}
}

// dataRange is the least and greatest value of g (NaN, NaN when it has none).
func dataRange(g *geo.Grid) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, v := range g.Data {
		f := float64(v)
		if f < lo {
			lo = f
		}
		if f > hi {
			hi = f
		}
	}
	if lo > hi {
		return math.NaN(), math.NaN()
	}
	return lo, hi
}

// wgs84A and wgs84F are the WGS84 ellipsoid's semi-major axis (m) and flattening (NIMA TR8350.2,
// 3rd ed., 2000, table 3.1).
const (
	wgs84A = 6378137.0
	wgs84F = 1 / 298.257223563
)

// ParallelKm is the length in km of one degree of longitude along the parallel at lat on the
// WGS84 ellipsoid: π/180 · N cos φ, with N = a/√(1 − e² sin² φ) the prime-vertical radius of
// curvature (Snyder 1987, "Map Projections — A Working Manual", USGS Prof. Paper 1395, eq. 4-20,
// from memory).
func ParallelKm(lat float64) float64 {
	e2 := wgs84F * (2 - wgs84F)
	phi := lat * math.Pi / 180
	n := wgs84A / math.Sqrt(1-e2*math.Sin(phi)*math.Sin(phi))
	return math.Pi / 180 * n * math.Cos(phi) / 1000
}

func drawScaleBar(c *draw.Canvas, l Layout, at vg.Point, maxLen vg.Length, fs vg.Length, st func(vg.Length, color.Color, text.XAlignment, text.YAlignment) draw.TextStyle) {
	lat := (l.North + l.South) / 2
	kmPerPt := ParallelKm(lat) * (l.East - l.West) / float64(l.mapWidthPt())
	km := niceStep(float64(maxLen) * kmPerPt)
	length := vg.Length(km / kmPerPt)
	h := 0.4 * fs
	for i := 0; i < 4; i++ { // four alternating segments
		seg := vg.Rectangle{Min: vg.Point{X: at.X + length*vg.Length(i)/4, Y: at.Y}, Max: vg.Point{X: at.X + length*vg.Length(i+1)/4, Y: at.Y + h}}
		if i%2 == 0 {
			c.SetColor(ink)
		} else {
			c.SetColor(color.White)
		}
		c.Fill(seg.Path())
	}
	c.StrokeLines(draw.LineStyle{Color: ink, Width: 0.05 * fs}, []vg.Point{at, {X: at.X + length, Y: at.Y}, {X: at.X + length, Y: at.Y + h}, {X: at.X, Y: at.Y + h}, at})
	lab := st(0.8*fs, ink, draw.XCenter, draw.YTop)
	c.FillText(lab, vg.Point{X: at.X, Y: at.Y - 0.2*fs}, "0")
	c.FillText(lab, vg.Point{X: at.X + length, Y: at.Y - 0.2*fs}, trimNum(km)+" km")
	note := st(0.75*fs, ink, draw.XLeft, draw.YCenter)
	c.FillText(note, vg.Point{X: at.X + length + 1.2*fs, Y: at.Y + h/2}, fmt.Sprintf("scale at %s (WGS84)", latLabel(lat, 0.1)))
}

func (l Layout) mapWidthPt() vg.Length { return vg.Length(l.Map.Dx()) * 72 / vg.Length(l.DPI) }

// graticuleStep is the graticule interval (degrees) nearest below v among intervals that
// divide the circle into whole degrees or simple fractions of one.
func graticuleStep(v float64) float64 {
	for _, s := range []float64{90, 60, 45, 30, 20, 15, 10, 5, 2, 1, 0.5, 0.25, 0.2, 0.1, 0.05, 0.02, 0.01} {
		if s <= v {
			return s
		}
	}
	return 0.01
}

// niceStep is the step of 1, 2, 2.5 or 5 × 10ⁿ nearest below v (v > 0).
func niceStep(v float64) float64 {
	if !(v > 0) {
		return 1
	}
	p := math.Pow(10, math.Floor(math.Log10(v)))
	for _, m := range []float64{5, 2.5, 2, 1} {
		if m*p <= v {
			return m * p
		}
	}
	return p
}

// trimNum writes v with at most three decimals, no trailing zeros, and a true minus sign.
func trimNum(v float64) string {
	if math.Abs(v) < 1e-9 {
		return "0"
	}
	return strings.Replace(strings.TrimRight(strings.TrimRight(fmt.Sprintf("%.3f", v), "0"), "."), "-", "−", 1)
}

// unitText is the unit as a figure writes it: the colour scale's typeset form ("mW/m²") when
// it names the same unit, else the UCUM symbol.
func unitText(ucum, scale string) string {
	if scale != "" && strings.ReplaceAll(strings.ReplaceAll(scale, "²", "2"), "³", "3") == ucum {
		return scale
	}
	return ucum
}

// lonLabel writes a longitude (any multiple of 360 away) as degrees with E or W: "145°W",
// "180°", "0°".
func lonLabel(lon, step float64) string {
	lon = math.Mod(lon+540, 360) - 180 // −180..180
	if math.Abs(lon) < 1e-9 || math.Abs(math.Abs(lon)-180) < 1e-9 {
		return trimNum(math.Abs(lon)) + "°"
	}
	h := "E"
	if lon < 0 {
		h = "W"
	}
	return degrees(math.Abs(lon), step) + "°" + h
}

// latLabel writes a latitude as degrees with N or S: "30°S", "0°".
func latLabel(lat, step float64) string {
	if math.Abs(lat) < 1e-9 {
		return "0°"
	}
	h := "N"
	if lat < 0 {
		h = "S"
	}
	return degrees(math.Abs(lat), step) + "°" + h
}

func degrees(v, step float64) string {
	d := 0 // decimals enough to write multiples of step exactly
	for s := step; math.Abs(s-math.Round(s)) > 1e-6 && d < 3; s *= 10 {
		d++
	}
	return fmt.Sprintf("%.*f", d, v)
}

// wrap splits s into lines no wider than w in style st.
func wrap(st draw.TextStyle, s string, w vg.Length) []string {
	var out []string
	cur := ""
	for _, word := range strings.Fields(s) {
		try := strings.TrimSpace(cur + " " + word)
		if cur != "" && st.Width(try) > w {
			out = append(out, cur)
			cur = word
			continue
		}
		cur = try
	}
	if cur != "" {
		out = append(out, cur)
	}
	return out
}
