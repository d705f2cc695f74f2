//go:build linux

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
	"math/bits"
	"os"
	"runtime"
	"strconv"
	"syscall"
	"unsafe"

	"golang.org/x/sys/unix"
)

// Raw reading (ReadOptions.RawTiles): the values of an uncompressed, single-band float32
// GeoTIFF whose byte order is the machine's lie in its file exactly as they are in memory,
// block by block (TIFF 6.0, Adobe 1992: strips §3, tiles §15). GDAL says where each block
// lies (its GTiff driver's BLOCK_OFFSET_x_y and BLOCK_SIZE_x_y items of the "TIFF" metadata
// domain), and ReadRows then has the kernel copy each block's rows straight into the rows of
// the caller's buffer (one preadv call per block, one buffer per row of the block), instead
// of GDAL reading them into a buffer of its own and copying them again. The first block is
// read both ways when the layout is set up, and any difference keeps GDAL's reading.

// rawTiles is the block layout of a file read raw.
type rawTiles struct {
	f        *os.File
	nx, ny   int
	bw, bh   int     // block width and height (strips: bw = nx)
	nbx, nby int     // blocks across and down
	off      []int64 // file offset of each block, row-major
	vecs     []unix.Iovec
	discard  []float32 // the columns of a right-hand edge tile beyond the grid
}

// errNoRaw says that a file cannot be read raw (GDAL reads it).
var errNoRaw = errors.New("not readable raw")

// newRawTiles returns the raw layout of band band of h (a GTiff dataset opened from path),
// or errNoRaw when the file is not laid out as above. The caller holds d's locks.
func newRawTiles(h C.GDALDatasetH, band int, path string) (*rawTiles, error) {
	if !littleEndian || !isPlainPath(path) || h == nil {
		return nil, errNoRaw
	}
	drv := C.GDALGetDatasetDriver(h)
	if drv == nil || C.GoString(C.GDALGetDriverShortName(drv)) != "GTiff" || C.GDALGetRasterCount(h) != 1 || band != 1 {
		return nil, errNoRaw
	}
	b := C.GDALGetRasterBand(h, C.int(band))
	if b == nil || C.GDALGetRasterDataType(b) != C.GDT_Float32 {
		return nil, errNoRaw
	}
	item := func(obj C.GDALMajorObjectH, key, domain string) string {
		ck, cd := C.CString(key), C.CString(domain)
		defer C.free(unsafe.Pointer(ck))
		defer C.free(unsafe.Pointer(cd))
		return C.GoString(C.GDALGetMetadataItem(obj, ck, cd))
	}
	for _, k := range []string{"COMPRESSION", "NBITS", "PREDICTOR"} {
		if item(C.GDALMajorObjectH(h), k, "IMAGE_STRUCTURE") != "" || item(C.GDALMajorObjectH(b), k, "IMAGE_STRUCTURE") != "" {
			return nil, errNoRaw
		}
	}
	var bw, bh C.int
	C.GDALGetBlockSize(b, &bw, &bh)
	t := &rawTiles{nx: int(C.GDALGetRasterXSize(h)), ny: int(C.GDALGetRasterYSize(h)), bw: int(bw), bh: int(bh)}
	if t.bw <= 0 || t.bh <= 0 || t.nx <= 0 || t.ny <= 0 {
		return nil, errNoRaw
	}
	t.nbx, t.nby = (t.nx+t.bw-1)/t.bw, (t.ny+t.bh-1)/t.bh
	t.off = make([]int64, t.nbx*t.nby)
	for by := range t.nby {
		for bx := range t.nbx {
			off, err1 := strconv.ParseInt(item(C.GDALMajorObjectH(b), fmt.Sprintf("BLOCK_OFFSET_%d_%d", bx, by), "TIFF"), 10, 64)
			size, err2 := strconv.ParseInt(item(C.GDALMajorObjectH(b), fmt.Sprintf("BLOCK_SIZE_%d_%d", bx, by), "TIFF"), 10, 64)
			// A tile is whole; the last strip may hold only the rows left.
			want := int64(t.bw) * int64(t.bh) * 4
			if t.bw >= t.nx && by == t.nby-1 {
				want = int64(t.bw) * int64(t.ny-by*t.bh) * 4
			}
			if err1 != nil || err2 != nil || off <= 0 || size < want {
				return nil, errNoRaw // a sparse or odd block
			}
			t.off[by*t.nbx+bx] = off
		}
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, errNoRaw
	}
	t.f = f
	var magic [2]byte
	if _, err := f.ReadAt(magic[:], 0); err != nil || string(magic[:]) != "II" {
		t.close()
		return nil, errNoRaw
	}
	// The first block read both ways must agree, byte for byte.
	n := t.bw * t.bh
	if t.bw >= t.nx {
		n = t.bw * min(t.bh, t.ny)
	}
	viaGDAL := make([]float32, t.bw*t.bh)
	if C.GDALReadBlock(b, 0, 0, unsafe.Pointer(&viaGDAL[0])) != C.CE_None {
		t.close()
		return nil, errNoRaw
	}
	raw := make([]byte, 4*n)
	if _, err := f.ReadAt(raw, t.off[0]); err != nil || !bytes.Equal(raw, unsafe.Slice((*byte)(unsafe.Pointer(&viaGDAL[0])), 4*n)) {
		t.close()
		return nil, errNoRaw
	}
	return t, nil
}

// read fills dst with rows row0..row0+len(dst)/nx−1 of the file (file order), every value
// straight from the file into its place.
func (t *rawTiles) read(row0 int, dst []float32) error {
	n := len(dst) / t.nx
	fd := t.f.Fd()
	vec := func(s []float32) unix.Iovec {
		v := unix.Iovec{Base: (*byte)(unsafe.Pointer(&s[0]))}
		v.SetLen(4 * len(s))
		return v
	}
	for by := row0 / t.bh; by*t.bh < row0+n; by++ {
		y0, y1 := max(row0, by*t.bh), min(row0+n, (by+1)*t.bh, t.ny) // rows of the file
		if t.bw == t.nx {
			// A strip: its rows are the buffer's, one run of bytes.
			t.vecs = append(t.vecs[:0], vec(dst[(y0-row0)*t.nx:(y1-row0)*t.nx]))
			if err := preadvFull(fd, t.vecs, t.off[by]+int64(y0-by*t.bh)*int64(t.bw)*4); err != nil {
				return fmt.Errorf("read %s: %w", t.f.Name(), err)
			}
			continue
		}
		for bx := range t.nbx {
			x0 := bx * t.bw
			w := min(t.bw, t.nx-x0)
			if w < t.bw && len(t.discard) < t.bw-w {
				t.discard = make([]float32, t.bw-w)
			}
			t.vecs = t.vecs[:0]
			for y := y0; y < y1; y++ {
				t.vecs = append(t.vecs, vec(dst[(y-row0)*t.nx+x0:(y-row0)*t.nx+x0+w]))
				if w < t.bw && y < y1-1 {
					// the tile's columns beyond the grid, up to the next row's values
					t.vecs = append(t.vecs, vec(t.discard[:t.bw-w]))
				}
			}
			off := t.off[by*t.nbx+bx] + int64(y0-by*t.bh)*int64(t.bw)*4
			if err := preadvFull(fd, t.vecs, off); err != nil {
				return fmt.Errorf("read %s: %w", t.f.Name(), err)
			}
		}
	}
	runtime.KeepAlive(dst)
	return nil
}

// preadvFull reads from fd at off into the buffers of v in order, until all are full: one
// preadv(2) call, or more when the system reads less or v exceeds its limit per call (IOV_MAX,
// 1024 on Linux). The buffers of v are changed.
func preadvFull(fd uintptr, v []unix.Iovec, off int64) error {
	const maxIOV = 1024
	for len(v) > 0 {
		part := v[:min(len(v), maxIOV)]
		// The offset goes as two longs, low and high (the high one 0 on 64-bit systems).
		r, _, errno := syscall.Syscall6(unix.SYS_PREADV, fd, uintptr(unsafe.Pointer(&part[0])), uintptr(len(part)),
			uintptr(off), uintptr(uint64(off)>>(bits.UintSize-1)>>1), 0)
		if errno == syscall.EINTR {
			continue
		}
		if errno != 0 {
			return errno
		}
		if r == 0 {
			return io.ErrUnexpectedEOF
		}
		n := uint64(r)
		off += int64(n)
		for n > 0 && len(v) > 0 {
			if n >= v[0].Len {
				n -= v[0].Len
				v = v[1:]
				continue
			}
			v[0].Base = (*byte)(unsafe.Add(unsafe.Pointer(v[0].Base), n))
			v[0].Len -= n
			n = 0
		}
	}
	return nil
}

func (t *rawTiles) close() {
	if t != nil && t.f != nil {
		t.f.Close()
		t.f = nil
	}
}
