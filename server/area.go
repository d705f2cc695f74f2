package server

import (
	"bytes"
	"fmt"
	"image/png"
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ridgeflank/colour"
	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

// ---- collections ----

func (s *server) collectionJSON(r *http.Request, d *evaluate.Dataset) map[string]any {
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
	for _, p := range d.Available() {
		cp := covParameters([]evaluate.Parameter{p})[p.ID]
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
			"corridor":   corridorQuery(dq("corridor", "corridor?coords={coords}&corridor-width={width}&width-units={units}", pointFormats)),
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
		d, err := s.ev.DatasetMeta(r.Context(), row.ID)
		if err != nil {
			if _, ok := fault.As(err); ok {
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
	d, err := s.ev.DatasetMeta(r.Context(), chi.URLParam(r, "datasetId"))
	if err != nil {
		return err
	}
	return writeJSON(w, http.StatusOK, "", s.collectionJSON(r, d))
}

// ---- area ----

func parseResolution(r *http.Request, name string) (float64, error) {
	v := queryOf(r).Get(name)
	if v == "" {
		return 0, nil
	}
	f, err := strconv.ParseFloat(v, 64)
	if err != nil || !(f > 0) || math.IsInf(f, 0) || f > 90 {
		return 0, problem(CodeInvalidParameter, "%s=%q must be a positive number of degrees (at most 90)", name, v).withParam(name)
	}
	return f, nil
}

// areaQuery is what area and location queries read from the request besides their geometry.
type areaQuery struct {
	resX, resY float64 // resolution-x, resolution-y (0: the grid's own)
	format     outFormat
	covType    string
	options    evaluate.Options
}

// parseAreaQuery reads resolution-x/-y, the format and the query options; files and pictures
// answer exactly one parameter.
func parseAreaQuery(r *http.Request) (areaQuery, error) {
	var q areaQuery
	var err error
	if q.resX, err = parseResolution(r, "resolution-x"); err != nil {
		return q, err
	}
	if q.resY, err = parseResolution(r, "resolution-y"); err != nil {
		return q, err
	}
	if q.format, q.covType, err = negotiate(r, fmtCovJSON, fmtCSV, fmtCOG, fmtNetCDF, fmtPNG); err != nil {
		return q, err
	}
	q.options = queryOptions(r)
	if (q.format == fmtCOG || q.format == fmtNetCDF || q.format == fmtPNG) && len(q.options.Parameters) != 1 {
		return q, problem(CodeInvalidParameter, "%s answers one parameter: give exactly one parameter-name", formatNames[q.format]).withParam("parameter-name")
	}
	return q, nil
}

// areaParam reads and prepares the polygon of coords= (WKT, longitude first) or bbox=
// (west,south,east,north), the one rule of the area and statistics queries.
func (s *server) areaParam(r *http.Request) (string, geo.PreparedRegion, error) {
	coords := strings.TrimSpace(queryOf(r).Get("coords"))
	if bb := queryOf(r).Get("bbox"); bb != "" {
		if coords != "" {
			return "", geo.PreparedRegion{}, problem(CodeInvalidParameter, "give coords or bbox, not both").withParam("bbox")
		}
		var err error
		if coords, err = bboxArea(bb); err != nil {
			return "", geo.PreparedRegion{}, err
		}
	}
	if coords == "" {
		return "", geo.PreparedRegion{}, problem(CodeInvalidCoords, "coords= (WKT, longitude first) or bbox=west,south,east,north is required").withParam("coords")
	}
	mp, err := evaluate.ParseArea(coords)
	if err != nil {
		return "", geo.PreparedRegion{}, err
	}
	if err := checkLonLat(mp); err != nil {
		return "", geo.PreparedRegion{}, err
	}
	region, err := s.ev.PrepareRegion(mp, "coords")
	return coords, region, err
}

func (s *server) area(w http.ResponseWriter, r *http.Request) error {
	id := chi.URLParam(r, "datasetId")
	coords, region, err := s.areaParam(r)
	if err != nil {
		return err
	}
	q, err := parseAreaQuery(r)
	if err != nil {
		return err
	}
	resX, resY, format, covType, o := q.resX, q.resY, q.format, q.covType, q.options
	values, err := s.ev.AreaCost(r.Context(), id, o, region, resX, resY)
	if err != nil {
		return err
	}
	release, err := s.admitHeavy(w, r, values)
	if err != nil {
		return err
	}
	defer release()
	if format == fmtCOG || format == fmtNetCDF {
		req := evaluate.ExportRequest{Dataset: id, Options: o, Coords: coords, ResX: resX, ResY: resY, Format: evaluate.FormatCOG,
			Filename: evaluate.ExportFileName(id, "area", o, "tif")}
		if format == fmtNetCDF {
			req.Format, req.Filename = evaluate.FormatNetCDF, evaluate.ExportFileName(id, "area", o, "nc")
		}
		if s.deps.Jobs != nil {
			// Files above max_area_cells are written band by band by the job (any size up to
			// max_export_cells, as COG or netCDF).
			cells, err := s.ev.ExportCells(r.Context(), req)
			if err != nil {
				return err
			}
			if cells > int64(s.limits.SyncExportCells) {
				return s.queueExport(w, r, req)
			}
		}
		raw, res, err := s.ev.EncodeRaster(r.Context(), req)
		if err != nil {
			return err
		}
		s.metrics.cells.Add(float64(len(res.Lattice.Data)))
		setProvenance(w, s.ev.Provenance(res.Query))
		setAnswerHeaders(w, res.Flags, res.Region.Repairs)
		if format == fmtCOG {
			w.Header().Set("Content-Type", MediaCOG)
		} else {
			w.Header().Set("Content-Type", MediaNetCDF)
		}
		w.Header().Set("Content-Disposition", `attachment; filename="`+req.Filename+`"`)
		_, err = w.Write(raw)
		return err
	}
	res, err := s.ev.Area(r.Context(), id, o, region, resX, resY)
	if err != nil {
		return err
	}
	return s.writeArea(w, format, covType, res, "area", nil)
}

// writeArea writes an area answer (with statistics when stats is not nil) in format.
func (s *server) writeArea(w http.ResponseWriter, format outFormat, covType string, res *evaluate.AreaResult, name string, stats []geo.Stats) error {
	s.metrics.cells.Add(float64(len(res.Lattice.Data)))
	prov := s.ev.Provenance(res.Query)
	setProvenance(w, prov)
	setAnswerHeaders(w, res.Flags, res.Region.Repairs)
	if res.ResolutionNote != "" {
		w.Header().Set("Ridgeflank-Resolution-Note", res.ResolutionNote)
	}
	ps := res.Query.Params
	switch format {
	case fmtCSV:
		return writeGridCSV(w, evaluate.FileName(res.Query, name, "csv"), evaluate.FactsOf(prov), res.Lattice, ps, res.Grids)
	case fmtPNG:
		b, ok := colour.BindingFor(ps[0].ID)
		if !ok {
			return fmt.Errorf("no colour binding for %s", ps[0].ID)
		}
		img := evaluate.NewPaint(b).Image(res.Grids[0])
		setColourHeaders(w, b)
		var buf bytes.Buffer
		if err := png.Encode(&buf, img); err != nil {
			return err
		}
		w.Header().Set("Content-Type", MediaPNG)
		_, err := w.Write(withPNGCaution(buf.Bytes(), prov.Caution))
		return err
	}
	c := gridCoverage(res.Lattice, ps, res.Grids)
	c.Provenance = &prov
	c.Caution = prov.Caution
	c.Flags = res.Flags
	c.Repairs = res.Region.Repairs
	if res.ResolutionNote != "" {
		c.Resolution = &resolutionUsed{XDeg: res.Lattice.DX, YDeg: res.Lattice.DY, Note: res.ResolutionNote}
	}
	if stats != nil {
		c.Stats = map[string]unitStats{}
		for i, p := range ps {
			c.Stats[p.ID] = newUnitStats(stats[i], p)
		}
	}
	return writeJSON(w, http.StatusOK, covType, c)
}

// setAnswerHeaders states refused values and region repairs in headers too (for formats with
// no place of their own for them).
func setAnswerHeaders(w http.ResponseWriter, flags []evaluate.Flag, repairs []string) {
	for _, f := range flags {
		w.Header().Add("Ridgeflank-Flag", fmt.Sprintf("parameter=%q; input=%q; count=%d; reason=%q", f.Parameter, f.Input, f.Count, f.Reason))
	}
	for _, r := range repairs {
		w.Header().Add("Ridgeflank-Repair", strconv.Quote(r))
	}
}

func writeGridCSV(w http.ResponseWriter, filename string, facts evaluate.CSVFacts, lattice *geo.Grid, ps []evaluate.Parameter, grids []*geo.Grid) error {
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
	out := []evaluate.CSVColumn{numCol("longitude", lons), numCol("latitude", lats)}
	for i, p := range ps {
		out = append(out, numCol(evaluate.FieldName(p), cols[i]))
	}
	return writeCSV(w, filename, facts, out...)
}

// setColourHeaders states the colour scale of a PNG.
func setColourHeaders(w http.ResponseWriter, b colour.Binding) {
	w.Header().Set("Ridgeflank-Colour-Scale", fmt.Sprintf("ramp=%s; parameter=%s; min=%g; max=%g; centre=%g; units=%q",
		b.Ramp, b.Parameter, b.Min, b.Max, b.Centre, b.Units))
	w.Header().Add("Link", `</api/colour-scales>; rel="describedby"; type="application/json"`)
}

// ---- locations ----

func (s *server) locationsList(w http.ResponseWriter, r *http.Request) error {
	d, err := s.ev.DatasetMeta(r.Context(), chi.URLParam(r, "datasetId"))
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
	id := chi.URLParam(r, "datasetId")
	q, err := parseAreaQuery(r)
	if err != nil {
		return err
	}
	resX, resY, format, covType, o := q.resX, q.resY, q.format, q.covType, q.options
	res, rg, err := s.ev.Region(r.Context(), id, chi.URLParam(r, "regionId"), o, resX, resY)
	if err != nil {
		return err
	}
	if format == fmtCOG || format == fmtNetCDF {
		file, media, ext := evaluate.FormatCOG, MediaCOG, "tif"
		if format == fmtNetCDF {
			file, media, ext = evaluate.FormatNetCDF, MediaNetCDF, "nc"
		}
		raw, err := s.ev.EncodeFile(res, file)
		if err != nil {
			return err
		}
		w.Header().Set("Content-Type", media)
		w.Header().Set("Content-Disposition", `attachment; filename="`+evaluate.FileName(res.Query, rg.ID, ext)+`"`)
		setProvenance(w, s.ev.Provenance(res.Query))
		if res.ResolutionNote != "" {
			w.Header().Set("Ridgeflank-Resolution-Note", res.ResolutionNote)
		}
		_, err = w.Write(raw)
		return err
	}
	return s.writeArea(w, format, covType, res, rg.ID, res.Stats)
}
