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

// Raster answers an export request in memory: the area result and the file's metadata.
func (s *Service) Raster(ctx context.Context, req ExportRequest) (*AreaResult, gdal.Meta, error) {
	if req.Format != FormatCOG && req.Format != FormatNetCDF {
		return nil, gdal.Meta{}, fault.New(fault.UnsupportedFormat, "f", "files are written as %s or %s, not %q", FormatCOG, FormatNetCDF, req.Format)
	}
	if len(req.Options.Parameters) != 1 {
		return nil, gdal.Meta{}, fault.New(fault.InvalidParameter, "parameter-name", "a file answers one parameter: give exactly one parameter-name")
	}
	mp, err := ParseArea(req.Coords)
	if err != nil {
		return nil, gdal.Meta{}, err
	}
	r, err := s.PrepareRegion(mp, "coords")
	if err != nil {
		return nil, gdal.Meta{}, err
	}
	res, err := s.Area(ctx, req.Dataset, req.Options, r, req.ResX, req.ResY)
	if err != nil {
		return nil, gdal.Meta{}, err
	}
	return res, s.FileMeta(res), nil
}

// FileMeta is the metadata of a file holding res's first parameter: names, units, title and the
// provenance (with the navigation caution where it applies).
func (s *Service) FileMeta(res *AreaResult) gdal.Meta {
	p := res.Query.Params[0]
	prov := s.Provenance(res.Query)
	return gdal.Meta{Name: p.ID, LongName: p.Label, Units: p.Unit, Title: res.Query.Dataset.Row.Name + ": " + p.Label,
		Source: "ridgeflank " + s.version, Metadata: prov.Metadata()}
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
// place). progress, if not nil, is told what is being done (fraction 0..1).
func (s *Service) Export(ctx context.Context, req ExportRequest, path string, progress func(frac float64, msg string)) (ExportResult, error) {
	if progress == nil {
		progress = func(float64, string) {}
	}
	progress(0.05, "loading dataset "+req.Dataset)
	progress(0.2, "computing")
	res, meta, err := s.Raster(ctx, req)
	if err != nil {
		return ExportResult{}, err
	}
	progress(0.7, "encoding")
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return ExportResult{}, err
	}
	tmp := path + ".tmp"
	media := MediaCOG
	if req.Format == FormatNetCDF {
		media = MediaNetCDF
		err = gdal.WriteNetCDF(tmp, res.Grids[0], meta)
	} else {
		err = gdal.WriteCOG(tmp, res.Grids[0], meta)
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
		name = fmt.Sprintf("%s-area-%s%s", req.Dataset, res.Query.Params[0].ID, filepath.Ext(path))
	}
	return ExportResult{Filename: name, MediaType: media, Bytes: size, SHA256: sum}, nil
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
