package gdal

/*
#include <stdlib.h>
#include "rfgdal.h"
*/
import "C"

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"
	"unsafe"

	"ridgeflank/geo"
)

// DefaultMaxCells is the largest grid Read loads into memory unless ReadOptions.MaxCells says
// otherwise: 2²⁸ cells (1 GiB of float32). Use Open and ReadRows to stream larger files (and
// COGStream to write them).
const DefaultMaxCells = 1 << 28

// Errors callers can test with errors.Is.
var (
	// ErrProjected: the raster is in a projected (or other non-geographic) CRS.
	ErrProjected = errors.New("grid is in a projected CRS; only geographic lon/lat grids are supported")
	// ErrRotated: the geotransform has rotation or shear terms.
	ErrRotated = errors.New("grid is rotated or sheared; only north-up lon/lat grids are supported")
	// ErrNoGeoreference: the raster has no geotransform.
	ErrNoGeoreference = errors.New("grid has no georeferencing (no geotransform)")
	// ErrSeveralVariables: the file holds several variables and none was chosen.
	ErrSeveralVariables = errors.New("file holds several variables; choose one")
	// ErrNoSuchVariable: the chosen variable is not in the file.
	ErrNoSuchVariable = errors.New("no such variable in the file")
	// ErrTooLarge: the grid exceeds ReadOptions.MaxCells.
	ErrTooLarge = errors.New("grid too large to read at once")
)

// ReadOptions tune Read and Open. The zero value reads band 1 of a single-variable file and
// takes the registration from the file.
type ReadOptions struct {
	// Variable names the netCDF/HDF5 variable to read when the file holds several (the same as
	// opening `NETCDF:"file":variable`). When the file holds one variable and Variable is set,
	// it must match.
	Variable string
	// Band is the 1-based band to read (default 1). For BAG, band 1 is elevation and band 2
	// uncertainty.
	Band int
	// Registration overrides the registration found in the file: "cell-centre" or "node"
	// (geo.ParseRegistration); "" takes it from the file (see Open).
	Registration string
	// WarpToLonLat reprojects a projected raster (e.g. a BAG in UTM) to WGS84 longitude/latitude
	// with bilinear resampling at GDAL's suggested resolution, instead of refusing it. The
	// result is a new, interpolated grid in EPSG:4326.
	WarpToLonLat bool
	// MaxCells bounds the size Read accepts (default DefaultMaxCells).
	MaxCells int
	// RawTiles lets ReadRows read an uncompressed single-band float32 GeoTIFF straight from
	// its file into the caller's buffer, one copy less than through GDAL (see rawread.go);
	// other files are read through GDAL as always. The values are the same.
	RawTiles bool
}

// Meta describes a grid file: what Read found, or what Write* should record.
type Meta struct {
	Name     string   // variable or band name (netCDF variable name; default "z" on write)
	LongName string   // descriptive name (netCDF long_name)
	Units    string   // units of the values, e.g. "m", "Ma"
	NoData   *float64 // read: the file's no-data value (cells with it are NaN in the grid); write: the value stored for NaN (nil: NaN for COG, 9.96921e36 for netCDF)
	Title    string   // dataset title (CF title)
	Source   string   // provenance: how the data were produced (CF source)
	History  string   // processing history (CF history); writers append a line
	// Written, when set, stamps the appended history line with this time (UTC, RFC 3339).
	// Left zero, the line has no time stamp, so the same grid and metadata always give the same
	// COG bytes and the store's content hash recognises a re-import.
	Written time.Time
	// Sense is the vertical sense the file declares (BAG elevation; CF standard_name or
	// positive attribute), SenseUnknown otherwise. Writers record it.
	Sense geo.VerticalSense
	// Metadata holds the dataset's metadata items (read) or extra items to write (netCDF:
	// written as global attributes unless the key already has a "var#" prefix).
	Metadata map[string]string
	// BandMetadata holds the band's metadata items (for netCDF, the variable's attributes).
	BandMetadata map[string]string
	Driver       string   // GDAL driver short name, e.g. "netCDF", "GTiff", "COG", "BAG"
	CRS          string   // CRS name from the file ("" if none); datum shifts are not applied
	Warnings     []string // warnings GDAL raised while opening
}

// Dataset is an open raster for streaming row blocks. Its methods are safe for concurrent use
// (one mutex per handle; netCDF/HDF5 calls are also serialised process-wide). Close it.
type Dataset struct {
	mu        sync.Mutex
	h, src    C.GDALDatasetH // src: the original when h is a reprojected copy
	hdf       bool
	band      int
	header    geo.Grid
	flip      bool // stored south-up: rows are reversed on read
	hasNodata bool
	nodata    float32
	scale     float64
	offset    float64
	meta      Meta
	path      string
	raw       *rawTiles // non-nil: ReadRows reads the file's blocks itself (ReadOptions.RawTiles)
}

func (d *Dataset) lock() {
	if d.hdf {
		hdfMu.Lock()
	}
	d.mu.Lock()
}

func (d *Dataset) unlock() {
	d.mu.Unlock()
	if d.hdf {
		hdfMu.Unlock()
	}
}

// Read loads one band of a raster file into a grid: netCDF classic and netCDF-4 (also the
// `NETCDF:"file":variable` form), GeoTIFF/COG (any compression), BAG, and the other GDAL
// raster formats (e.g. ASCII grids) that carry a lon/lat geotransform. No-data cells become
// NaN and scale/offset packing is applied. At most one ReadOptions is used. See Open for the
// georeferencing rules.
func Read(path string, opts ...ReadOptions) (*geo.Grid, Meta, error) {
	var opt ReadOptions
	if len(opts) > 0 {
		opt = opts[0]
	}
	d, err := Open(path, opt)
	if err != nil {
		return nil, Meta{}, err
	}
	maxCells := opt.MaxCells
	if maxCells <= 0 {
		maxCells = DefaultMaxCells
	}
	h := d.Header()
	if int64(h.NX)*int64(h.NY) > int64(maxCells) {
		d.Close()
		return nil, Meta{}, fmt.Errorf("read %s: %w: %d×%d cells exceed the limit of %d", path, ErrTooLarge, h.NX, h.NY, maxCells)
	}
	h.Data = make([]float32, h.NX*h.NY)
	if err := d.ReadRows(0, h.Data); err != nil {
		d.Close()
		return nil, Meta{}, err
	}
	if err := d.Close(); err != nil {
		return nil, Meta{}, err
	}
	return &h, d.Meta(), nil
}

// isPlainPath reports whether path names a local file (not a GDAL subdataset or virtual path).
func isPlainPath(path string) bool {
	if strings.HasPrefix(path, "/vsi") {
		return false
	}
	if i := strings.Index(path, ":"); i > 1 && strings.ToUpper(path[:i]) == path[:i] {
		return false // DRIVER:"file":subdataset
	}
	return true
}

// fileKind sniffs a local file: classic netCDF, HDF5 (netCDF-4 and BAG are HDF5), or other.
// For an HDF5 file whose extension GDAL's netCDF driver does not know, it reports whether the
// file carries netCDF-4's _NCProperties attribute in its first 64 KiB.
func fileKind(path string) (hdf bool, netcdf4Unnamed bool) {
	up := strings.ToUpper(path)
	for _, p := range []string{"NETCDF:", "HDF5:", "BAG:"} {
		if strings.HasPrefix(up, p) {
			return true, false
		}
	}
	if !isPlainPath(path) {
		return false, false
	}
	f, err := os.Open(path)
	if err != nil {
		return false, false
	}
	defer f.Close()
	buf := make([]byte, 64<<10)
	n, _ := io.ReadFull(f, buf)
	buf = buf[:n]
	s := string(buf[:min(n, 8)])
	if strings.HasPrefix(s, "CDF\x01") || strings.HasPrefix(s, "CDF\x02") || strings.HasPrefix(s, "CDF\x05") {
		return true, false
	}
	if s != "\x89HDF\r\n\x1a\n" {
		return false, false
	}
	switch strings.ToLower(strings.TrimPrefix(filepath.Ext(path), ".")) {
	case "nc", "cdf", "nc2", "nc3", "nc4", "grd", "gmac", "bag", "h5", "hdf5", "he5", "hdf":
		return true, false
	}
	return true, bytes.Contains(buf, []byte("_NCProperties"))
}

func isHDFDriver(name string) bool {
	switch name {
	case "netCDF", "BAG", "HDF5", "HDF5Image":
		return true
	}
	return false
}

// Open opens one band of a raster file for reading by row blocks (see Read for formats).
//
// Georeferencing: GDAL's geotransform gives the OUTER CORNER of the first cell for every
// registration, so the first sample sits at (gt[0] + gt[1]/2, gt[3] + gt[5]/2). Rows are
// returned north first; a south-up raster is flipped. Rotated geotransforms are refused
// (ErrRotated), as are projected CRSs (ErrProjected) unless ReadOptions.WarpToLonLat is set;
// a raster without a CRS is taken as lon/lat when its coordinates fit (latitudes within ±90°).
// Geographic CRSs in other angular units or with a non-Greenwich prime meridian are converted
// to degrees east of Greenwich; datums are not shifted (Meta.CRS names the CRS).
//
// Registration, first rule that applies: ReadOptions.Registration; the file's
// "grid_registration" item (written by this package); AREA_OR_POINT (GeoTIFF raster type,
// BAG); the netCDF global attribute node_offset (1 = cells, 0 = nodes); CF cell bounds on the
// lon/lat coordinates (CF-1.8 §7.1) = cells; otherwise nodes for netCDF (CF coordinates are
// sample points) and cell centres for other formats (the GeoTIFF default, PixelIsArea).
// Registration only changes the footprint (Grid.Bounds); sample positions are the same.
func Open(path string, opt ReadOptions) (*Dataset, error) {
	ensureInit()
	if opt.Band <= 0 {
		opt.Band = 1
	}
	var forced *geo.Registration
	if opt.Registration != "" {
		r, err := geo.ParseRegistration(opt.Registration)
		if err != nil {
			return nil, err
		}
		forced = &r
	}
	if isPlainPath(path) {
		if _, err := os.Stat(path); err != nil {
			if errors.Is(err, fs.ErrNotExist) {
				return nil, fmt.Errorf("read grid %s: %w", path, fs.ErrNotExist)
			}
			return nil, fmt.Errorf("read grid: %w", err)
		}
	}
	hdf, nc4 := fileKind(path)
	d := &Dataset{hdf: hdf, band: opt.Band, path: path}
	openPath := path
	if nc4 {
		// netCDF-4 without a netCDF extension: GDAL would hand it to its generic HDF5 driver.
		openPath = `NETCDF:"` + path + `"`
	}
	d.lock()
	defer d.unlock()
	h, warn, err := openRaw(openPath)
	if err != nil {
		return nil, err
	}
	d.h = h
	if err := d.setup(opt, forced, warn); err != nil {
		d.closeLocked()
		return nil, err
	}
	if opt.RawTiles && d.src == nil && !d.hdf && openPath == path {
		d.raw, _ = newRawTiles(d.h, d.band, path) // errNoRaw: GDAL reads it
	}
	return d, nil
}

func openRaw(path string) (C.GDALDatasetH, string, error) {
	cp := C.CString(path)
	defer C.free(unsafe.Pointer(cp))
	var e C.rf_err
	h := C.rf_open(cp, &e)
	if h == nil {
		if err := cErr(&e, "read grid "+path); err != nil {
			return nil, "", err
		}
		return nil, "", fmt.Errorf("read grid %s: GDAL cannot open it", path)
	}
	return h, cWarn(&e), nil
}

// subdataset is one entry of a file's SUBDATASETS list.
type subdataset struct{ name, desc, variable string }

func subdatasetsOf(h C.GDALDatasetH) []subdataset {
	md := metadataOf(C.GDALMajorObjectH(h), "SUBDATASETS")
	var out []subdataset
	for i := 1; ; i++ {
		name, ok := md[fmt.Sprintf("SUBDATASET_%d_NAME", i)]
		if !ok {
			break
		}
		v := name
		if j := strings.LastIndex(name, ":"); j >= 0 {
			v = name[j+1:]
		}
		v = strings.TrimLeft(strings.Trim(v, `"`), "/")
		out = append(out, subdataset{name: name, desc: md[fmt.Sprintf("SUBDATASET_%d_DESC", i)], variable: v})
	}
	return out
}

// setup resolves subdatasets and reprojection and builds the header and metadata. The caller
// holds the locks.
func (d *Dataset) setup(opt ReadOptions, forced *geo.Registration, warn string) error {
	var info C.rf_info_t
	var e C.rf_err
	if C.rf_info(d.h, C.int(d.band), &info, &e) == 0 {
		return cErr(&e, "read grid "+d.path)
	}
	if info.nbands == 0 {
		subs := subdatasetsOf(d.h)
		if len(subs) == 0 {
			return fmt.Errorf("read grid %s: the file holds no raster band", d.path)
		}
		var pick *subdataset
		if opt.Variable != "" {
			for i := range subs {
				s := &subs[i]
				if s.variable == opt.Variable || s.name == opt.Variable || lastPathElem(s.variable) == opt.Variable {
					pick = s
					break
				}
			}
			if pick == nil {
				return fmt.Errorf("read grid %s: %w: %q; the file holds: %s", d.path, ErrNoSuchVariable, opt.Variable, listSubdatasets(subs))
			}
		} else if len(subs) == 1 {
			pick = &subs[0]
		} else {
			return fmt.Errorf("read grid %s: %w: %s (set the variable, or open NETCDF:\"file\":variable)", d.path, ErrSeveralVariables, listSubdatasets(subs))
		}
		d.closeRaw(d.h)
		d.h = nil
		h, w, err := openRaw(pick.name)
		if err != nil {
			return err
		}
		d.h = h
		warn = joinWarn(warn, w)
		opt.Variable = "" // chosen
		if C.rf_info(d.h, C.int(d.band), &info, &e) == 0 {
			return cErr(&e, "read grid "+pick.name)
		}
	}
	driver := C.GoString(&info.driver[0])
	if isHDFDriver(driver) && !d.hdf {
		// Opened without the process-wide lock (unrecognised magic); take it from now on.
		// The caller's deferred unlock releases d.mu only once, so lock hdfMu here and let
		// unlock release both.
		hdfMu.Lock()
		d.hdf = true
	}
	if d.band > int(info.nbands) {
		return fmt.Errorf("read grid %s: band %d requested, the file has %d", d.path, d.band, int(info.nbands))
	}
	dsMD := metadataOf(C.GDALMajorObjectH(d.h), "")
	band := C.GDALGetRasterBand(d.h, C.int(d.band))
	bandMD := metadataOf(C.GDALMajorObjectH(band), "")
	if opt.Variable != "" {
		if v, ok := bandMD["NETCDF_VARNAME"]; ok && v != opt.Variable {
			return fmt.Errorf("read grid %s: %w: %q; the file holds %q", d.path, ErrNoSuchVariable, opt.Variable, v)
		}
	}
	crsName := C.GoString(&info.crs_name[0])
	if info.crs_kind == 2 || info.crs_kind == 3 {
		if !opt.WarpToLonLat {
			kind := "projected"
			if info.crs_kind == 3 {
				kind = "non-geographic"
			}
			return fmt.Errorf("read grid %s: %w (its CRS is %s: %q); reproject it to EPSG:4326 or ask for reprojection to lon/lat", d.path, ErrProjected, kind, crsName)
		}
		srcInfo := info
		var e2 C.rf_err
		w := C.rf_warp_lonlat(d.h, &e2)
		if w == nil {
			return cErr(&e2, "reproject grid "+d.path)
		}
		d.src, d.h = d.h, w
		warn = joinWarn(warn, cWarn(&e2))
		if C.rf_info(d.h, C.int(d.band), &info, &e) == 0 {
			return cErr(&e, "reproject grid "+d.path)
		}
		crsName = C.GoString(&info.crs_name[0]) + " (reprojected from " + crsName + ")"
		// The warp resamples raw values (no-data honoured) but does not carry the source's
		// units or packing: take them from the source band.
		info.units = srcInfo.units
		info.scale, info.offset = srcInfo.scale, srcInfo.offset
	}
	if info.has_gt == 0 {
		return fmt.Errorf("read grid %s: %w", d.path, ErrNoGeoreference)
	}
	gt := [6]float64{}
	for i := range gt {
		gt[i] = float64(info.gt[i])
	}
	nx, ny := int(info.nx), int(info.ny)
	if math.Abs(gt[2])*float64(ny) > 1e-9*math.Abs(gt[1]) || math.Abs(gt[4])*float64(nx) > 1e-9*math.Abs(gt[5]) {
		return fmt.Errorf("read grid %s: %w (geotransform %v)", d.path, ErrRotated, gt)
	}
	if !(gt[1] > 0) || gt[5] == 0 || math.IsInf(gt[1], 0) || math.IsNaN(gt[5]) || math.IsInf(gt[5], 0) ||
		math.IsNaN(gt[0]) || math.IsInf(gt[0], 0) || math.IsNaN(gt[3]) || math.IsInf(gt[3], 0) {
		return fmt.Errorf("read grid %s: unsupported geotransform %v (columns must run west to east)", d.path, gt)
	}
	if info.crs_kind == 1 {
		f := float64(info.angular_deg)
		for _, i := range []int{0, 1, 3, 5} {
			gt[i] *= f
		}
		gt[0] += float64(info.prime_meridian_deg)
	}
	g := geo.Grid{NX: nx, NY: ny, DX: gt[1], West: gt[0] + gt[1]/2}
	if gt[5] < 0 {
		g.DY = -gt[5]
		g.North = gt[3] + gt[5]/2
	} else {
		d.flip = true
		g.DY = gt[5]
		g.North = gt[3] + gt[5]*(float64(ny)-0.5)
	}
	if math.Abs(g.North-90) < 1e-6*g.DY {
		g.North = 90
	}
	south := g.North - float64(ny-1)*g.DY
	if g.North > 90 || south < -90-1e-6*g.DY || math.Abs(g.West) > 720 {
		what := "its"
		if info.crs_kind == 0 {
			what = "it has no CRS and its"
		}
		return fmt.Errorf("read grid %s: %w: %s sample positions (lon %g.., lat %g..%g) are not longitudes/latitudes",
			d.path, ErrProjected, what, g.West, south, g.North)
	}
	// registration
	switch {
	case forced != nil:
		g.Registration = *forced
	default:
		g.Registration = detectRegistration(driver, dsMD, g)
	}
	d.header = g
	d.hasNodata = info.has_nodata != 0
	d.nodata = float32(info.nodata)
	d.scale, d.offset = float64(info.scale), float64(info.offset)
	if d.scale == 0 {
		d.scale = 1
	}
	m := Meta{
		Units:        C.GoString(&info.units[0]),
		Metadata:     dsMD,
		BandMetadata: bandMD,
		Driver:       driver,
		CRS:          crsName,
	}
	if m.Units == "" {
		m.Units = bandMD["units"]
	}
	m.Name = bandMD["NETCDF_VARNAME"]
	if m.Name == "" {
		m.Name = C.GoString(&info.desc[0])
	}
	m.LongName = firstOf(bandMD, "long_name")
	if m.LongName == "" {
		m.LongName = dsMD["long_name"]
	}
	if d.hasNodata {
		v := float64(info.nodata)
		m.NoData = &v
	}
	m.Title = firstOf(dsMD, "NC_GLOBAL#title", "title", "TIFFTAG_IMAGEDESCRIPTION")
	m.Source = firstOf(dsMD, "NC_GLOBAL#source", "source")
	m.History = firstOf(dsMD, "NC_GLOBAL#history", "history")
	m.Sense = detectSense(driver, dsMD, bandMD)
	if w := joinWarn(warn, ""); w != "" {
		m.Warnings = strings.Split(w, "; ")
	}
	d.meta = m
	return nil
}

func lastPathElem(s string) string {
	if i := strings.LastIndex(s, "/"); i >= 0 {
		return s[i+1:]
	}
	return s
}

func listSubdatasets(subs []subdataset) string {
	parts := make([]string, len(subs))
	for i, s := range subs {
		parts[i] = s.variable
		if s.desc != "" {
			parts[i] += " (" + s.desc + ")"
		}
	}
	return strings.Join(parts, ", ")
}

func joinWarn(a, b string) string {
	switch {
	case a == "":
		return b
	case b == "":
		return a
	}
	return a + "; " + b
}

func firstOf(m map[string]string, keys ...string) string {
	for _, k := range keys {
		if v, ok := m[k]; ok && v != "" {
			return v
		}
	}
	return ""
}

// detectRegistration applies the file-based rules documented on Open.
func detectRegistration(driver string, md map[string]string, g geo.Grid) geo.Registration {
	for _, k := range []string{"grid_registration", "NC_GLOBAL#grid_registration"} {
		if v, ok := md[k]; ok {
			if r, err := geo.ParseRegistration(v); err == nil {
				return r
			}
		}
	}
	switch strings.ToLower(md["AREA_OR_POINT"]) {
	case "area":
		return geo.CellCentre
	case "point":
		return geo.Node
	}
	if v, ok := md["NC_GLOBAL#node_offset"]; ok {
		if n, err := strconv.ParseFloat(strings.TrimSpace(v), 64); err == nil {
			if n == 1 {
				return geo.CellCentre
			}
			return geo.Node
		}
	}
	keys := make([]string, 0, len(md))
	for k := range md {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		if v, attr, ok := strings.Cut(k, "#"); ok && attr == "bounds" {
			switch strings.ToLower(v) {
			case "lon", "longitude", "lat", "latitude", "x", "y":
				return geo.CellCentre
			}
		}
	}
	if driver == "netCDF" {
		return geo.Node
	}
	return geo.CellCentre
}

// detectSense reads a declared vertical sense: BAG stores elevation, positive up (BAG Format
// Specification Document 1.6, elevation layer; from memory); CF data variables declare it by
// standard_name (CF Standard Name Table: sea_floor_depth_below_* are depths positive down;
// altitude and height_above_* are positive up) or a "positive" attribute (CF-1.8 §4.3).
func detectSense(driver string, ds, band map[string]string) geo.VerticalSense {
	if driver == "BAG" {
		return geo.ElevationPositiveUp
	}
	if s, ok := band["vertical_sense"]; ok {
		if v, err := geo.ParseVerticalSense(s); err == nil && v != geo.SenseUnknown {
			return v
		}
	}
	if s, ok := ds["vertical_sense"]; ok {
		if v, err := geo.ParseVerticalSense(s); err == nil && v != geo.SenseUnknown {
			return v
		}
	}
	switch strings.ToLower(band["positive"]) {
	case "down":
		return geo.DepthPositiveDown
	case "up":
		return geo.ElevationPositiveUp
	}
	sn := strings.ToLower(band["standard_name"])
	switch {
	case strings.HasPrefix(sn, "sea_floor_depth"), sn == "depth":
		return geo.DepthPositiveDown
	case strings.Contains(sn, "altitude"), strings.HasPrefix(sn, "height_above"), sn == "height":
		return geo.ElevationPositiveUp
	}
	return geo.SenseUnknown
}

// Header returns the grid's description (registration, origin, spacing, size) without data.
func (d *Dataset) Header() geo.Grid {
	h := d.header
	h.Data = nil
	return h
}

// Meta returns the file's metadata.
func (d *Dataset) Meta() Meta { return d.meta }

// ReadRows fills dst with len(dst)/NX whole rows starting at row row0 (row 0 northernmost):
// no-data becomes NaN and scale/offset packing is applied.
func (d *Dataset) ReadRows(row0 int, dst []float32) error {
	nx, ny := d.header.NX, d.header.NY
	if nx == 0 || len(dst)%nx != 0 {
		return fmt.Errorf("read rows: buffer of %d values is not whole rows of %d", len(dst), nx)
	}
	n := len(dst) / nx
	if row0 < 0 || row0+n > ny {
		return fmt.Errorf("read rows %d..%d: the grid has %d rows", row0, row0+n-1, ny)
	}
	if n == 0 {
		return nil
	}
	src0 := row0
	if d.flip {
		src0 = ny - row0 - n
	}
	d.lock()
	if d.h == nil {
		d.unlock()
		return errors.New("read rows: dataset is closed")
	}
	if d.raw != nil {
		err := d.raw.read(src0, dst)
		d.unlock()
		if err != nil {
			return fmt.Errorf("read grid %s: %w", d.path, err)
		}
	} else {
		var e C.rf_err
		ok := C.rf_read_rows(d.h, C.int(d.band), C.int(src0), C.int(n), C.int(nx), (*C.float)(unsafe.Pointer(&dst[0])), &e)
		d.unlock()
		if ok == 0 {
			return cErr(&e, "read grid "+d.path)
		}
	}
	if d.flip {
		flipRows(dst, nx, n)
	}
	unpack(dst, d.hasNodata, d.nodata, d.scale, d.offset)
	return nil
}

// flipRows reverses the order of the n rows of nx values in dst (a south-up raster read
// north first).
func flipRows(dst []float32, nx, n int) {
	tmp := make([]float32, nx)
	for i, j := 0, n-1; i < j; i, j = i+1, j-1 {
		a, b := dst[i*nx:(i+1)*nx], dst[j*nx:(j+1)*nx]
		copy(tmp, a)
		copy(a, b)
		copy(b, tmp)
	}
}

// unpack turns no-data into NaN and applies value = raw·scale + offset.
func unpack(v []float32, hasNodata bool, nodata float32, scale, offset float64) {
	nan := float32(math.NaN())
	checkND := hasNodata && nodata == nodata
	if scale == 1 && offset == 0 {
		if checkND {
			for i, x := range v {
				if x == nodata {
					v[i] = nan
				}
			}
		}
		return
	}
	for i, x := range v {
		if checkND && x == nodata {
			v[i] = nan
			continue
		}
		v[i] = float32(float64(x)*scale + offset)
	}
}

// Close releases the dataset. Further reads fail.
func (d *Dataset) Close() error {
	d.lock()
	defer d.unlock()
	return d.closeLocked()
}

func (d *Dataset) closeLocked() error {
	d.raw.close()
	d.raw = nil
	var err error
	if d.h != nil {
		err = d.closeRaw(d.h)
		d.h = nil
	}
	if d.src != nil {
		if e := d.closeRaw(d.src); err == nil {
			err = e
		}
		d.src = nil
	}
	return err
}

func (d *Dataset) closeRaw(h C.GDALDatasetH) error {
	var e C.rf_err
	C.rf_close(h, &e)
	return cErr(&e, "close grid "+d.path)
}

// BlockBytes is the size in bytes of one block of the band as stored (block width × height ×
// bytes per cell, GDALGetBlockSize): GDAL decodes whole blocks, so reading any cell of a file
// whose blocks are huge (one compressed 16000 × 16000 strip) needs that much memory, whatever
// its cache size (a block larger than the cache is still held while it is read).
func (d *Dataset) BlockBytes() int64 {
	d.lock()
	defer d.unlock()
	band := C.GDALGetRasterBand(d.h, C.int(d.band))
	if band == nil {
		return 0
	}
	var bx, by C.int
	C.GDALGetBlockSize(band, &bx, &by)
	size := C.GDALGetDataTypeSizeBytes(C.GDALGetRasterDataType(band))
	return int64(bx) * int64(by) * int64(size)
}

// BlockRows is the height in rows of the band's storage blocks (GDALGetBlockSize) when reads
// of whole blocks of rows, counted from the northernmost row, line up with them; 0 when they
// do not (a south-up file whose height is not a multiple of the block height) or the band is
// gone. A reader of a tiled file whose row of tiles does not fit in GDAL's block cache decodes
// every tile once only if it reads whole rows of tiles at a time: a read of half a tile's rows
// decodes the whole tile, and the cache has dropped it before the other half is read.
func (d *Dataset) BlockRows() int {
	d.lock()
	defer d.unlock()
	if d.h == nil {
		return 0
	}
	band := C.GDALGetRasterBand(d.h, C.int(d.band))
	if band == nil {
		return 0
	}
	var bx, by C.int
	C.GDALGetBlockSize(band, &bx, &by)
	if by <= 0 || (d.flip && d.header.NY%int(by) != 0) {
		return 0
	}
	return int(by)
}

// ReadsRaw reports whether ReadRows reads the file's blocks itself, without GDAL
// (ReadOptions.RawTiles granted: an uncompressed float32 GeoTIFF).
func (d *Dataset) ReadsRaw() bool {
	d.lock()
	defer d.unlock()
	return d.raw != nil
}
