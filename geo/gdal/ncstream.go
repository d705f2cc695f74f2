package gdal

/*
#cgo pkg-config: netcdf
#include <stdlib.h>
#include <string.h>
#include <netcdf.h>
#include "rfgdal.h"

// rf_nc_rename_var renames variable from to to in the netCDF file path (GDAL's netCDF driver
// names the variables of a file it creates band by band Band1, Band2, ...).
static int rf_nc_rename_var(const char *path, const char *from, const char *to) {
	int nc, id, st;
	if ((st = nc_open(path, NC_WRITE, &nc)) != NC_NOERR) return st;
	if ((st = nc_inq_varid(nc, from, &id)) == NC_NOERR && (st = nc_redef(nc)) == NC_NOERR) {
		st = nc_rename_var(nc, id, to);
		int st2 = nc_enddef(nc);
		if (st == NC_NOERR) st = st2;
	}
	int st3 = nc_close(nc);
	return st != NC_NOERR ? st : st3;
}

// rf_nc_put_global sets the text attribute key of the netCDF file path's global attributes.
static int rf_nc_put_global(const char *path, const char *key, const char *value) {
	int nc, st;
	if ((st = nc_open(path, NC_WRITE, &nc)) != NC_NOERR) return st;
	if ((st = nc_redef(nc)) == NC_NOERR) {
		st = nc_put_att_text(nc, NC_GLOBAL, key, strlen(value), value);
		int st2 = nc_enddef(nc);
		if (st == NC_NOERR) st = st2;
	}
	int st3 = nc_close(nc);
	return st != NC_NOERR ? st : st3;
}

static const char *rf_nc_strerror(int st) { return nc_strerror(st); }
*/
import "C"

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"unsafe"

	"ridgeflank/geo"
)

// NetCDFStream writes a grid as WriteNetCDF's CF netCDF-4 file (same variables, attributes,
// fill value and creation options) block of rows by block of rows, without holding the grid:
// GDAL's netCDF driver creates the file and each WriteRows call writes its rows through
// GDAL's raster I/O (rows are stored south to north as WriteNetCDF stores them; the driver
// places each block), and Finish gives the variable its name with the netCDF library. The file is written under a temporary name in path's directory and
// renamed into place by Finish; Close before Finish removes it. Peak memory is one block (a
// copy of it when it holds NaN, to store the fill value). A NetCDFStream is used by one
// goroutine; Close it.
type NetCDFStream struct {
	h      C.GDALDatasetH
	name   string            // the variable's name
	ncText map[string]string // global attributes the netCDF library writes (layout.ncText)
	header geo.Grid
	path   string
	tmp    string
	fill   float32
	next   int
	buf    []float32
}

// NetCDFBlockRows is the number of rows a writer should hand a NetCDFStream at a time for a
// grid nx columns wide within blockBytes of float32: between 16 and 256 (a NetCDFStream takes
// any whole number of rows; this bounds the caller's buffer).
func NetCDFBlockRows(nx, blockBytes int) int {
	return min(256, max(16, blockBytes/(4*max(nx, 1))))
}

// NewNetCDFStream starts the netCDF file path for the lattice of header (its Data is ignored)
// with the metadata m (as WriteNetCDF records it).
func NewNetCDFStream(path string, header geo.Grid, m Meta) (*NetCDFStream, error) {
	ensureInit()
	header.Data = nil
	if header.NX <= 0 || header.NY <= 0 || !(header.DX > 0) || !(header.DY > 0) {
		return nil, fmt.Errorf("write grid %s: invalid lattice %d×%d, spacing %g×%g", path, header.NX, header.NY, header.DX, header.DY)
	}
	l, err := layoutOf(&header, m, true)
	if err != nil {
		return nil, fmt.Errorf("write grid %s: %w", path, err)
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	s := &NetCDFStream{header: header, path: path, name: l.name, fill: float32(l.nodata), ncText: l.ncText,
		tmp: filepath.Join(dir, fmt.Sprintf(".%s.tmp-%d-%d.nc", base, os.Getpid(), vsiSeq.Add(1)))}
	gt := geoTransform(&header)
	cDriver, cPath := C.CString("netCDF"), C.CString(s.tmp)
	defer C.free(unsafe.Pointer(cDriver))
	defer C.free(unsafe.Pointer(cPath))
	c := l.toC(m.Units)
	defer c.free()
	hdfMu.Lock()
	defer hdfMu.Unlock()
	var e C.rf_err
	s.h = C.rf_create(cDriver, cPath, C.int(header.NX), C.int(header.NY), &gt[0], 1, C.double(l.nodata),
		c.units, c.desc, c.ds, c.band, c.opts, &e)
	if s.h == nil {
		os.Remove(s.tmp)
		if err := cErr(&e, "write grid "+path); err != nil {
			return nil, err
		}
		return nil, fmt.Errorf("write grid %s: GDAL could not create the file", path)
	}
	return s, nil
}

// WriteRows writes the next block: rows row0 .. row0+n−1 (row 0 northernmost), where row0 is
// the first row not yet written and len(rows) = n·NX for any n ≥ 1 that fits. NaN is stored as
// the fill value.
func (s *NetCDFStream) WriteRows(row0 int, rows []float32) error {
	if s.h == nil {
		return errors.New("write grid: stream is finished or closed")
	}
	nx := s.header.NX
	n := len(rows) / nx
	if row0 != s.next || n <= 0 || len(rows) != n*nx || row0+n > s.header.NY {
		return fmt.Errorf("write grid %s: rows %d.. (%d values) are not the next whole rows (row %d)", s.path, row0, len(rows), s.next)
	}
	data := rows
	if !math.IsNaN(float64(s.fill)) {
		for i, v := range rows {
			if v != v {
				if cap(s.buf) < len(rows) {
					s.buf = make([]float32, len(rows))
				}
				data = s.buf[:len(rows)]
				copy(data, rows)
				for j := i; j < len(data); j++ {
					if data[j] != data[j] {
						data[j] = s.fill
					}
				}
				break
			}
		}
	}
	hdfMu.Lock()
	defer hdfMu.Unlock()
	var e C.rf_err
	if C.rf_write_rows(s.h, C.int(row0), C.int(n), C.int(nx), (*C.float)(unsafe.Pointer(&data[0])), &e) == 0 {
		if err := cErr(&e, "write grid "+s.path); err != nil {
			return err
		}
		return fmt.Errorf("write grid %s: GDAL failed", s.path)
	}
	s.next += n
	return nil
}

// Finish closes the file (GDAL flushes it), adds the global attributes of extra (known only
// once the values are written, e.g. counts; keys must be netCDF names) and renames it to
// path. Every row must have been written.
func (s *NetCDFStream) Finish(extra map[string]string) error {
	if s.h == nil {
		return errors.New("write grid: stream is finished or closed")
	}
	if s.next != s.header.NY {
		return fmt.Errorf("write grid %s: %d of %d rows written", s.path, s.next, s.header.NY)
	}
	hdfMu.Lock()
	var e C.rf_err
	C.rf_close(s.h, &e)
	hdfMu.Unlock()
	s.h = nil
	if err := cErr(&e, "write grid "+s.path); err != nil {
		os.Remove(s.tmp)
		return err
	}
	if s.name != "Band1" {
		cTmp, cFrom, cTo := C.CString(s.tmp), C.CString("Band1"), C.CString(s.name)
		defer C.free(unsafe.Pointer(cTmp))
		defer C.free(unsafe.Pointer(cFrom))
		defer C.free(unsafe.Pointer(cTo))
		hdfMu.Lock()
		st := C.rf_nc_rename_var(cTmp, cFrom, cTo)
		hdfMu.Unlock()
		if st != 0 {
			os.Remove(s.tmp)
			return fmt.Errorf("write grid %s: naming the variable %s: %s", s.path, s.name, C.GoString(C.rf_nc_strerror(st)))
		}
	}
	all := map[string]string{}
	for k, v := range s.ncText {
		all[k] = v
	}
	for k, v := range extra {
		all[k] = v
	}
	hdfMu.Lock()
	err := ncPutGlobals(s.tmp, all)
	hdfMu.Unlock()
	if err != nil {
		os.Remove(s.tmp)
		return fmt.Errorf("write grid %s: %w", s.path, err)
	}
	if err := os.Rename(s.tmp, s.path); err != nil {
		os.Remove(s.tmp)
		return fmt.Errorf("write grid %s: %w", s.path, err)
	}
	s.tmp = ""
	return nil
}

// ncPutGlobals sets the text global attributes attrs of the netCDF file path with the netCDF
// library (keys must be netCDF names). The caller holds hdfMu.
func ncPutGlobals(path string, attrs map[string]string) error {
	for _, k := range sortedKeys(attrs) {
		if !ncNameRE.MatchString(k) {
			return fmt.Errorf("attribute name %q must be letters, digits and _", k)
		}
		cPath, cKey, cVal := C.CString(path), C.CString(k), C.CString(attrs[k])
		st := C.rf_nc_put_global(cPath, cKey, cVal)
		C.free(unsafe.Pointer(cPath))
		C.free(unsafe.Pointer(cKey))
		C.free(unsafe.Pointer(cVal))
		if st != 0 {
			return fmt.Errorf("attribute %s: %s", k, C.GoString(C.rf_nc_strerror(st)))
		}
	}
	return nil
}

// Close abandons an unfinished file (removing it); after Finish it does nothing. It may be
// called more than once.
func (s *NetCDFStream) Close() error {
	if s.h != nil {
		hdfMu.Lock()
		var e C.rf_err
		C.rf_close(s.h, &e)
		hdfMu.Unlock()
		s.h = nil
	}
	if s.tmp != "" {
		os.Remove(s.tmp)
		s.tmp = ""
	}
	return nil
}
