package gdal

/*
#include <stdlib.h>
#include <cpl_vsi.h>
#include "rfgdal.h"
*/
import "C"

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"sync/atomic"
	"time"
	"unsafe"

	"ridgeflank/geo"
)

// NetCDFFillFloat is the netCDF default fill value for float variables (NC_FILL_FLOAT,
// netCDF User Guide), stored for NaN cells when Meta.NoData is nil.
const NetCDFFillFloat = 9.969209968386869e36

// WriteCOG writes g as a Cloud-Optimized GeoTIFF: float32, DEFLATE with the floating-point
// predictor, 512×512 tiles, averaged overviews, EPSG:4326, no-data NaN (or Meta.NoData). Units,
// name, long name, title, source, history, registration and vertical sense are stored as GDAL
// metadata items (band unit type and description, dataset items) and the title as the TIFF
// image description. Node grids are marked AREA_OR_POINT=Point. The file is written next to
// path and renamed into place.
func WriteCOG(path string, g *geo.Grid, m Meta) error {
	return writeAtomic(path, ".tif", func(tmp string) error { return writeRaster("COG", tmp, g, m) })
}

// WriteNetCDF writes g as a CF-1.8 netCDF-4 (classic model) file with DEFLATE compression:
// lon/lat coordinate variables (degrees_east/degrees_north), one float variable named Meta.Name
// (default "z") with units, long_name and _FillValue (Meta.NoData, default NetCDFFillFloat), a
// WGS84 grid mapping, and global attributes Conventions, title, source, history (a line is
// appended) and grid_registration. Rows are stored south to north as netCDF readers expect;
// Read returns them north first again. A grid containing NaN is copied once to store the fill
// value (so peak memory is about twice the grid); the caller's grid is never modified.
func WriteNetCDF(path string, g *geo.Grid, m Meta) error {
	return writeAtomic(path, ".nc", func(tmp string) error { return writeRaster("netCDF", tmp, g, m) })
}

var vsiSeq atomic.Uint64

// EncodeCOG returns the bytes of WriteCOG's file, built in GDAL's in-memory file system.
func EncodeCOG(g *geo.Grid, m Meta) ([]byte, error) {
	ensureInit()
	name := fmt.Sprintf("/vsimem/ridgeflank-%d-%d.tif", os.Getpid(), vsiSeq.Add(1))
	cn := C.CString(name)
	defer C.free(unsafe.Pointer(cn))
	if err := writeRaster("COG", name, g, m); err != nil {
		C.VSIUnlink(cn)
		return nil, err
	}
	var n C.ulonglong
	p := C.rf_vsimem_take(cn, &n)
	if p == nil {
		return nil, fmt.Errorf("encode COG: in-memory file %s vanished", name)
	}
	defer C.VSIFree(unsafe.Pointer(p))
	return append([]byte(nil), unsafe.Slice((*byte)(unsafe.Pointer(p)), int(n))...), nil
}

// EncodeNetCDF returns the bytes of WriteNetCDF's file. The netCDF library cannot write to
// GDAL's in-memory file system, so a temporary file is used and removed.
func EncodeNetCDF(g *geo.Grid, m Meta) ([]byte, error) {
	f, err := os.CreateTemp("", "ridgeflank-*.nc")
	if err != nil {
		return nil, fmt.Errorf("encode netCDF: %w", err)
	}
	name := f.Name()
	f.Close()
	defer os.Remove(name)
	if err := writeRaster("netCDF", name, g, m); err != nil {
		return nil, err
	}
	return os.ReadFile(name)
}

// writeAtomic runs write on a temporary name in path's directory and renames it to path. The
// temporary name ends in ext because GDAL's netCDF driver only recognises a netCDF-4 file by
// its extension when it reopens what it wrote.
func writeAtomic(path, ext string, write func(tmp string) error) error {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp := filepath.Join(dir, fmt.Sprintf(".%s.tmp-%d-%d%s", base, os.Getpid(), vsiSeq.Add(1), ext))
	if err := write(tmp); err != nil {
		os.Remove(tmp)
		return err
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	return nil
}

var ncNameRE = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

func writeRaster(driver, path string, g *geo.Grid, m Meta) error {
	ensureInit()
	if err := g.Validate(); err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	netcdf := driver == "netCDF"
	l, err := layoutOf(g, m, netcdf)
	if err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	data := g.Data
	if !math.IsNaN(l.nodata) {
		nd32 := float32(l.nodata)
		var cp []float32
		for i, v := range data {
			if v != v {
				if cp == nil {
					cp = append([]float32(nil), data...)
				}
				cp[i] = nd32
			}
		}
		if cp != nil {
			data = cp
		}
	}
	gt := geoTransform(g)
	cDriver, cPath := C.CString(driver), C.CString(path)
	defer C.free(unsafe.Pointer(cDriver))
	defer C.free(unsafe.Pointer(cPath))
	c := l.toC(m.Units)
	defer c.free()
	if netcdf {
		hdfMu.Lock()
		defer hdfMu.Unlock()
	}
	var e C.rf_err
	ok := C.rf_write(cDriver, cPath, (*C.float)(unsafe.Pointer(&data[0])), C.int(g.NX), C.int(g.NY), &gt[0],
		1, C.double(l.nodata), c.units, c.desc, c.ds, c.band, c.opts, &e)
	if ok == 0 {
		if err := cErr(&e, "write grid "+path); err != nil {
			return err
		}
		return fmt.Errorf("write grid %s: GDAL failed", path)
	}
	if netcdf {
		return ncPutGlobals(path, l.ncText)
	}
	return nil
}

// geoTransform is g's GDAL geotransform: the outer corner of the first cell for every
// registration (see Open), north up.
func geoTransform(g *geo.Grid) [6]C.double {
	return [6]C.double{C.double(g.West - g.DX/2), C.double(g.DX), 0, C.double(g.North + g.DY/2), 0, C.double(-g.DY)}
}

// cogOptions are the COG creation options of every COG this package writes.
var cogOptions = []string{"COMPRESS=DEFLATE", "PREDICTOR=YES", "BLOCKSIZE=512", "BIGTIFF=IF_SAFER",
	"NUM_THREADS=ALL_CPUS", "RESAMPLING=AVERAGE", "OVERVIEWS=AUTO"}

// layout is what a writer records besides the values: the band name, the value stored for
// NaN, dataset and band metadata items and the driver's creation options.
type layout struct {
	name         string
	nodata       float64
	dsMD, bandMD []string
	copts        []string
	// ncText are netCDF global attributes written with the netCDF library once GDAL has
	// written the file: text GDAL's driver would not keep as given (a value in braces, such as
	// JSON, is read by it as a list of numbers and loses its quotes).
	ncText map[string]string
}

// cLayout is a layout with the band's units as C strings, for one call of a C helper.
type cLayout struct {
	units, desc    *C.char
	ds, band, opts **C.char
}

// toC converts l (and the band's units) to C strings; free releases them.
func (l layout) toC(units string) cLayout {
	return cLayout{units: C.CString(units), desc: C.CString(l.name),
		ds: cStrings(l.dsMD), band: cStrings(l.bandMD), opts: cStrings(l.copts)}
}

func (c cLayout) free() {
	C.free(unsafe.Pointer(c.units))
	C.free(unsafe.Pointer(c.desc))
	freeCStrings(c.ds)
	freeCStrings(c.band)
	freeCStrings(c.opts)
}

// layoutOf builds the layout of g written with m as netCDF or as COG (see WriteCOG and
// WriteNetCDF). Only the header of g is used.
func layoutOf(g *geo.Grid, m Meta, netcdf bool) (layout, error) {
	name := m.Name
	if name == "" {
		name = "z"
	}
	if netcdf && !ncNameRE.MatchString(name) {
		return layout{}, fmt.Errorf("variable name %q must be letters, digits and _ (not starting with a digit)", name)
	}
	// no-data
	nd := math.NaN()
	if m.NoData != nil {
		nd = *m.NoData
	} else if netcdf {
		nd = NetCDFFillFloat
	}
	history := strings.TrimRight(m.History, "\n")
	line := "ridgeflank: written as " + map[bool]string{true: "CF netCDF", false: "COG"}[netcdf]
	if !m.Written.IsZero() {
		line = m.Written.UTC().Format(time.RFC3339) + " " + line
	}
	if history != "" {
		history += "\n"
	}
	history += line
	global := map[string]string{
		"title":             m.Title,
		"source":            m.Source,
		"history":           history,
		"grid_registration": g.Registration.String(),
	}
	if m.Sense != geo.SenseUnknown {
		global["vertical_sense"] = m.Sense.String()
	}
	var dsMD, bandMD []string
	var ncText map[string]string
	add := func(list *[]string, k, v string) {
		if v != "" {
			*list = append(*list, k+"="+v)
		}
	}
	extra := sortedKeys(m.Metadata)
	if netcdf {
		global["Conventions"] = "CF-1.8"
		for _, k := range extra {
			if strings.Contains(k, "#") {
				continue // attributes of other variables in the source file
			}
			if _, ours := global[k]; !ours {
				global[k] = m.Metadata[k]
			}
		}
		for _, k := range sortedKeys(global) {
			if strings.HasPrefix(strings.TrimSpace(global[k]), "{") {
				if !ncNameRE.MatchString(k) {
					return layout{}, fmt.Errorf("attribute name %q must be letters, digits and _", k)
				}
				if ncText == nil {
					ncText = map[string]string{}
				}
				ncText[k] = global[k]
				continue
			}
			add(&dsMD, "NC_GLOBAL#"+k, global[k])
		}
		add(&bandMD, "NETCDF_VARNAME", name)
		add(&bandMD, "long_name", m.LongName)
		add(&bandMD, "units", m.Units)
		if m.Sense != geo.SenseUnknown {
			add(&bandMD, "vertical_sense", m.Sense.String())
		}
		for _, k := range sortedKeys(m.BandMetadata) {
			switch k {
			case "NETCDF_VARNAME", "_FillValue", "grid_mapping", "units", "long_name", "vertical_sense", "missing_value", "scale_factor", "add_offset":
				continue
			}
			add(&bandMD, k, m.BandMetadata[k])
		}
	} else {
		for _, k := range extra {
			if strings.Contains(k, "#") || strings.HasPrefix(k, "AREA_OR_POINT") {
				continue
			}
			if _, ours := global[k]; !ours {
				global[k] = m.Metadata[k]
			}
		}
		global["units"] = m.Units
		global["long_name"] = m.LongName
		for _, k := range sortedKeys(global) {
			add(&dsMD, k, global[k])
		}
		add(&dsMD, "TIFFTAG_IMAGEDESCRIPTION", m.Title)
		add(&dsMD, "TIFFTAG_SOFTWARE", "ridgeflank")
		if g.Registration == geo.Node {
			add(&dsMD, "AREA_OR_POINT", "Point")
		} else {
			add(&dsMD, "AREA_OR_POINT", "Area")
		}
	}
	copts := cogOptions
	if netcdf {
		copts = []string{"FORMAT=NC4C", "COMPRESS=DEFLATE", "ZLEVEL=4", "WRITE_BOTTOMUP=YES",
			"WRITE_GDAL_HISTORY=NO", "WRITE_GDAL_VERSION=NO"}
	}
	return layout{name: name, nodata: nd, dsMD: dsMD, bandMD: bandMD, copts: copts, ncText: ncText}, nil
}

func sortedKeys(m map[string]string) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}
