package ingest

import (
	"context"
	"fmt"
	"math"
	"strings"
	"sync"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// Reader reads a grid file in blocks of whole rows under import's rules, without storing it:
// values are converted to the stored unit of the request's kind (StoredUnit), every no-data
// cell is one NaN, values outside the kind's plausible range are refused (PlausibleRange), and
// a bathymetry grid gets its vertical sense decided as Import decides it. Batch computations
// that read input files directly use it, so that a file gives the same values there as once
// imported. A Reader's methods may be called from several goroutines.
type Reader struct {
	d         *gdal.Dataset
	name      string
	header    geo.Grid
	kind      store.GridKind
	unit      string
	converted string
	factor    float64
	sense     geo.VerticalSense
	notes     []string

	mu      sync.Mutex
	dig     *digest // content digest of the rows read in order so far
	digNext int     // next row the digest expects; -1 once rows were skipped
	id      string  // ContentID once every row was digested

	tiles tileRow // the last whole row of the file's storage blocks read (readSource)
}

// tileRow is one whole row of a file's storage blocks, as read from the file (before unit
// conversion): rows row0 .. row0+n−1. height is the blocks' height, set at OpenReader by
// wholeTileRows, 0 when reads go straight to the file (see readSource).
type tileRow struct {
	mu      sync.Mutex
	height  int
	row0, n int
	data    []float32
	free    func() // unmaps data (rowBuffer)
}

// maxTileRowBytes bounds a row of storage blocks read at once (wholeTileRows): 256 MiB holds
// the 512-row tiles of a 15-arc-second global grid (86400 columns, 169 MiB of float32).
const maxTileRowBytes = 256 << 20

// wholeTileRows is the height of the rows of d's storage blocks (d.BlockRows) when a reader of
// its nx columns should read them whole, so that GDAL decodes each block once: 0 when reads go
// straight to the file (blocks one row tall, a file read raw, a row of blocks above
// maxTileRowBytes). Import's reading (readBlocks) and a Reader's (readSource) follow it.
func wholeTileRows(d *gdal.Dataset, nx int) int {
	by := d.BlockRows()
	if by <= 1 || d.ReadsRaw() || int64(by)*int64(nx)*4 > maxTileRowBytes {
		return 0
	}
	return by
}

// OpenReader opens the file of r for reading in blocks of rows. r.Kind says what the grid
// holds; r.Units and r.Registration are taken as Import takes them. For bathymetry (kind depth
// or elevation), r.Vertical decides the vertical sense: "depth" or "elevation" (also
// "depth-positive-down", "elevation-positive-up") force it, with a note when the values read
// otherwise, as Import does; "" or "auto" take the file's declaration, checked against the
// signs of the values (Import's rule: a contradiction is refused), or, when the file declares
// none, the sense the values show (geo.SenseOfNegativeFraction; too mixed a grid is refused).
// Both need one streaming pass over the values before the first block is returned; progress
// (may be nil) follows that pass with fractions in [0, 1]. Bad input is a *fault.Error.
func OpenReader(ctx context.Context, r Request, progress func(fraction float64)) (*Reader, error) {
	r = r.normalised()
	auto := strings.EqualFold(r.Vertical, "auto")
	if auto {
		r.Vertical = ""
	}
	if err := r.Check(); err != nil {
		return nil, err
	}
	name := displayName(r.Path)
	// Uncompressed float32 GeoTIFFs are read straight into the caller's rows (gdal.ReadOptions.RawTiles).
	d, err := gdal.Open(r.Path, gdal.ReadOptions{Variable: r.Variable, Registration: r.Registration, RawTiles: true})
	if err != nil {
		return nil, readFault(name, err)
	}
	g, meta := d.Header(), d.Meta()
	if err := snapLattice(name, &g); err != nil {
		d.Close()
		return nil, err
	}
	rd := &Reader{d: d, name: name, header: g, kind: r.Kind, dig: newDigest()}
	rd.tiles.height = wholeTileRows(d, g.NX)
	fail := func(err error) (*Reader, error) {
		d.Close()
		return nil, err
	}
	if err := checkDeclaredSize(name, d, &g, r.MaxCells); err != nil {
		return fail(err)
	}
	var notes []string
	rd.factor, rd.unit, rd.converted, notes, err = resolveUnits(r, meta.Units)
	rd.notes = append(rd.notes, notes...)
	if err != nil {
		return fail(err)
	}
	if r.Kind != store.KindDepth && r.Kind != store.KindElevation {
		return rd, nil
	}
	explicit, _ := geo.ParseVerticalSense(r.Vertical) // checked by Check
	if explicit != geo.SenseUnknown {
		// Forced: no pass over the values is needed to decide.
		rd.sense = explicit
		rd.kind = store.KindDepth
		if explicit == geo.ElevationPositiveUp {
			rd.kind = store.KindElevation
		}
		return rd, nil
	}
	// One streaming pass: the statistics decide (or check) the sense; the digest is made on
	// the way.
	var st Stats
	blocks, stop := readBlocks(d, g.NX, g.NY, blockRows(g.NX))
	for b := range blocks {
		if err := ctx.Err(); err != nil {
			stop()
			return fail(err)
		}
		if b.err != nil {
			stop()
			return fail(readFault(name, b.err))
		}
		prepare(b.data, rd.factor)
		st.Add(b.data)
		rd.dig.add(b.data)
		b.release()
		if progress != nil {
			progress(float64(b.row+b.n) / float64(g.NY))
		}
	}
	stop()
	asked := r.Kind
	if meta.Sense == geo.SenseUnknown && auto {
		guess := geo.SenseOfNegativeFraction(st.NegativeFraction())
		switch guess {
		case geo.DepthPositiveDown:
			asked = store.KindDepth
		case geo.ElevationPositiveUp:
			asked = store.KindElevation
		default:
			return fail(fault.New(fault.InvalidGrid, "vertical",
				"%s declares no vertical sense and %.0f%% of its values are negative, too mixed to tell depth from elevation; declare it with vertical: depth or elevation",
				name, 100*st.NegativeFraction()))
		}
		rd.notes = append(rd.notes, fmt.Sprintf("%s: %.0f%% of the values are negative, so the grid is read as %s", name, 100*st.NegativeFraction(), senseText(guess)))
	}
	kind, sense, notes, err := reconcileSense(asked, "", meta.Sense, &st)
	rd.notes = append(rd.notes, notes...)
	if err != nil {
		return fail(err)
	}
	if err := checkValues(st, kind, rd.unit, rd.converted); err != nil {
		return fail(err)
	}
	rd.kind, rd.sense = kind, sense
	rd.id = rd.dig.id(&rd.header, rd.kind, rd.unit, storeSense(sense))
	rd.digNext = -1 // digest complete
	return rd, nil
}

// blockRows is the number of rows of the sense pass's blocks (gdal.DefaultStreamBlockBytes,
// 16 to 256 rows, like an import's).
func blockRows(nx int) int {
	return min(256, max(16, blockBytes/(4*max(nx, 1))))
}

func storeSense(s geo.VerticalSense) store.VerticalSense {
	switch s {
	case geo.DepthPositiveDown:
		return store.DepthPositiveDown
	case geo.ElevationPositiveUp:
		return store.ElevationPositiveUp
	}
	return store.VerticalNone
}

// Header is the grid's lattice (origin and spacing snapped as Import snaps them; no Data).
func (r *Reader) Header() geo.Grid { return r.header }

// Name is the file's base name.
func (r *Reader) Name() string { return r.name }

// Kind is the kind the values are read as (for bathymetry: depth or elevation, per Sense).
func (r *Reader) Kind() store.GridKind { return r.kind }

// Unit is the unit ReadRows returns values in (the kind's stored unit).
func (r *Reader) Unit() string { return r.unit }

// Sense is the vertical sense of a bathymetry grid (geo.SenseUnknown for other kinds).
func (r *Reader) Sense() geo.VerticalSense { return r.sense }

// Notes are the decisions the caller should see (units assumed or converted, sense decided).
func (r *Reader) Notes() []string { return r.notes }

// ContentID is the id Import would give the grid (ContentID: values in the stored unit,
// lattice, kind, units and sense), or "" when the rows were not all read in order: it is known
// after the sense pass, or after ReadRows calls that covered every row in increasing order
// (they may overlap).
func (r *Reader) ContentID() string {
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.id
}

// ReadRows fills dst with len(dst)/NX whole rows from row0 (row 0 northernmost) in the stored
// unit, no-data as NaN. Values outside the kind's plausible range are a fault.InvalidGrid.
func (r *Reader) ReadRows(row0 int, dst []float32) error {
	_, _, err := r.ReadRowsRange(row0, dst)
	return err
}

// ReadRowsRange is ReadRows also returning the least and the greatest of the values read that
// are not NaN, in the stored unit (lo = +Inf and hi = −Inf when every value is NaN): the value
// check finds them anyway.
func (r *Reader) ReadRowsRange(row0 int, dst []float32) (lo, hi float32, err error) {
	if err := r.readSource(row0, dst); err != nil {
		return 0, 0, readFault(r.name, err)
	}
	lo, hi = prepareRange(dst, r.factor)
	st := Stats{Min: float64(lo), Max: float64(hi)}
	if math.IsInf(st.Max, 1) || math.IsInf(st.Min, -1) {
		// An infinite value: Stats count them for checkRange's message.
		st = Stats{}
		st.Add(dst)
	}
	if err := checkRange(st, r.kind, r.unit, r.converted); err != nil {
		return 0, 0, fault.New(fault.InvalidGrid, "file", "%s: %w", r.name, err)
	}
	nx := r.header.NX
	n := len(dst) / nx
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.digNext >= 0 && row0 <= r.digNext && row0+n > r.digNext {
		r.dig.add(dst[(r.digNext-row0)*nx:])
		r.digNext = row0 + n
		if r.digNext == r.header.NY {
			r.id = r.dig.id(&r.header, r.kind, r.unit, storeSense(r.sense))
			r.digNext = -1
		}
	} else if r.digNext >= 0 && row0 > r.digNext {
		r.digNext = -1 // a gap: no content id
	}
	return lo, hi, nil
}

// readSource fills dst with whole rows from row0 as the file holds them. A read of fewer rows
// than the file's storage blocks are tall (a compressed file tiled 512 rows high read in blocks
// of 64) goes through the whole row of blocks that holds them, read once and kept: GDAL decodes
// whole blocks, and its multi-threaded reading of compressed GeoTIFF decodes them into the
// caller's buffer without keeping them, so each partial read decoded the row of blocks again
// (a 21600 × 10800 residual in blocks of 64 rows took 2.8 times the CPU time of blocks of 256,
// with GDAL's block cache at 8 MB or 512 MB alike, measured on this project's machine). Which
// files are read so is wholeTileRows' rule.
func (r *Reader) readSource(row0 int, dst []float32) error {
	nx := r.header.NX
	if nx <= 0 || len(dst)%nx != 0 {
		return r.d.ReadRows(row0, dst) // its error
	}
	n := len(dst) / nx
	t := &r.tiles
	t.mu.Lock()
	defer t.mu.Unlock()
	if t.height == 0 || n >= t.height {
		return r.d.ReadRows(row0, dst)
	}
	ny := r.header.NY
	if row0 < 0 || row0+n > ny {
		return r.d.ReadRows(row0, dst) // its error
	}
	for row := row0; row < row0+n; {
		if row < t.row0 || row >= t.row0+t.n {
			top := row / t.height * t.height
			m := min(t.height, ny-top)
			if t.data == nil {
				t.data, t.free = rowBuffer(t.height * nx)
			}
			t.n = 0 // invalid until read
			if err := r.d.ReadRows(top, t.data[:m*nx]); err != nil {
				return err
			}
			t.row0, t.n = top, m
		}
		k := min(row0+n, t.row0+t.n) - row
		copy(dst[(row-row0)*nx:(row-row0+k)*nx], t.data[(row-t.row0)*nx:(row-t.row0+k)*nx])
		row += k
	}
	return nil
}

// SkipContentID stops the content digest of the rows read from here on: ContentID stays ""
// unless the sense pass of OpenReader already made it. A caller that records no content id
// saves hashing every value (a SHA-256 pass over the grid).
func (r *Reader) SkipContentID() {
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.id == "" {
		r.digNext = -1
	}
}

// prepareRange is prepare (no-data as one NaN, values times factor) and the extremes of the
// values that are not NaN, in one pass: lo = +Inf and hi = −Inf when every value is NaN; an
// infinite value shows as lo = −Inf or hi = +Inf. It is what ReadRows needs of Stats.Add
// (checkRange reads Min, Max and Inf only), without its counts.
func prepareRange(blk []float32, factor float64) (lo, hi float32) {
	if factor == 1 && haveRangeAVX && len(blk) >= 8 {
		// Eight values at a time (rangeAVX), then the rest.
		n := len(blk) &^ 7
		lo, hi = rangeAVX(blk[:n], float32(math.NaN()))
		tlo, thi := prepareRangeGeneric(blk[n:], 1)
		return min(lo, tlo), max(hi, thi) // no NaN among them
	}
	return prepareRangeGeneric(blk, factor)
}

// prepareRangeGeneric is prepareRange one value at a time.
func prepareRangeGeneric(blk []float32, factor float64) (lo, hi float32) {
	lo, hi = float32(math.Inf(1)), float32(math.Inf(-1))
	nan := float32(math.NaN())
	if factor == 1 {
		// Comparisons with NaN are false, so NaN never becomes an extreme.
		for i, v := range blk {
			if v < lo {
				lo = v
			}
			if v > hi {
				hi = v
			}
			if v != v {
				blk[i] = nan
			}
		}
		return lo, hi
	}
	for i, v := range blk {
		if v != v {
			blk[i] = nan
			continue
		}
		v = float32(float64(v) * factor)
		blk[i] = v
		if v < lo {
			lo = v
		}
		if v > hi {
			hi = v
		}
	}
	return lo, hi
}

// Close releases the file.
func (r *Reader) Close() error {
	r.tiles.mu.Lock()
	if r.tiles.free != nil {
		r.tiles.free()
		r.tiles.data, r.tiles.free, r.tiles.n = nil, nil, 0
	}
	r.tiles.mu.Unlock()
	return r.d.Close()
}
