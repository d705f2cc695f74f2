package evaluate

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/encoding/wkt"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
)

// Raster file formats of Export and EncodeRaster.
const (
	FormatCOG    = "cog"
	FormatNetCDF = "netcdf"
)

// Media types of the raster formats.
const (
	MediaCOG    = "image/tiff; application=geotiff; profile=cloud-optimized"
	MediaNetCDF = "application/x-netcdf"
)

// ExportRequest is an area question answered as a file: what an export job carries (as JSON)
// and what the synchronous answer is computed from, so both give the same file.
type ExportRequest struct {
	Dataset  string  `json:"dataset"`
	Options  Options `json:"options"`
	Coords   string  `json:"coords"` // POLYGON or MULTIPOLYGON as WKT, longitude first
	ResX     float64 `json:"resolution_x,omitempty"`
	ResY     float64 `json:"resolution_y,omitempty"`
	Format   string  `json:"format"` // FormatCOG or FormatNetCDF
	Filename string  `json:"filename,omitempty"`
}

// ExportResult describes a written file.
type ExportResult struct {
	Filename  string `json:"filename"`
	MediaType string `json:"media_type"`
	Bytes     int64  `json:"bytes"`
	SHA256    string `json:"sha256"`
}

// ParseArea reads a POLYGON or MULTIPOLYGON in WKT (longitude first) as a MultiPolygon.
func ParseArea(coords string) (orb.MultiPolygon, error) {
	g, err := wkt.Unmarshal(strings.TrimSpace(coords))
	if err != nil {
		return nil, fault.New(fault.InvalidCoords, "coords", "coords is not valid WKT: %v", err)
	}
	switch t := g.(type) {
	case orb.Polygon:
		return orb.MultiPolygon{t}, nil
	case orb.MultiPolygon:
		return t, nil
	}
	return nil, fault.New(fault.InvalidCoords, "coords", "area queries take POLYGON or MULTIPOLYGON, not %s", g.GeoJSONType())
}

// exportQuestion checks an export request: format, one parameter, the area and the options.
func (s *Service) exportQuestion(ctx context.Context, req ExportRequest) (*Query, geo.PreparedRegion, error) {
	if req.Format != FormatCOG && req.Format != FormatNetCDF {
		return nil, geo.PreparedRegion{}, fault.New(fault.UnsupportedFormat, "f", "files are written as %s or %s, not %q", FormatCOG, FormatNetCDF, req.Format)
	}
	if len(req.Options.Parameters) != 1 {
		return nil, geo.PreparedRegion{}, fault.New(fault.InvalidParameter, "parameter-name", "a file answers one parameter: give exactly one parameter-name")
	}
	mp, err := ParseArea(req.Coords)
	if err != nil {
		return nil, geo.PreparedRegion{}, err
	}
	r, err := s.PrepareRegion(mp, "coords")
	if err != nil {
		return nil, geo.PreparedRegion{}, err
	}
	q, err := s.load(ctx, req.Dataset, req.Options)
	if err != nil {
		return nil, geo.PreparedRegion{}, err
	}
	return q, r, nil
}

// Raster answers an export request in memory: the area result and the file's metadata.
func (s *Service) Raster(ctx context.Context, req ExportRequest) (*AreaResult, gdal.Meta, error) {
	q, r, err := s.exportQuestion(ctx, req)
	if err != nil {
		return nil, gdal.Meta{}, err
	}
	res, err := s.area(ctx, q, r, req.ResX, req.ResY)
	if err != nil {
		return nil, gdal.Meta{}, err
	}
	return res, s.FileMeta(res), nil
}

// FileMeta is the metadata of a file holding res's first parameter: names, units, title and the
// provenance (with the navigation caution where it applies).
func (s *Service) FileMeta(res *AreaResult) gdal.Meta { return s.fileMeta(res.Query) }

func (s *Service) fileMeta(q *Query) gdal.Meta {
	p := q.Params[0]
	prov := s.Provenance(q)
	title := q.Dataset.Row.Name + ": " + p.Label
	if p.Predicted {
		title += " (model " + q.Model.Params().ID + ")"
	}
	if prov.Label != "" && !strings.Contains(title, prov.Label) {
		title += " (" + prov.Label + " data)"
	}
	md := prov.Metadata()
	// What a figure of the file states, so the file stands alone: title, parameter, units,
	// sign convention (model and caution come with the provenance).
	md["ridgeflank_title"] = title
	md["ridgeflank_parameter"] = p.ID
	md["ridgeflank_units"] = p.Unit
	if sc := SignConvention(p.ID); sc != "" {
		md["ridgeflank_sign_convention"] = sc
	}
	return gdal.Meta{Name: p.ID, LongName: p.Label, Units: p.Unit, Title: title,
		Source: "ridgeflank " + s.version, Metadata: md, BandMetadata: p.CFAttributes()}
}

// EncodeRaster answers an export request as the bytes of the file.
func (s *Service) EncodeRaster(ctx context.Context, req ExportRequest) ([]byte, *AreaResult, error) {
	res, _, err := s.Raster(ctx, req)
	if err != nil {
		return nil, nil, err
	}
	raw, err := s.EncodeFile(res, req.Format)
	return raw, res, err
}

// EncodeFile encodes res's first parameter as a file of format (FormatCOG or FormatNetCDF)
// with FileMeta's metadata.
func (s *Service) EncodeFile(res *AreaResult, format string) ([]byte, error) {
	switch format {
	case FormatCOG:
		return gdal.EncodeCOG(res.Grids[0], s.FileMeta(res))
	case FormatNetCDF:
		return gdal.EncodeNetCDF(res.Grids[0], s.FileMeta(res))
	}
	return nil, fault.New(fault.UnsupportedFormat, "f", "files are written as %s or %s, not %q", FormatCOG, FormatNetCDF, format)
}

// Export answers an export request as a file at path (written beside it and renamed into
// place). An answer of up to Limits.MaxAreaCells cells is computed in memory (Raster); a larger
// one, up to Limits.MaxExportCells, is computed and written band by band of rows (the bands
// Statistics uses) through a streaming COG or netCDF writer, in bounded memory whatever its
// size, with the same values. progress, if not nil, is told what is being done (fraction 0..1).
func (s *Service) Export(ctx context.Context, req ExportRequest, path string, progress func(frac float64, msg string)) (ExportResult, error) {
	if progress == nil {
		progress = func(float64, string) {}
	}
	progress(0.02, "loading dataset "+req.Dataset)
	q, r, err := s.exportQuestion(ctx, req)
	if err != nil {
		return ExportResult{}, err
	}
	plan, err := planArea(q.Dataset, r.Bound, req.ResX, req.ResY)
	if err != nil {
		return ExportResult{}, err
	}
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return ExportResult{}, err
	}
	tmp := path + ".tmp"
	media := MediaCOG
	if req.Format == FormatNetCDF {
		media = MediaNetCDF
	}
	if out := plan.outCells(); out > int64(s.limits.MaxAreaCells) {
		if err := s.exportLimit(out); err != nil {
			return ExportResult{}, err
		}
		err = s.streamExport(ctx, q, r, plan, req.Format, tmp, progress)
	} else {
		progress(0.1, "computing")
		var res *AreaResult
		if res, err = s.area(ctx, q, r, req.ResX, req.ResY); err == nil {
			progress(0.7, "encoding")
			if req.Format == FormatNetCDF {
				err = gdal.WriteNetCDF(tmp, res.Grids[0], s.FileMeta(res))
			} else {
				err = gdal.WriteCOG(tmp, res.Grids[0], s.FileMeta(res))
			}
		}
	}
	if err != nil {
		os.Remove(tmp)
		return ExportResult{}, err
	}
	if err := os.Rename(tmp, path); err != nil {
		return ExportResult{}, err
	}
	size, sum, err := hashFile(path)
	if err != nil {
		return ExportResult{}, err
	}
	name := req.Filename
	if name == "" {
		name = FileName(q, "area", strings.TrimPrefix(filepath.Ext(path), "."))
	}
	progress(1, "written")
	return ExportResult{Filename: name, MediaType: media, Bytes: size, SHA256: sum}, nil
}

// exportLimit refuses a file of out cells over Limits.MaxExportCells.
func (s *Service) exportLimit(out int64) error {
	if out > s.limits.MaxExportCells {
		return fault.Over("max_export_cells", s.limits.MaxExportCells, out, "coords",
			"the file would have about %d cells; the limit is %d: ask for a coarser resolution or a smaller area", out, s.limits.MaxExportCells)
	}
	return nil
}

// ExportCells is the number of cells of the file req asks for, before anything is computed,
// for choosing between an answer now and an export job; over Limits.MaxExportCells it is
// refused as Export refuses it (fault.Over("max_export_cells")).
func (s *Service) ExportCells(ctx context.Context, req ExportRequest) (int64, error) {
	mp, err := ParseArea(req.Coords)
	if err != nil {
		return 0, err
	}
	r, err := s.PrepareRegion(mp, "coords")
	if err != nil {
		return 0, err
	}
	d, err := s.Dataset(ctx, req.Dataset)
	if err != nil {
		return 0, err
	}
	plan, err := planArea(d, r.Bound, req.ResX, req.ResY)
	if err != nil {
		return 0, err
	}
	out := plan.outCells()
	return out, s.exportLimit(out)
}

// streamExport writes q's parameter over r on plan's lattice to path, band by band of rows
// (rowBands, evalWindowAll), never holding more than a few bands.
func (s *Service) streamExport(ctx context.Context, q *Query, r geo.PreparedRegion, plan areaPlan, format, path string, progress func(float64, string)) error {
	d := q.Dataset
	bands, err := rowBands(d.Files.Age, r.Bound, plan)
	if err != nil {
		if isEmptyWindow(err) {
			return fault.New(fault.NoData, "coords", "the area does not overlap dataset %q", d.Row.ID)
		}
		return err
	}
	fl := newFlagger(q.Params)
	// The file's lattice: the first band's columns and origin, every band's rows.
	scan := s.scans(plan)
	first, err := s.evalWindowAll(ctx, q, r, bands[0], plan, fl, scan, true)
	if err != nil {
		return err
	}
	header := *first.Lattice
	header.Data = nil
	header.NY = 0
	for _, b := range bands {
		n, err := s.bandRows(d, b, plan)
		if err != nil {
			return err
		}
		header.NY += n
	}
	var w rowWriter
	meta := s.fileMeta(q)
	if format == FormatNetCDF {
		w, err = newNetCDFWriter(path, header, meta)
	} else {
		w, err = newCOGWriter(header, filepath.Dir(path))
	}
	if err != nil {
		return err
	}
	defer w.Close()
	buf := newRowBuffer(w, header.NX)
	for i, b := range bands {
		ar := first
		if i > 0 {
			if ar, err = s.evalWindowAll(ctx, q, r, b, plan, fl, scan, true); err != nil {
				return err
			}
		}
		g := ar.Grids[0]
		if g.NX != header.NX {
			return fmt.Errorf("export: band %d has %d columns, the file %d", i, g.NX, header.NX)
		}
		if err := buf.add(g.Data); err != nil {
			return err
		}
		progress(0.05+0.75*float64(i+1)/float64(len(bands)), fmt.Sprintf("computed %d of %d bands of rows", i+1, len(bands)))
	}
	if err := buf.flush(); err != nil {
		return err
	}
	if buf.rows != header.NY {
		return fmt.Errorf("export: %d rows computed, the file has %d", buf.rows, header.NY)
	}
	progress(0.8, "writing the file")
	return w.Finish(ctx, path, meta, func(f float64) { progress(0.8+0.19*f, "writing the file") })
}

// bandRows is the number of rows the plan's lattice has in band b (the rows read at the
// plan's level, coarsened as geo.Grid.Resample coarsens them).
func (s *Service) bandRows(d *Dataset, b orb.Bound, plan areaPlan) (int, error) {
	lv := d.Files.Age.Levels()[plan.lvl].Grid
	sp, err := lv.WindowSpec(b)
	if err != nil {
		return 0, err
	}
	if plan.rx == 1 && plan.ry == 1 {
		return sp.Out.NY, nil
	}
	probe := geo.NewGrid(plan.rx, sp.Out.NY, sp.Out.West, sp.Out.North, sp.Out.DX, sp.Out.DY, sp.Out.Registration)
	c, err := probe.Resample(float64(plan.rx)*sp.Out.DX, float64(plan.ry)*sp.Out.DY)
	if err != nil {
		return 0, err
	}
	return c.NY, nil
}

// hashFile returns the size of the file at path and its SHA-256 (lower-case hex), read as a
// stream.
func hashFile(path string) (int64, string, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, "", err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return 0, "", err
	}
	return n, hex.EncodeToString(h.Sum(nil)), nil
}
