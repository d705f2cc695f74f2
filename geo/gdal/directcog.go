package gdal

/*
#include <stdlib.h>
#include "rfgdal.h"
*/
import "C"

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"unsafe"

	"ridgeflank/geo"
)

// A COG without compression and without overviews is written in place rather than staged and
// copied by GDAL's COG driver: every tile has the same size (512 × 512 float32), so where each
// tile lies in the file is known before any value is computed. Each block of rows goes
// straight into its tiles (nothing of the grid is held), behind a region reserved for the
// header; Finish has GDAL's GeoTIFF driver write the header (image file directory,
// georeferencing, metadata, the tile tables left empty: a sparse file) in its in-memory file
// system, fills in the tile tables and writes the header into the reserved region. The layout
// is a cloud-optimized GeoTIFF's: the directory first, then the tiles in row-major order
// (TIFF 6.0, Adobe 1992, tiles §15; OGC 21-026, Cloud Optimized GeoTIFF). GDAL's own COG
// driver also writes a "ghost" structural-metadata block before the directory; this file has
// none, so GDAL does not report LAYOUT=COG for it, though its layout is the same.
const (
	directTile = 512 // tile width and height, as WriteCOG's BLOCKSIZE=512
	// directSlack is room reserved for the header beyond the tile tables (directory,
	// georeferencing keys, metadata as XML); a header that does not fit is written in front
	// of a copy of the tiles instead.
	directSlack = 256 << 10
)

// directCOG is the in-place writer of a COGStream (see above).
type directCOG struct {
	nx, ny   int
	ntx, nty int
	bigTIFF  bool
	reserved int64  // bytes before the first tile
	dest     string // the file Finish is expected to write
	tmp      string // temporary file beside dest holding the tiles
	f        *os.File
	buf      []float32 // one block's rows of one tile (or no-data padding)
}

// tileBytes is the size of one uncompressed tile.
const tileBytes = directTile * directTile * 4

func newDirectCOG(header geo.Grid, dest string) (*directCOG, error) {
	d := &directCOG{nx: header.NX, ny: header.NY, dest: dest}
	d.ntx = (d.nx + directTile - 1) / directTile
	d.nty = (d.ny + directTile - 1) / directTile
	tiles := int64(d.ntx) * int64(d.nty)
	// BigTIFF when the file could pass 4 GiB (classic TIFF offsets are 32-bit).
	d.bigTIFF = tiles*tileBytes+16*tiles+directSlack >= 1<<32-1<<20
	entry := int64(4)
	if d.bigTIFF {
		entry = 8
	}
	d.reserved = (2*entry*tiles + directSlack + 4095) &^ 4095
	dir, base := filepath.Split(dest)
	if dir == "" {
		dir = "."
	}
	tmp := filepath.Join(dir, fmt.Sprintf(".%s.tmp-%d-%d.tif", base, os.Getpid(), vsiSeq.Add(1)))
	f, err := os.OpenFile(tmp, os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o666)
	if err != nil {
		return nil, fmt.Errorf("write grid %s: %w", dest, err)
	}
	d.f, d.tmp = f, tmp
	return d, nil
}

// writeRows writes rows row0.. (n·NX values, whole rows in order, not crossing a row of
// tiles: n divides 512) into their tiles. Rows y0..y0+n−1 of a tile are one contiguous run of
// bytes in it (a tile's rows are stored in order), so each tile's part is one write from a
// buffer the size of the block: nothing more is held. After the last row, the rows of the
// bottom tiles below the grid are written as no-data (NaN), so every tile is whole.
func (d *directCOG) writeRows(row0 int, rows []float32) error {
	if !littleEndian {
		return errors.New("write grid: the in-place COG writer needs a little-endian machine")
	}
	n := len(rows) / d.nx
	y0 := row0 % directTile
	if y0+n > directTile {
		return errors.New("write grid: a block crosses a row of tiles")
	}
	ty := row0 / directTile
	d.buf = growFloat32(d.buf, n*directTile)
	nan := float32(math.NaN())
	for tx := range d.ntx {
		x0 := tx * directTile
		w := min(directTile, d.nx-x0)
		for r := range n {
			dst := d.buf[r*directTile : (r+1)*directTile]
			copy(dst, rows[r*d.nx+x0:r*d.nx+x0+w])
			for c := w; c < directTile; c++ {
				dst[c] = nan
			}
		}
		if err := d.writeTileRows(ty, tx, y0, d.buf[:n*directTile]); err != nil {
			return err
		}
	}
	if row0+n == d.ny && (y0+n)%directTile != 0 {
		pad := directTile - (y0 + n)
		d.buf = growFloat32(d.buf, pad*directTile)
		for i := range d.buf[:pad*directTile] {
			d.buf[i] = nan
		}
		for tx := range d.ntx {
			if err := d.writeTileRows(ty, tx, y0+n, d.buf[:pad*directTile]); err != nil {
				return err
			}
		}
	}
	return nil
}

// writeTileRows writes v (whole 512-value rows) into tile (ty, tx) from its row y.
func (d *directCOG) writeTileRows(ty, tx, y int, v []float32) error {
	off := d.reserved + (int64(ty)*int64(d.ntx)+int64(tx))*tileBytes + int64(y)*directTile*4
	b := unsafe.Slice((*byte)(unsafe.Pointer(&v[0])), 4*len(v))
	if _, err := d.f.WriteAt(b, off); err != nil {
		return fmt.Errorf("write grid %s: %w", d.dest, err)
	}
	return nil
}

// growFloat32 returns s with length n, reallocated only when its capacity is too small.
func growFloat32(s []float32, n int) []float32 {
	if cap(s) < n {
		return make([]float32, n)
	}
	return s[:n]
}

// littleEndian: float32 values in memory are the bytes of a little-endian ("II") TIFF.
var littleEndian = binary.NativeEndian.Uint16([]byte{1, 0}) == 1

// finish writes the header (built by GDAL from the layout l of lattice header) and renames
// the file to path.
func (d *directCOG) finish(path string, header *geo.Grid, l layout, units string) error {
	hdr, err := d.header(header, l, units)
	if err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	src := d.f
	if int64(len(hdr)) > d.reserved || path != d.dest {
		// The header does not fit (or the file goes elsewhere): header, then a copy of the tiles.
		reserved := (int64(len(hdr)) + 4095) &^ 4095
		if err := patchTileTables(hdr, d.bigTIFF, reserved, int64(d.ntx)*int64(d.nty)); err != nil {
			return fmt.Errorf("write grid %s: %w", path, err)
		}
		return writeAtomic(path, ".tif", func(tmp string) error {
			out, err := os.Create(tmp)
			if err != nil {
				return err
			}
			if _, err := out.WriteAt(hdr, 0); err != nil {
				out.Close()
				return err
			}
			if _, err := out.Seek(reserved, io.SeekStart); err != nil {
				out.Close()
				return err
			}
			if _, err := io.Copy(out, io.NewSectionReader(src, d.reserved, int64(d.ntx)*int64(d.nty)*tileBytes)); err != nil {
				out.Close()
				return err
			}
			return out.Close()
		})
	}
	if err := patchTileTables(hdr, d.bigTIFF, d.reserved, int64(d.ntx)*int64(d.nty)); err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	if _, err := d.f.WriteAt(hdr, 0); err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	if err := d.f.Close(); err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	d.f = nil
	if err := os.Rename(d.tmp, path); err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	d.tmp = ""
	return nil
}

// header returns the bytes of a sparse tiled GeoTIFF of the lattice (no tile written, tile
// tables zero) with the layout's georeferencing, no-data, metadata and band description, as
// GDAL's GeoTIFF driver writes it.
func (d *directCOG) header(g *geo.Grid, l layout, units string) ([]byte, error) {
	name := fmt.Sprintf("/vsimem/ridgeflank-hdr-%d-%d.tif", os.Getpid(), vsiSeq.Add(1))
	cn := C.CString(name)
	defer C.free(unsafe.Pointer(cn))
	defer C.VSIUnlink(cn)
	big := "BIGTIFF=NO"
	if d.bigTIFF {
		big = "BIGTIFF=YES"
	}
	opts := cStrings([]string{"TILED=YES", fmt.Sprintf("BLOCKXSIZE=%d", directTile), fmt.Sprintf("BLOCKYSIZE=%d", directTile),
		"COMPRESS=NONE", "SPARSE_OK=TRUE", big, "ENDIANNESS=LITTLE"})
	defer freeCStrings(opts)
	c := l.toC(units)
	defer c.free()
	gt := geoTransform(g)
	cDriver := C.CString("GTiff")
	defer C.free(unsafe.Pointer(cDriver))
	var e C.rf_err
	h := C.rf_create(cDriver, cn, C.int(g.NX), C.int(g.NY), &gt[0], 1, C.double(math.NaN()), c.units, c.desc, c.ds, c.band, opts, &e)
	if h == nil {
		if err := cErr(&e, "header"); err != nil {
			return nil, err
		}
		return nil, errors.New("header: GDAL could not create it")
	}
	C.rf_close(h, &e)
	if err := cErr(&e, "header"); err != nil {
		return nil, err
	}
	var n C.ulonglong
	p := C.rf_vsimem_take(cn, &n)
	if p == nil {
		return nil, errors.New("header: in-memory file vanished")
	}
	defer C.VSIFree(unsafe.Pointer(p))
	return append([]byte(nil), unsafe.Slice((*byte)(unsafe.Pointer(p)), int(n))...), nil
}

// TIFF tags and field types (TIFF 6.0 §2 and §15; BigTIFF's LONG8 = 16).
const (
	tagTileOffsets    = 324
	tagTileByteCounts = 325
	typeLong          = 4
	typeLong8         = 16
)

// patchTileTables fills the tile tables of the first image file directory of the TIFF in hdr
// (little-endian, classic or BigTIFF as bigTIFF says): tile i at first + i·tileBytes, each
// tileBytes long. The tables must hold tiles entries of LONG or LONG8.
func patchTileTables(hdr []byte, bigTIFF bool, first, tiles int64) error {
	le := binary.LittleEndian
	if len(hdr) < 16 || hdr[0] != 'I' || hdr[1] != 'I' {
		return errors.New("header: not a little-endian TIFF")
	}
	var ifd int64
	if bigTIFF {
		if le.Uint16(hdr[2:]) != 43 {
			return errors.New("header: not a BigTIFF")
		}
		ifd = int64(le.Uint64(hdr[8:]))
	} else {
		if le.Uint16(hdr[2:]) != 42 {
			return errors.New("header: not a classic TIFF")
		}
		ifd = int64(le.Uint32(hdr[4:]))
	}
	entrySize, countSize, valueSize := int64(12), int64(2), int64(4)
	if bigTIFF {
		entrySize, countSize, valueSize = 20, 8, 8
	}
	if ifd <= 0 || ifd+countSize > int64(len(hdr)) {
		return errors.New("header: directory outside the header")
	}
	var n int64
	if bigTIFF {
		n = int64(le.Uint64(hdr[ifd:]))
	} else {
		n = int64(le.Uint16(hdr[ifd:]))
	}
	found := 0
	for i := range n {
		e := ifd + countSize + i*entrySize
		if e+entrySize > int64(len(hdr)) {
			return errors.New("header: directory entry outside the header")
		}
		tag, typ := le.Uint16(hdr[e:]), le.Uint16(hdr[e+2:])
		if tag != tagTileOffsets && tag != tagTileByteCounts {
			continue
		}
		var count int64
		if bigTIFF {
			count = int64(le.Uint64(hdr[e+4:]))
		} else {
			count = int64(le.Uint32(hdr[e+4:]))
		}
		if count != tiles {
			return fmt.Errorf("header: tag %d has %d entries for %d tiles", tag, count, tiles)
		}
		size := int64(4)
		switch typ {
		case typeLong:
		case typeLong8:
			size = 8
		default:
			return fmt.Errorf("header: tag %d has field type %d", tag, typ)
		}
		at := e + 4 + valueSize // the value field
		if count*size > valueSize {
			if bigTIFF {
				at = int64(le.Uint64(hdr[at:]))
			} else {
				at = int64(le.Uint32(hdr[at:]))
			}
		}
		if at < 0 || at+count*size > int64(len(hdr)) {
			return fmt.Errorf("header: tag %d's table lies outside the header", tag)
		}
		for k := range count {
			v := int64(tileBytes)
			if tag == tagTileOffsets {
				v = first + k*tileBytes
			}
			if size == 4 {
				if v > math.MaxUint32 {
					return errors.New("header: tile offset beyond 4 GiB in a classic TIFF")
				}
				le.PutUint32(hdr[at+k*4:], uint32(v))
			} else {
				le.PutUint64(hdr[at+k*8:], uint64(v))
			}
		}
		found++
	}
	if found != 2 {
		return errors.New("header: tile tables not found")
	}
	return nil
}

// close removes the temporary file unless finish renamed it.
func (d *directCOG) close() {
	if d.f != nil {
		d.f.Close()
		d.f = nil
	}
	if d.tmp != "" {
		os.Remove(d.tmp)
		d.tmp = ""
	}
}
