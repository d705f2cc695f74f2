package server

import (
	"bytes"
	"context"
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
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

// ---- collections ----

func (s *server) collectionJSON(r *http.Request, d *dataset) map[string]any {
	b := s.baseURL(r) + "/api/collections/" + d.Row.ID
	bd := d.Bounds
	w, e := geo.LonTo180(bd.Min[0]), geo.LonTo180(bd.Max[0])
	if bd.Max[0]-bd.Min[0] >= 360 {
		w, e = -180, 180
	}
	crsDetails := []map[string]string{{"crs": "CRS84", "wkt": `GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563]],PRIMEM["Greenwich",0],UNIT["degree",0.0174532925199433],AXIS["Longitude",EAST],AXIS["Latitude",NORTH]]`}}
	dq := func(name, href string, formats []string) map[string]any {
		return map[string]any{"link": map[string]any{
			"href": b + "/" + href, "rel": "data", "templated": strings.Contains(href, "{"), "title": name + " query",
			"variables": map[string]any{"title": name + " query", "query_type": name, "output_formats": formats,
				"default_output_format": "CoverageJSON", "crs_details": crsDetails},
		}}
	}
	pointFormats := []string{"CoverageJSON", "GeoJSON", "CSV"}
	areaFormats := []string{"CoverageJSON", "CSV", "COG", "NetCDF", "PNG"}
	pn := map[string]any{}
	for _, p := range d.available() {
		cp := covParameters([]paramInfo{p})[p.ID]
		pn[p.ID] = cp
	}
	return map[string]any{
		"id": d.Row.ID, "title": d.Row.Name, "description": d.Row.Description,
		"links": []link{
			{Href: b, Rel: "self", Type: "application/json"},
			{Href: s.baseURL(r) + "/api/datasets/" + d.Row.ID, Rel: "related", Type: "application/json", Title: "dataset record"},
		},
		"extent": map[string]any{"spatial": map[string]any{
			"bbox": [][4]jsonFloat{{jsonFloat(w), jsonFloat(bd.Min[1]), jsonFloat(e), jsonFloat(bd.Max[1])}},
			"crs":  "http://www.opengis.net/def/crs/OGC/1.3/CRS84",
		}},
		"data_queries": map[string]any{
			"position":   dq("position", "position?coords={coords}", pointFormats),
			"area":       dq("area", "area?coords={coords}", areaFormats),
			"trajectory": dq("trajectory", "trajectory?coords={coords}", pointFormats),
			"locations":  dq("locations", "locations", []string{"CoverageJSON", "CSV", "COG", "NetCDF", "PNG"}),
		},
		"crs":             []string{"http://www.opengis.net/def/crs/OGC/1.3/CRS84"},
		"output_formats":  []string{"CoverageJSON", "GeoJSON", "CSV", "COG", "NetCDF", "PNG"},
		"parameter_names": pn,
		"ridgeflank:models": map[string]any{
			"default": DefaultModel, "builtin": thermal.BuiltinIDs(), "sediment": thermal.CompactionNames(),
		},
		"ridgeflank:grids": d.Refs,
	}
}

func (s *server) collections(w http.ResponseWriter, r *http.Request) error {
	rows, err := s.deps.Store.ListDatasets(r.Context(), store.Page{})
	if err != nil {
		return err
	}
	cols := []any{}
	for _, row := range rows {
		d, _, err := s.loadDatasetMeta(r.Context(), row.ID)
		if err != nil {
			var p *Problem
			if errors.As(err, &p) && p.Status < 500 {
				continue // a dataset without an age grid is not a collection
			}
			return err
		}
		cols = append(cols, s.collectionJSON(r, d))
	}
	b := s.baseURL(r)
	return writeJSON(w, http.StatusOK, "", map[string]any{
		"links":       []link{{Href: b + "/api/collections", Rel: "self", Type: "application/json"}},
		"collections": cols,
	})
}

func (s *server) collection(w http.ResponseWriter, r *http.Request) error {
	d, _, err := s.loadDatasetMeta(r.Context(), chi.URLParam(r, "datasetId"))
	if err != nil {
		return err
	}
	return writeJSON(w, http.StatusOK, "", s.collectionJSON(r, d))
}

// ---- area ----

func parseResolution(r *http.Request, name string) (float64, error) {
	v := r.URL.Query().Get(name)
	if v == "" {
		return 0, nil
	}
	f, err := strconv.ParseFloat(v, 64)
	if err != nil || !(f > 0) || math.IsInf(f, 0) || f > 90 {
		return 0, problem(CodeInvalidParameter, "%s=%q must be a positive number of degrees (at most 90)", name, v).withParam(name)
	}
	return f, nil
}

func (s *server) area(w http.ResponseWriter, r *http.Request) error {
	d, g, err := s.datasetAndCoords(r)
	if err != nil {
		return err
	}
	mp, ok := asMultiPolygon(g)
	if !ok {
		return problem(CodeInvalidCoords, "area queries take POLYGON or MULTIPOLYGON, not %s", g.GeoJSONType()).withParam("coords")
	}
	if err := s.checkVertices(mp); err != nil {
		return err
	}
	return s.answerArea(w, r, d, mp, d.Row.ID+"-area", nil)
}

// answerArea computes the parameters over a polygon and writes them in the
// negotiated format. stats, when non-nil, asks for area-weighted statistics.
func (s *server) answerArea(w http.ResponseWriter, r *http.Request, d *dataset, mp orb.MultiPolygon, name string, withStats *bool) error {
	bound := compactBound(mp)
	norm, err := geo.NormalizeRegion(mp, s.limits.MaxVertices)
	if err != nil {
		return problem(CodeInvalidCoords, "%v", err).withParam("coords").withCause(err)
	}
	resX, err := parseResolution(r, "resolution-x")
	if err != nil {
		return err
	}
	resY, err := parseResolution(r, "resolution-y")
	if err != nil {
		return err
	}
	format, covType, err := negotiate(r, fmtCovJSON, fmtCSV, fmtCOG, fmtNetCDF, fmtPNG)
	if err != nil {
		return err
	}
	o, err := s.parseQueryOpts(r, d)
	if err != nil {
		return err
	}
	if (format == fmtCOG || format == fmtNetCDF || format == fmtPNG) && len(o.Params) != 1 {
		return problem(CodeInvalidParameter, "%s answers one parameter: give exactly one parameter-name", formatNames[format]).withParam("parameter-name")
	}
	if (format == fmtCOG || format == fmtNetCDF) && s.deps.Jobs != nil && withStats == nil {
		if cells := estimateCells(d.Age, bound, resX, resY); cells > int64(s.limits.SyncExportCells) && cells <= int64(s.limits.MaxAreaCells) {
			return s.queueExport(w, r, d, format)
		}
	}
	res, err := s.computeArea(r.Context(), d, o, norm, bound, resX, resY)
	if err != nil {
		return err
	}
	prov := s.provenanceFor(d, o)
	prov.setHeaders(w)
	switch format {
	case fmtCSV:
		return writeGridCSV(w, name+".csv", prov.Caution, res.lattice, o.Params, res.grids)
	case fmtCOG, fmtNetCDF:
		p := o.Params[0]
		meta := gdal.Meta{Name: p.ID, LongName: p.Label, Units: p.Unit, Title: d.Row.Name + ": " + p.Label,
			Source: "ridgeflank " + s.deps.Version, Metadata: prov.metadata()}
		var raw []byte
		if format == fmtCOG {
			raw, err = gdal.EncodeCOG(res.grids[0], meta)
			w.Header().Set("Content-Type", MediaCOG)
			w.Header().Set("Content-Disposition", `attachment; filename="`+name+"-"+p.ID+`.tif"`)
		} else {
			raw, err = gdal.EncodeNetCDF(res.grids[0], meta)
			w.Header().Set("Content-Type", MediaNetCDF)
			w.Header().Set("Content-Disposition", `attachment; filename="`+name+"-"+p.ID+`.nc"`)
		}
		if err != nil {
			w.Header().Del("Content-Disposition")
			return err
		}
		_, err = w.Write(raw)
		return err
	case fmtPNG:
		b, ok := colour.BindingFor(o.Params[0].ID)
		if !ok {
			return fmt.Errorf("no colour binding for %s", o.Params[0].ID)
		}
		img := renderGrid(res.grids[0], b)
		setColourHeaders(w, b)
		var buf bytes.Buffer
		if err := png.Encode(&buf, img); err != nil {
			return err
		}
		w.Header().Set("Content-Type", MediaPNG)
		_, err = w.Write(withPNGCaution(buf.Bytes(), prov.Caution))
		return err
	}
	c := gridCoverage(res.lattice, o.Params, res.grids)
	c.Provenance = &prov
	c.Caution = prov.Caution
	if withStats != nil && *withStats {
		c.Stats = map[string]unitStats{}
		for i, p := range o.Params {
			st, err := regionStats(res.grids[i], res.mask, p)
			if err != nil {
				return err
			}
			if st.Count == 0 {
				return problem(CodeNoData, "no cell of the region has a %s value in dataset %q", p.ID, d.Row.ID)
			}
			c.Stats[p.ID] = newUnitStats(st, p)
		}
	}
	return writeJSON(w, http.StatusOK, covType, c)
}

// regionStats are the area-weighted statistics of one parameter over a
// region, with a histogram: 50 m bins for parameters in metres (edges at
// whole multiples of 50 m), else 50 equal bins over the data's range.
func regionStats(g *geo.Grid, mask geo.Mask, p paramInfo) (geo.Stats, error) {
	opt := geo.StatsOptions{HistogramBins: 50}
	if p.Unit == "m" {
		opt = geo.StatsOptions{HistogramBinWidth: 50}
	}
	st, err := geo.AreaWeightedStats(g, mask, opt)
	if err != nil && opt.HistogramBinWidth > 0 { // too many 50 m bins: fall back to 50 bins
		st, err = geo.AreaWeightedStats(g, mask, geo.StatsOptions{HistogramBins: 50})
	}
	return st, err
}

type areaResult struct {
	lattice *geo.Grid
	grids   []*geo.Grid // one per parameter, on lattice, NaN outside the polygon
	mask    geo.Mask    // cells of lattice inside the polygon
}

// sameLattice reports whether b's samples coincide with a's (same spacing,
// registration and an origin offset by whole cells).
func sameLattice(a, b *geo.Grid) bool {
	if a == nil || b == nil || a.Registration != b.Registration {
		return false
	}
	if math.Abs(a.DX-b.DX) > 1e-9*a.DX || math.Abs(a.DY-b.DY) > 1e-9*a.DY {
		return false
	}
	fx := (b.West - a.West) / a.DX
	fy := (b.North - a.North) / a.DY
	return math.Abs(fx-math.Round(fx)) < 1e-6 && math.Abs(fy-math.Round(fy)) < 1e-6
}

// computeArea evaluates the query's parameters on the age grid's lattice
// inside bound, coarsened by whole factors to about resX × resY degrees, and
// masked to the polygon. Raw input grids on the age lattice are coarsened
// the same way (area-weighted block means, geo.Grid.Resample); others are
// sampled bilinearly at the output positions.
func (s *server) computeArea(ctx context.Context, d *dataset, o queryOpts, mp orb.MultiPolygon, bound orb.Bound, resX, resY float64) (*areaResult, error) {
	age := d.Age
	fx, fy := factors(age, resX, resY)
	// Size check before any copy: cells of the answer and of the input window.
	inX, inY := inputSize(age, bound)
	outCells := int64(ceilDiv(inX, fx)) * int64(ceilDiv(inY, fy))
	if outCells > int64(s.limits.MaxAreaCells) {
		need := math.Sqrt(float64(outCells)/float64(s.limits.MaxAreaCells)) * math.Max(age.DX*float64(fx), age.DY*float64(fy))
		return nil, limitProblem(http.StatusUnprocessableEntity, "max_area_cells", int64(s.limits.MaxAreaCells),
			"the answer would have about %d cells; the limit is %d: ask for a smaller area or set resolution-x and resolution-y to about %.3g degrees or more",
			outCells, s.limits.MaxAreaCells, need)
	}
	if int64(inX)*int64(inY) > int64(s.limits.MaxInputCells) {
		return nil, limitProblem(http.StatusUnprocessableEntity, "max_input_cells", int64(s.limits.MaxInputCells),
			"the area covers about %d input cells; the limit is %d", int64(inX)*int64(inY), s.limits.MaxInputCells)
	}
	win := func(g *geo.Grid) (*geo.Grid, error) {
		wg, err := g.Window(bound)
		if err != nil {
			return nil, err
		}
		if fx > 1 || fy > 1 {
			return wg.Resample(float64(fx)*g.DX, float64(fy)*g.DY)
		}
		return wg, nil
	}
	ageW, err := win(age)
	if err != nil {
		if errors.Is(err, geo.ErrEmptyWindow) {
			return nil, problem(CodeNoData, "the area does not overlap dataset %q (%s)", d.Row.ID, boundString(age.Bounds()))
		}
		return nil, err
	}
	companion := func(g *geo.Grid) *geo.Grid {
		if g == nil || !sameLattice(age, g) {
			return g
		}
		cw, err := win(g)
		if err != nil || cw.NX != ageW.NX || cw.NY != ageW.NY || !sameLattice(ageW, cw) ||
			math.Abs(cw.West-ageW.West) > 1e-6*ageW.DX || math.Abs(cw.North-ageW.North) > 1e-6*ageW.DY {
			return g
		}
		return cw
	}
	depthW, sedW := companion(d.Depth), companion(d.Sediment)
	mask, err := geo.GridMask(ageW, mp)
	if err != nil {
		return nil, problem(CodeInvalidCoords, "%v", err).withCause(err)
	}
	if mask.Count() == 0 {
		return nil, problem(CodeNoData, "no cell centre of dataset %q lies inside the area; try a larger area or a finer resolution", d.Row.ID)
	}
	var want geo.Outputs
	for _, p := range o.Params {
		want |= p.Output
	}
	var ev *geo.Result
	if want != 0 {
		in := geo.Inputs{Age: ageW, Depth: depthW, DepthSense: d.DepthSense, Sediment: sedW, Crust: d.Crust,
			Model: o.Model, Compaction: o.Sediment, Mask: mask}
		if want&(geo.OutCorrectedDepth|geo.OutResidualDepth) == 0 {
			in.Depth, in.Sediment, in.Crust = nil, nil, nil
		}
		ev, err = geo.Evaluate(ctx, in, want)
		if err != nil {
			return nil, err
		}
	}
	res := &areaResult{lattice: ageW, mask: mask}
	for _, p := range o.Params {
		var g *geo.Grid
		switch p.ID {
		case PSeafloorAge:
			g = ageW.Clone()
		case PObservedDepth:
			g = sampleOnto(ageW, depthW)
			toDepthM(g, d.DepthSense)
		case PSedimentThickness:
			g = sampleOnto(ageW, sedW)
		default:
			g = modelGrid(ev, p.ID)
		}
		if !p.Predicted {
			for i := range g.Data {
				if !mask.Get(i) {
					g.Data[i] = float32(math.NaN())
				}
			}
		}
		res.grids = append(res.grids, g)
	}
	s.metrics.cells.Add(float64(len(ageW.Data)))
	return res, nil
}

// modelGrid is the grid of model output parameter id in ev (nil for a
// parameter the model does not compute).
func modelGrid(ev *geo.Result, id string) *geo.Grid {
	switch id {
	case PPredictedDepth:
		return ev.PredictedDepthM
	case PHeatFlow:
		return ev.HeatFlowMWm2
	case PThermalThickness:
		return ev.ThermalThicknessKm
	case PDepth600C:
		return ev.Depth600CKm
	case PCorrectedDepth:
		return ev.CorrectedDepthM
	case PResidualDepth:
		return ev.ResidualDepthM
	}
	return nil
}

// toDepthM converts observed bathymetry in sense to depth in metres,
// positive down, in place.
func toDepthM(g *geo.Grid, sense geo.VerticalSense) {
	for i, v := range g.Data {
		g.Data[i] = float32(geo.ToDepthM(float64(v), sense))
	}
}

func ceilDiv(a, b int) int { return (a + b - 1) / b }

// compactBound is the bounding box of mp, taken across the antimeridian
// (longitudes shifted to 0..360, so Max.X may exceed 180) when that is
// narrower: a region split at ±180 into two parts then gets the box of the
// whole region, not one spanning the globe.
func compactBound(mp orb.MultiPolygon) orb.Bound {
	b := mp.Bound()
	if b.Max[0]-b.Min[0] <= 180 {
		return b
	}
	for _, pg := range mp {
		if pb := pg.Bound(); pb.Max[0]-pb.Min[0] > 180 {
			return b // one part really is that wide (a polar cap, a belt)
		}
	}
	shifted := orb.Bound{Min: orb.Point{math.Inf(1), b.Min[1]}, Max: orb.Point{math.Inf(-1), b.Max[1]}}
	visit(mp, func(p orb.Point) {
		x := p[0]
		if x < 0 {
			x += 360
		}
		shifted.Min[0] = math.Min(shifted.Min[0], x)
		shifted.Max[0] = math.Max(shifted.Max[0], x)
	})
	if shifted.Max[0]-shifted.Min[0] < b.Max[0]-b.Min[0] {
		return shifted
	}
	return b
}

// inputSize is the number of columns and rows of age inside bound (an upper
// estimate, computed before any copy).
func inputSize(age *geo.Grid, bound orb.Bound) (int, int) {
	inX := int(math.Ceil((bound.Max[0]-bound.Min[0])/age.DX)) + 1
	inY := int(math.Ceil((bound.Max[1]-bound.Min[1])/age.DY)) + 1
	return min(inX, age.NX), min(inY, age.NY)
}

// factors are the whole coarsening factors for a requested resolution.
func factors(age *geo.Grid, resX, resY float64) (int, int) {
	fx, fy := 1, 1
	if resX > age.DX {
		fx = int(math.Round(resX / age.DX))
	}
	if resY > age.DY {
		fy = int(math.Round(resY / age.DY))
	}
	return fx, fy
}

// estimateCells is the size of an area answer before it is computed.
func estimateCells(age *geo.Grid, bound orb.Bound, resX, resY float64) int64 {
	inX, inY := inputSize(age, bound)
	fx, fy := factors(age, resX, resY)
	return int64(ceilDiv(inX, fx)) * int64(ceilDiv(inY, fy))
}

// sampleOnto returns src's values on lattice's positions: a copy when src
// already is on that lattice, bilinear samples otherwise.
func sampleOnto(lattice, src *geo.Grid) *geo.Grid {
	if src.NX == lattice.NX && src.NY == lattice.NY && sameLattice(lattice, src) &&
		math.Abs(src.West-lattice.West) < 1e-6*lattice.DX && math.Abs(src.North-lattice.North) < 1e-6*lattice.DY {
		return src.Clone()
	}
	out := geo.NewGrid(lattice.NX, lattice.NY, lattice.West, lattice.North, lattice.DX, lattice.DY, lattice.Registration)
	for row := 0; row < lattice.NY; row++ {
		lat := lattice.Lat(row)
		for col := 0; col < lattice.NX; col++ {
			out.Data[row*lattice.NX+col] = src.SampleBilinear(lattice.Lon(col), lat)
		}
	}
	return out
}

func writeGridCSV(w http.ResponseWriter, filename, caution string, lattice *geo.Grid, ps []paramInfo, grids []*geo.Grid) error {
	n := lattice.NX * lattice.NY
	lons, lats := make([]float64, 0, n), make([]float64, 0, n)
	cols := make([][]float64, len(ps))
	for i := range cols {
		cols[i] = make([]float64, 0, n)
	}
	for row := 0; row < lattice.NY; row++ {
		for col := 0; col < lattice.NX; col++ {
			k := row*lattice.NX + col
			keep := false
			for _, g := range grids {
				if !math.IsNaN(float64(g.Data[k])) {
					keep = true
				}
			}
			if !keep {
				continue
			}
			lons = append(lons, geo.LonTo180(lattice.Lon(col)))
			lats = append(lats, lattice.Lat(row))
			for i, g := range grids {
				cols[i] = append(cols[i], float64(g.Data[k]))
			}
		}
	}
	header := []string{"longitude", "latitude"}
	for _, p := range ps {
		header = append(header, p.ID+"_"+unitSuffix(p.Unit))
	}
	return writeCSV(w, filename, caution, header, append([][]float64{lons, lats}, cols...)...)
}

// renderGrid colour-maps a lon/lat grid row by row (no data transparent).
func renderGrid(g *geo.Grid, b colour.Binding) *image.NRGBA {
	ramp, _ := colour.RampByID(b.Ramp)
	pal := ramp.Palette(256)
	img := image.NewNRGBA(image.Rect(0, 0, g.NX, g.NY))
	for row := 0; row < g.NY; row++ {
		for col := 0; col < g.NX; col++ {
			v := float64(g.Data[row*g.NX+col])
			if math.IsNaN(v) {
				continue
			}
			t := b.Position(v)
			img.SetNRGBA(col, row, pal[int(math.Round(math.Max(0, math.Min(1, t))*255))])
		}
	}
	return img
}

// setColourHeaders states the colour scale of a PNG.
func setColourHeaders(w http.ResponseWriter, b colour.Binding) {
	w.Header().Set("Ridgeflank-Colour-Scale", fmt.Sprintf("ramp=%s; parameter=%s; min=%g; max=%g; centre=%g; units=%q",
		b.Ramp, b.Parameter, b.Min, b.Max, b.Centre, b.Units))
	w.Header().Add("Link", `</api/colour-scales>; rel="describedby"; type="application/json"`)
}

// ---- locations ----

func (s *server) locationsList(w http.ResponseWriter, r *http.Request) error {
	d, _, err := s.loadDatasetMeta(r.Context(), chi.URLParam(r, "datasetId"))
	if err != nil {
		return err
	}
	bd := d.Bounds
	rs, err := s.deps.Store.ListRegions(r.Context(), store.RegionFilter{BBox: &bd})
	if err != nil {
		return err
	}
	b := s.baseURL(r) + "/api/collections/" + d.Row.ID + "/locations/"
	feats := make([]any, len(rs))
	for i, rg := range rs {
		f := s.regionFeature(r, rg)
		f["links"] = []link{{Href: b + rg.ID, Rel: "data", Type: MediaCovJSON, Title: rg.Name}}
		feats[i] = f
	}
	return writeJSON(w, http.StatusOK, MediaGeoJSON, map[string]any{"type": "FeatureCollection", "features": feats})
}

// location answers a stored region as a named location: the parameters over
// the region (as an area query) with area-weighted statistics per parameter.
func (s *server) location(w http.ResponseWriter, r *http.Request) error {
	d, err := s.datasetFromPath(r)
	if err != nil {
		return err
	}
	rg, err := s.deps.Store.GetRegion(r.Context(), chi.URLParam(r, "regionId"))
	if err != nil {
		if isNotFound(err) {
			return problem(CodeNotFound, "no location (region) %q", chi.URLParam(r, "regionId"))
		}
		return err
	}
	yes := true
	return s.answerArea(w, r, d, rg.Geometry, d.Row.ID+"-"+rg.ID, &yes)
}
