package gdal

/*
#include <stdlib.h>
#include "rfgdal.h"
*/
import "C"

import (
	"errors"
	"fmt"
	"unsafe"

	"ridgeflank/geo"
)

// Level describes one resolution level of a raster: level 0 is the full-resolution grid, level
// k ≥ 1 the file's k-th overview (for the COG files ridgeflank stores: area-weighted block means
// made by GDAL's AVERAGE resampling, each level about half the size of the one before).
type Level struct {
	// Grid is the level's shape without data. An overview covers the same extent as the full
	// grid (the GDAL convention), so its spacing is the extent divided by its size; its samples
	// are cell centres, whatever the full grid's registration.
	Grid geo.Grid
	// Factor is the level's spacing over the full grid's, e.g. 4 for a quarter-size overview
	// (not always a whole number when the full size is not divisible).
	Factor float64
}

// Levels lists the full-resolution grid and its overviews, finest first.
func (d *Dataset) Levels() ([]Level, error) {
	base := d.Header()
	out := []Level{{Grid: base, Factor: 1}}
	var sizes [64]C.int
	var e C.rf_err
	d.lock()
	if d.h == nil {
		d.unlock()
		return nil, errors.New("levels: dataset is closed")
	}
	n := int(C.rf_overviews(d.h, C.int(d.band), &sizes[0], C.int(len(sizes)/2), &e))
	d.unlock()
	if err := cErr(&e, "overviews of "+d.path); err != nil {
		return nil, err
	}
	// The full grid's outer edges (for node grids, half a spacing outside the outer nodes: GDAL
	// treats every raster as cells).
	west, north := base.West-base.DX/2, base.North+base.DY/2
	widthDeg, heightDeg := float64(base.NX)*base.DX, float64(base.NY)*base.DY
	for i := 0; i < n; i++ {
		nx, ny := int(sizes[2*i]), int(sizes[2*i+1])
		if nx <= 0 || ny <= 0 {
			continue
		}
		dx, dy := widthDeg/float64(nx), heightDeg/float64(ny)
		g := geo.Grid{NX: nx, NY: ny, West: west + dx/2, North: north - dy/2, DX: dx, DY: dy, Registration: geo.CellCentre}
		if d.flip {
			// A south-up file's overviews are south-up too; ReadWindow mirrors rows.
			g.North = north - dy/2
		}
		out = append(out, Level{Grid: g, Factor: dx / base.DX})
	}
	return out, nil
}

// ReadWindow fills dst (len nx·ny, row-major, row 0 northernmost) with the window of level
// level (0 = full resolution, k = the k-th overview; see Levels) whose north-west sample is at
// column col0 and row row0 of that level. No-data becomes NaN and scale/offset packing is
// applied, as ReadRows does.
func (d *Dataset) ReadWindow(level, col0, row0, nx, ny int, dst []float32) error {
	if nx <= 0 || ny <= 0 || len(dst) != nx*ny {
		return fmt.Errorf("read window: buffer of %d values for %d×%d", len(dst), nx, ny)
	}
	src0 := row0
	if d.flip {
		lny := d.header.NY
		if level > 0 {
			lv, err := d.Levels()
			if err != nil {
				return err
			}
			if level >= len(lv) {
				return fmt.Errorf("read window: no level %d", level)
			}
			lny = lv[level].Grid.NY
		}
		src0 = lny - row0 - ny
	}
	d.lock()
	if d.h == nil {
		d.unlock()
		return errors.New("read window: dataset is closed")
	}
	var e C.rf_err
	ok := C.rf_read_window(d.h, C.int(d.band), C.int(level), C.int(col0), C.int(src0), C.int(nx), C.int(ny),
		(*C.float)(unsafe.Pointer(&dst[0])), &e)
	d.unlock()
	if ok == 0 {
		return cErr(&e, "read grid "+d.path)
	}
	if d.flip {
		flipRows(dst, nx, ny)
	}
	unpack(dst, d.hasNodata, d.nodata, d.scale, d.offset)
	return nil
}

// SetCacheBytes sets the size of GDAL's own raster block cache (GDALSetCacheMax64), which holds
// compressed-file blocks between reads in this process.
func SetCacheBytes(n int64) {
	ensureInit()
	C.rf_set_cache_max(C.longlong(n))
}
