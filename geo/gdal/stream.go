package gdal

/*
#include <stdlib.h>
#include "rfgdal.h"
*/
import "C"

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"strings"
	"time"
	"unsafe"

	"ridgeflank/geo"
)

// DefaultStreamBlockBytes bounds the rows a COGStream takes per block (96 MiB of float32:
// 256 rows of a 15-arc-second global grid, 86400 columns).
const DefaultStreamBlockBytes = 96 << 20

// Block heights of a COGStream: powers of two between these bounds, so that the staging tiles
// nest in the COG's 512-row tiles. The staging tiles are stageTileX wide and one block tall:
// GDAL's COG driver built a 43200×21600 COG from 256×256 staging tiles as fast as from the
// source file, and 1.4 times slower from 512×256 ones (measured on this project's machine).
const (
	minStreamRows = 16
	maxStreamRows = 256
	stageTileX    = 256
)

// stageOptions are the creation options of the staging GeoTIFF: the fastest lossless
// compression (ZSTD level 1, no predictor: the floating-point predictor made the COG step
// twice as slow, as the COG driver decodes the staging tiles more than once); tiles left
// entirely no-data are not written. A grid of at most stageRawMaxBytes is staged
// uncompressed (stageRawOptions): compressing and decoding its staging tiles took a fifth of
// the CPU time of a whole `ridgeflank grid` run on a 10800×5400 grid (measured on this
// project's machine), and the disk it takes is small.
var (
	stageOptions = []string{"COMPRESS=ZSTD", "ZSTD_LEVEL=1", "BIGTIFF=YES",
		"NUM_THREADS=ALL_CPUS", "SPARSE_OK=TRUE"}
	stageRawOptions = []string{"COMPRESS=NONE", "BIGTIFF=YES", "SPARSE_OK=TRUE"}
)

// stageRawMaxBytes is the largest grid (float32 bytes) staged uncompressed: 1 GiB, a
// 1-arc-minute global grid (21600×10800, 0.93 GB).
const stageRawMaxBytes = 1 << 30

// StreamOptions tune NewCOGStream.
type StreamOptions struct {
	// BlockBytes bounds one block of rows (BlockRows × NX float32 values); default
	// DefaultStreamBlockBytes. A block holds at least 16 rows whatever the bound, so a grid
	// wider than BlockBytes/64 columns takes 64 bytes per column.
	BlockBytes int
	// StageDir holds the staging GeoTIFF ("" = os.TempDir()); it needs room for the grid
	// (uncompressed up to 1 GiB of float32, compressed above), and the file is removed by
	// Close.
	StageDir string
	// Compress is the COG's compression: "" or "deflate" (WriteCOG's: DEFLATE with the
	// floating-point predictor, readable everywhere) or "zstd" (ZSTD level 1 with the same
	// predictor: about twice as fast to write and 15% larger, measured on a 10800×5400 grid;
	// readers need libtiff with ZSTD, GDAL ≥ 2.3) or "none" (no compression and no
	// predictor: tiles stored as they are, the fastest to write and about 1.1–1.5 times
	// the size of a deflate COG of a smooth grid; for pipelines that read it once).
	Compress string
	// NoOverviews leaves out the reduced-resolution overviews (an overview-less COG is
	// still tiled, with its header first; viewers zoomed out read every tile).
	NoOverviews bool
	// Destination is the file Finish will write, when known. A COG without compression and
	// without overviews is then written in place (into a temporary file beside it, renamed by
	// Finish) instead of being staged and copied: no staging file, one write of each value,
	// memory one block.
	Destination string
}

// COGStream writes a grid as a Cloud-Optimized GeoTIFF without holding it in memory: blocks of
// whole rows are written in order (WriteRows) into a tiled, compressed staging GeoTIFF, and
// Finish copies that to the COG with GDAL's COG driver, which builds the overviews from the
// staging file through GDAL's bounded block cache (GDAL_CACHEMAX). Peak memory is about one
// block plus the block cache, whatever the size of the grid. The COG has the same values,
// georeferencing, metadata and creation options as WriteCOG's. A COGStream is used by one
// goroutine; Close it.
type COGStream struct {
	header    geo.Grid
	rows      int
	stage     C.GDALDatasetH
	stagePath string
	lock      *os.File // held while the staging file is in use (SweepStaging)
	tile      *C.float
	next      int
	compress  string
	noOvr     bool
	direct    *directCOG // in-place writer (Compress none, no overviews, Destination given)
}

// NewCOGStream starts a COG of the lattice of header (its Data is ignored).
func NewCOGStream(header geo.Grid, opt StreamOptions) (*COGStream, error) {
	ensureInit()
	header.Data = nil
	if header.NX <= 0 || header.NY <= 0 || !(header.DX > 0) || !(header.DY > 0) {
		return nil, fmt.Errorf("write grid: invalid lattice %d×%d, spacing %g×%g", header.NX, header.NY, header.DX, header.DY)
	}
	budget := opt.BlockBytes
	if budget <= 0 {
		budget = DefaultStreamBlockBytes
	}
	rows := minStreamRows
	for rows*2 <= maxStreamRows && int64(rows*2)*int64(header.NX)*4 <= int64(budget) {
		rows *= 2
	}
	if opt.Compress == "none" && opt.NoOverviews && opt.Destination != "" {
		d, err := newDirectCOG(header, opt.Destination)
		if err != nil {
			return nil, err
		}
		return &COGStream{header: header, rows: rows, compress: opt.Compress, noOvr: true, direct: d}, nil
	}
	dir := opt.StageDir
	if dir == "" {
		dir = os.TempDir()
	}
	// Staging files of streams whose writer died (any way in: import, grid, export) go before
	// a new one takes room beside them.
	_, _ = SweepStaging(dir)
	f, err := os.CreateTemp(dir, "ridgeflank-stage-*.tif")
	if err != nil {
		return nil, fmt.Errorf("write grid: staging file: %w", err)
	}
	stagePath := f.Name()
	f.Close()
	lock, err := lockStage(stagePath)
	if err != nil {
		os.Remove(stagePath)
		return nil, fmt.Errorf("write grid: locking the staging file: %w", err)
	}
	s := &COGStream{header: header, rows: rows, stagePath: stagePath, lock: lock, compress: opt.Compress, noOvr: opt.NoOverviews}
	gt := geoTransform(&header)
	cp := C.CString(stagePath)
	defer C.free(unsafe.Pointer(cp))
	stageOpts := stageOptions
	if int64(header.NX)*int64(header.NY)*4 <= stageRawMaxBytes {
		stageOpts = stageRawOptions
	}
	copts := cStrings(stageOpts)
	defer freeCStrings(copts)
	var e C.rf_err
	s.stage = C.rf_stage_create(cp, C.int(header.NX), C.int(header.NY), stageTileX, C.int(rows), &gt[0], copts, &e)
	if s.stage == nil {
		s.Close()
		if err := cErr(&e, "write grid: staging file"); err != nil {
			return nil, err
		}
		return nil, errors.New("write grid: GDAL could not create the staging file")
	}
	s.tile = (*C.float)(C.malloc(C.size_t(stageTileX * rows * 4)))
	return s, nil
}

// BlockRows is the number of rows WriteRows takes at a time.
func (s *COGStream) BlockRows() int { return s.rows }

// WriteRows writes the next block: rows row0 .. row0+n−1 (row 0 northernmost), where row0 is
// the first row not yet written and n = min(BlockRows, NY−row0); len(rows) = n·NX. NaN
// is no-data.
func (s *COGStream) WriteRows(row0 int, rows []float32) error {
	if s.stage == nil && s.direct == nil {
		return errors.New("write grid: stream is finished or closed")
	}
	nx := s.header.NX
	n := min(s.rows, s.header.NY-row0)
	if row0 != s.next || n <= 0 || len(rows) != n*nx {
		return fmt.Errorf("write grid: rows %d.. (%d values) are not the next block (row %d, %d values)", row0, len(rows), s.next, min(s.rows, s.header.NY-s.next)*nx)
	}
	if s.direct != nil {
		if err := s.direct.writeRows(row0, rows); err != nil {
			return err
		}
		s.next += n
		return nil
	}
	var e C.rf_err
	if C.rf_stage_write(s.stage, C.int(row0), C.int(n), C.int(nx), (*C.float)(unsafe.Pointer(&rows[0])), s.tile, &e) == 0 {
		if err := cErr(&e, "write grid: staging file"); err != nil {
			return err
		}
		return errors.New("write grid: staging file: GDAL failed")
	}
	s.next += n
	return nil
}

// Finish writes the COG to path (on a temporary name in its directory, renamed into place)
// with the metadata m (as WriteCOG records it; Meta.NoData must be nil or NaN: no-data is
// stored as NaN). Every row must have been written. progress (may be nil) receives GDAL's
// fraction done, about every 200 ms; cancelling ctx stops the copy. The staging file is
// closed either way; Close removes it.
func (s *COGStream) Finish(ctx context.Context, path string, m Meta, progress func(fraction float64)) error {
	if s.stage == nil && s.direct == nil {
		return errors.New("write grid: stream is finished or closed")
	}
	if s.next != s.header.NY {
		return fmt.Errorf("write grid %s: %d of %d rows written", path, s.next, s.header.NY)
	}
	if m.NoData != nil && !math.IsNaN(*m.NoData) {
		return fmt.Errorf("write grid %s: a streamed COG stores no-data as NaN, not %g", path, *m.NoData)
	}
	l, err := layoutOf(&s.header, m, false)
	if err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	copts, err := streamCOGOptions(l.copts, s.compress, s.noOvr)
	if err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	l.copts = copts
	if s.direct != nil {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("write grid %s: %w", path, err)
		}
		d := s.direct
		s.direct = nil
		defer d.close()
		err := d.finish(path, &s.header, l, m.Units)
		if err == nil && progress != nil {
			progress(1)
		}
		return err
	}
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("write grid %s: %w", path, err)
	}
	stage := s.stage
	s.stage = nil
	cStage := C.CString(s.stagePath)
	defer C.free(unsafe.Pointer(cStage))
	c := l.toC(m.Units)
	defer c.free()
	return writeAtomic(path, ".tif", func(tmp string) error {
		cTmp := C.CString(tmp)
		defer C.free(unsafe.Pointer(cTmp))
		var e C.rf_err
		var ok C.int
		err := watchProgress(ctx, progress, func(p *C.rf_progress) {
			ok = C.rf_stage_finish(stage, cStage, cTmp, c.units, c.desc, c.ds, c.band, c.opts, p, &e)
		})
		if ok == 0 {
			if err != nil {
				return fmt.Errorf("write grid %s: %w", path, err)
			}
			if err := cErr(&e, "write grid "+path); err != nil {
				return err
			}
			return fmt.Errorf("write grid %s: GDAL failed", path)
		}
		return nil
	})
}

// streamCOGOptions are the COG driver's creation options base (WriteCOG's) changed for the
// compression compress ("" or "deflate": unchanged; "zstd": ZSTD level 1 with the same
// predictor; "none": no compression, no predictor) and, when noOverviews, without overviews.
func streamCOGOptions(base []string, compress string, noOverviews bool) ([]string, error) {
	switch compress {
	case "", "deflate", "zstd", "none":
	default:
		return nil, fmt.Errorf("unknown compression %q (want deflate, zstd or none)", compress)
	}
	opts := make([]string, 0, len(base)+1)
	for _, o := range base {
		switch {
		case o == "COMPRESS=DEFLATE" && compress == "zstd":
			opts = append(opts, "COMPRESS=ZSTD", "LEVEL=1")
			continue
		case o == "COMPRESS=DEFLATE" && compress == "none":
			o = "COMPRESS=NONE"
		case strings.HasPrefix(o, "PREDICTOR=") && compress == "none":
			continue
		case strings.HasPrefix(o, "OVERVIEWS=") && noOverviews:
			o = "OVERVIEWS=NONE"
		}
		opts = append(opts, o)
	}
	return opts, nil
}

// Close releases the staging file and removes it. It may be called at any time, also after
// Finish, and more than once.
func (s *COGStream) Close() error {
	var err error
	if s.direct != nil {
		s.direct.close()
		s.direct = nil
	}
	if s.stage != nil {
		var e C.rf_err
		C.rf_close(s.stage, &e)
		s.stage = nil
		err = cErr(&e, "write grid: staging file")
	}
	if s.tile != nil {
		C.free(unsafe.Pointer(s.tile))
		s.tile = nil
	}
	if s.stagePath != "" {
		removeStage(s.stagePath)
		s.stagePath = ""
	}
	if s.lock != nil {
		s.lock.Close()
		s.lock = nil
	}
	return err
}

// TranslateCOG converts any raster GDAL reads to a COG with GDAL's own translate (the library
// form of the translate tool, `-of COG` with WriteCOG's creation options), without ridgeflank's
// reading rules (no unit conversion, no-data as in the source). It is the peer that import's
// speed and memory are measured against.
func TranslateCOG(ctx context.Context, src, dst string) error {
	ensureInit()
	args := []string{"-of", "COG", "-ot", "Float32"}
	for _, o := range cogOptions {
		args = append(args, "-co", o)
	}
	cargs := cStrings(args)
	defer freeCStrings(cargs)
	cs, cd := C.CString(src), C.CString(dst)
	defer C.free(unsafe.Pointer(cs))
	defer C.free(unsafe.Pointer(cd))
	var e C.rf_err
	var ok C.int
	err := watchProgress(ctx, nil, func(p *C.rf_progress) { ok = C.rf_translate(cs, cd, cargs, p, &e) })
	if ok == 0 {
		if err != nil {
			return fmt.Errorf("translate %s: %w", src, err)
		}
		if err := cErr(&e, "translate "+src); err != nil {
			return err
		}
		return fmt.Errorf("translate %s: GDAL failed", src)
	}
	return nil
}

// watchProgress runs call with a progress record in C memory, reporting its fraction to
// progress about every 200 ms and asking GDAL to stop when ctx is cancelled. It returns
// ctx's error when the call was cancelled.
func watchProgress(ctx context.Context, progress func(float64), call func(p *C.rf_progress)) error {
	p := (*C.rf_progress)(C.calloc(1, C.size_t(unsafe.Sizeof(C.rf_progress{}))))
	defer C.free(unsafe.Pointer(p))
	done := make(chan struct{})
	watched := make(chan struct{})
	go func() {
		defer close(watched)
		t := time.NewTicker(200 * time.Millisecond)
		defer t.Stop()
		last := -1.0
		for {
			select {
			case <-done:
				return
			case <-ctx.Done():
				p.cancel = 1
				<-done
				return
			case <-t.C:
				if f := float64(p.fraction); progress != nil && f != last {
					last = f
					progress(f)
				}
			}
		}
	}()
	call(p)
	close(done)
	<-watched
	if p.cancel != 0 {
		return ctx.Err()
	}
	return nil
}
