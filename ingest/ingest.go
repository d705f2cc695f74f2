package ingest

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"hash"
	"math"
	"path/filepath"
	"strings"
	"sync/atomic"
	"unsafe"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// blockBytes bounds the rows read, converted, checked and written at a time (see
// gdal.StreamOptions.BlockBytes); tests lower it.
var blockBytes = gdal.DefaultStreamBlockBytes

// Request is one import: the file and what the caller declares about it. Every way in (command
// line, upload job, demo installer) fills one and calls Import; only Name, Provenance and
// Licence may differ between ways in without changing the stored grid.
type Request struct {
	// Path is the file, or a GDAL name such as NETCDF:"f.nc":var.
	Path string
	// Variable picks a netCDF/HDF5 variable when the file holds several.
	Variable string
	// Kind says what the grid holds (store.GridKinds).
	Kind store.GridKind
	// Units declares the units of the file's values: "" takes the file's own declaration, or,
	// when the file has none, the kind's stored unit. Values are converted to the kind's
	// stored unit (StoredUnit).
	Units string
	// Vertical overrides the vertical sense of a bathymetry grid: "" (the file's declaration,
	// else the kind's), "depth" (positive down) or "elevation" (positive up). With an override,
	// values whose signs read otherwise are accepted with a note.
	Vertical string
	// Registration overrides the file's registration: "", "cell-centre" or "node".
	Registration string
	// ID is the catalogue id to give the grid; "" derives it from the content (ContentID).
	ID string
	// Name, Provenance and Licence go to the catalogue row only; Name defaults to the file's
	// base name, Provenance to "imported from FILE" and the file's source attribute.
	Name, Provenance, Licence string
	// MaxCells bounds the cells the file may declare (0: DefaultMaxImportCells).
	MaxCells int64
}

// Import limits, checked on the file's declared size before any value is read. A small file
// can declare a huge grid (a sparse or highly compressed GeoTIFF): its cells are counted from
// the header, and its blocks must fit in memory because GDAL decodes whole blocks.
const (
	// DefaultMaxImportCells is the most cells a grid file may declare: a global grid at 15″
	// (86,400 × 43,200 = 3.7 G cells) fits (common practice, no source).
	DefaultMaxImportCells int64 = 4_000_000_000
	// MaxBlockBytes is the largest block (block width × height × bytes per cell) a file may
	// store: a tiled or striped file's blocks are a few hundred KiB; one block of a 16000 ×
	// 16000 float grid (1 GiB) is refused, as GDAL would hold all of it to read any cell.
	MaxBlockBytes int64 = 256 << 20
)

// checkDeclaredSize refuses a file whose header declares more cells than max, or blocks
// larger than MaxBlockBytes, before anything is read.
func checkDeclaredSize(name string, d *gdal.Dataset, g *geo.Grid, max int64) error {
	if max <= 0 {
		max = DefaultMaxImportCells
	}
	if cells := int64(g.NX) * int64(g.NY); cells > max {
		return fault.Over("max_import_cells", max, cells, "file",
			"%s declares %d × %d = %d cells; the limit is %d", name, g.NX, g.NY, cells, max)
	}
	if b := d.BlockBytes(); b > MaxBlockBytes {
		return fault.Over("max_block_bytes", MaxBlockBytes, b, "file",
			"%s stores its values in blocks of %d bytes, each read whole; the limit is %d bytes: rewrite it tiled (for example as a COG)", name, b, MaxBlockBytes)
	}
	return nil
}

// Result is a finished import.
type Result struct {
	// Grid is the catalogue row: the new one, or the one already holding the same content.
	Grid store.Grid
	// Created is false when the same grid (values, lattice, kind, units, sense) was stored
	// already and nothing was written.
	Created bool
	// NX, NY are the grid's columns and rows.
	NX, NY int
	// Stats are the statistics of the stored values (after unit conversion).
	Stats Stats
	// Notes are decisions the caller should see, e.g. "the file declares elevation, so the
	// grid is stored as kind elevation".
	Notes []string
}

// normalised trims the request's declarations and lower-cases the kind.
func (r Request) normalised() Request {
	r.Kind = store.GridKind(strings.ToLower(strings.TrimSpace(string(r.Kind))))
	r.Units = strings.TrimSpace(r.Units)
	r.Vertical = strings.TrimSpace(r.Vertical)
	r.Registration = strings.TrimSpace(r.Registration)
	r.ID = strings.TrimSpace(r.ID)
	r.Name = strings.TrimSpace(r.Name)
	return r
}

const kindList = "age, depth, elevation, sediment_thickness, crustal_thickness, age_uncertainty or other"

// Check validates the declarations (kind, units, vertical, registration, id, name) before any
// file is read, so that a way in can refuse a bad request at once. Its faults are
// fault.InvalidParameter with Field "kind", "units", "vertical", "registration", "id", "name"
// or "file".
func (r Request) Check() error {
	r = r.normalised()
	if strings.TrimSpace(r.Path) == "" {
		return fault.New(fault.InvalidParameter, "file", "give the file to import")
	}
	if r.Kind == "" {
		return fault.New(fault.InvalidParameter, "kind", "say what the grid holds with kind (%s)", kindList)
	}
	if !r.Kind.Valid() {
		return fault.New(fault.InvalidParameter, "kind", "unknown kind %q (want %s)", r.Kind, kindList)
	}
	if r.Units != "" {
		if _, unit, ok := unitFactor(r.Kind, r.Units); !ok {
			return fault.New(fault.InvalidParameter, "units", "%s grids are stored in %s, and units %q cannot be converted to it", r.Kind, unit, r.Units)
		}
	}
	if r.Vertical != "" {
		s, err := geo.ParseVerticalSense(r.Vertical)
		if err != nil || s == geo.SenseUnknown {
			return fault.New(fault.InvalidParameter, "vertical", "vertical must be depth or elevation, not %q", r.Vertical)
		}
		if r.Kind != store.KindDepth && r.Kind != store.KindElevation {
			return fault.New(fault.InvalidParameter, "vertical", "vertical applies to depth or elevation grids, not %s", r.Kind)
		}
	}
	if r.Registration != "" {
		if _, err := geo.ParseRegistration(r.Registration); err != nil {
			return fault.New(fault.InvalidParameter, "registration", "registration must be cell-centre or node, not %q", r.Registration)
		}
	}
	if r.ID != "" {
		if err := store.ValidateID(r.ID); err != nil {
			return fault.New(fault.InvalidParameter, "id", "id %q must have 1 to %d characters from A-Z, a-z, 0-9, '-' and '_'", r.ID, store.MaxIDLen)
		}
	}
	if len(r.Name) > store.MaxNameLen {
		return fault.New(fault.InvalidParameter, "name", "name is longer than %d bytes", store.MaxNameLen)
	}
	return nil
}

// Import reads the file of r with GDAL, converts its values to the kind's stored unit,
// reconciles the declared and detected vertical sense, checks the values, and stores the grid
// as a Cloud-Optimized GeoTIFF whose metadata hold exactly kind, units, vertical sense and
// registration (nothing that differs between ways in), so that the store's content hash
// deduplicates on values, lattice, kind, units and sense.
//
// Ids: without r.ID the grid gets ContentID, and an existing grid with the same content is
// returned with Created false. With r.ID: a grid with the same content already stored under
// r.ID is returned with Created false (a retried import); the same content under another id,
// or other content under r.ID, is a fault.Conflict with Field "id".
//
// The grid is never held in memory: one pass reads it in blocks of whole rows (at most
// gdal.DefaultStreamBlockBytes each, at least 16 rows; two blocks in memory, as GDAL reads the
// next while the last is worked on), converts, checks and digests each block and writes it to
// a compressed staging GeoTIFF in the system's temporary directory, and the COG is then built
// from that file by GDAL within its block cache (gdal.COGStream, GDAL_CACHEMAX). No size limit
// applies. The cost of the single pass is the staging file: it is written even when the
// values are then refused or the grid is already stored, and it needs free space in TMPDIR of
// about the grid's compressed size.
//
// progress (may be nil) receives fractions in [0, 1] with a short message: the first half
// follows the blocks read, the second GDAL's building of the COG. Calls never overlap, but
// those during the COG step come from another goroutine. Bad input is a *fault.Error
// (InvalidParameter, InvalidGrid, Conflict); other errors are failures of the store or the
// disk, which a retry may fix.
func Import(ctx context.Context, st store.Store, r Request, progress func(fraction float64, message string)) (Result, error) {
	if progress == nil {
		progress = func(float64, string) {}
	}
	r = r.normalised()
	if err := r.Check(); err != nil {
		return Result{}, err
	}
	name := displayName(r.Path)
	progress(0.02, "reading "+name)
	d, err := gdal.Open(r.Path, gdal.ReadOptions{Variable: r.Variable, Registration: r.Registration})
	if err != nil {
		return Result{}, readFault(name, err)
	}
	defer d.Close()
	g, meta := d.Header(), d.Meta()
	if err := snapLattice(name, &g); err != nil {
		return Result{}, err
	}
	if err := checkDeclaredSize(name, d, &g, r.MaxCells); err != nil {
		return Result{}, err
	}
	var res Result

	factor, unit, convertedFrom, notes, err := resolveUnits(r, meta.Units)
	res.Notes = append(res.Notes, notes...)
	if err != nil {
		return Result{}, err
	}

	// One pass: read, convert, canonicalise no-data, accumulate statistics and the content
	// digest, and stage the block for the COG.
	cogw, err := gdal.NewCOGStream(g, gdal.StreamOptions{BlockBytes: blockBytes})
	if err != nil {
		return Result{}, err
	}
	defer cogw.Close()
	// GDAL reads the next block while this one is converted, checked and staged.
	blocks, stopReading := readBlocks(d, g.NX, g.NY, cogw.BlockRows())
	defer stopReading()
	var stats Stats
	dig := newDigest()
	for b := range blocks {
		if err := ctx.Err(); err != nil {
			return Result{}, err
		}
		if b.err != nil {
			return Result{}, readFault(name, b.err)
		}
		prepare(b.data, factor)
		stats.Add(b.data)
		dig.add(b.data)
		if err := cogw.WriteRows(b.row, b.data); err != nil {
			return Result{}, err
		}
		b.release()
		progress(0.05+0.5*float64(b.row+b.n)/float64(g.NY), "reading and checking values")
	}
	stopReading()
	if err := d.Close(); err != nil {
		return Result{}, readFault(name, err)
	}
	res.NX, res.NY, res.Stats = g.NX, g.NY, stats

	kind, sense, notes, err := reconcileSense(r.Kind, r.Vertical, meta.Sense, &stats)
	res.Notes = append(res.Notes, notes...)
	if err != nil {
		return Result{}, err
	}
	if err := checkValues(stats, kind, unit, convertedFrom); err != nil {
		return Result{}, err
	}
	storeSense := map[geo.VerticalSense]store.VerticalSense{
		geo.SenseUnknown: store.VerticalNone, geo.DepthPositiveDown: store.DepthPositiveDown, geo.ElevationPositiveUp: store.ElevationPositiveUp,
	}[sense]
	contentID := dig.id(&g, kind, unit, storeSense)

	row := store.Grid{
		ID: r.ID, Name: r.Name, Kind: kind, Units: unit, VerticalSense: storeSense,
		Footprint:     orb.MultiPolygon{g.Bounds().ToPolygon()},
		ResolutionDeg: math.Max(g.DX, g.DY),
		Registration:  map[geo.Registration]store.Registration{geo.CellCentre: store.CellCentre, geo.Node: store.Node}[g.Registration],
		Provenance:    r.Provenance, Licence: r.Licence,
	}
	if row.ID == "" {
		row.ID = contentID
	}
	if row.Name == "" {
		row.Name = strings.TrimSuffix(name, filepath.Ext(name))
	}
	if row.Provenance == "" {
		row.Provenance = "imported from " + name
		if meta.Source != "" {
			row.Provenance += "; source: " + meta.Source
		}
	}

	// Ids: see the doc comment.
	if ex, err := st.GetGrid(ctx, row.ID); err == nil {
		if r.ID == "" {
			res.Grid = ex // same content id, same content
			progress(1, "already stored")
			return res, nil
		}
		if ex.Kind != kind || ex.Units != unit || ex.VerticalSense != storeSense {
			return Result{}, idTaken(r.ID)
		}
	} else if !errors.Is(err, store.ErrNotFound) {
		return Result{}, err
	}
	progress(0.6, "writing cloud-optimized GeoTIFF")
	// The file's metadata: exactly what the content id covers, nothing that differs between
	// ways in (no name, title, source, file name or time).
	cog := gdal.Meta{Name: string(kind), Units: unit, Sense: sense, Metadata: map[string]string{"kind": string(kind)}}
	got, created, err := st.ImportGrid(ctx, row, func(tmp string) error {
		return cogw.Finish(ctx, tmp, cog, func(f float64) { progress(0.6+0.39*f, "writing cloud-optimized GeoTIFF") })
	})
	switch {
	case errors.Is(err, store.ErrConflict) && r.ID != "":
		return Result{}, idTaken(r.ID)
	case errors.Is(err, store.ErrConflict):
		// The same content was imported concurrently under its content id.
		if ex, gerr := st.GetGrid(ctx, row.ID); gerr == nil {
			got, created, err = ex, false, nil
		}
	case errors.Is(err, store.ErrInvalid):
		return Result{}, fault.New(fault.InvalidParameter, "", "%v", err)
	}
	if err != nil {
		return Result{}, err
	}
	if !created && r.ID != "" && got.ID != r.ID {
		return Result{}, fault.New(fault.Conflict, "id", "the same grid is already stored with id %q; use that id or import without one", got.ID)
	}
	res.Grid, res.Created = got, created
	progress(1, "stored")
	return res, nil
}

// resolveUnits decides the units of a file's values: the request's declaration, else the
// file's (fileUnits), else the kind's stored unit. It returns the factor converting them to the
// stored unit, that unit, the declared units when a conversion happens ("" otherwise), and
// notes for the caller. Units that cannot be converted are a fault.InvalidGrid about "units".
func resolveUnits(r Request, fileUnits string) (factor float64, unit, convertedFrom string, notes []string, err error) {
	declared := r.Units
	if declared == "" {
		declared = strings.TrimSpace(fileUnits)
	}
	if declared == "" && StoredUnit(r.Kind) != "" {
		declared = StoredUnit(r.Kind)
		notes = append(notes, fmt.Sprintf("the file declares no units, so its values are taken as %s", declared))
	}
	factor, unit, ok := unitFactor(r.Kind, declared)
	if !ok {
		return 0, unit, "", notes, fault.New(fault.InvalidGrid, "units",
			"the file's values are in %q, which cannot be converted to %s (the unit of %s grids); declare the units of the values with units", declared, unit, r.Kind)
	}
	if factor != 1 {
		convertedFrom = declared
		notes = append(notes, fmt.Sprintf("values converted from %s to %s", declared, unit))
	}
	return factor, unit, convertedFrom, notes, nil
}

// rowBlock is one block of rows read by readBlocks; release hands its buffer back.
type rowBlock struct {
	row, n  int
	data    []float32
	err     error
	release func()
}

// readBlocks reads d in blocks of rows (the last may be shorter) on a goroutine of its own,
// with two buffers, so that reading overlaps the caller's work on the previous block. When the
// source's storage blocks are taller than rows (wholeTileRows, a multiple of rows), it reads a
// whole row of tiles at a time and hands it out in blocks of rows: every tile is then decoded
// once, whatever the size of GDAL's block cache (half-tile reads of a 15-arc-second grid
// decoded each tile twice with the default 64 MB cache, measured on this project's machine). The channel closes after the last block or the
// first failed one. stop (idempotent) ends the reading, waits for the goroutine and frees the
// buffers (outside the Go heap, rowBuffer): no block may be used after it; call it before
// closing d.
func readBlocks(d *gdal.Dataset, nx, ny, rows int) (<-chan rowBlock, func()) {
	chunk := rows
	if by := wholeTileRows(d, nx); by > rows && by%rows == 0 {
		chunk = by
	}
	free := make(chan []float32, 2)
	buf0, free0 := rowBuffer(chunk * nx)
	buf1, free1 := rowBuffer(chunk * nx)
	free <- buf0
	free <- buf1
	out := make(chan rowBlock)
	quit, done := make(chan struct{}), make(chan struct{})
	go func() {
		defer close(done)
		defer close(out)
		for row := 0; row < ny; row += chunk {
			var buf []float32
			select {
			case buf = <-free:
			case <-quit:
				return
			}
			n := min(chunk, ny-row)
			err := d.ReadRows(row, buf[:n*nx])
			// The chunk goes out in blocks of rows; its buffer is free once the last is released.
			var left atomic.Int32
			parts := max(1, (n+rows-1)/rows)
			if err != nil {
				parts = 1
			}
			left.Store(int32(parts))
			release := func() {
				if left.Add(-1) == 0 {
					free <- buf
				}
			}
			for p := range parts {
				r0 := p * rows
				k := min(rows, n-r0)
				b := rowBlock{row: row + r0, n: k, data: buf[r0*nx : (r0+k)*nx], err: err, release: release}
				if err != nil {
					b.n, b.data = n, buf[:n*nx]
				}
				select {
				case out <- b:
				case <-quit:
					return
				}
			}
			if err != nil {
				return
			}
		}
	}()
	var once bool
	return out, func() {
		if !once {
			once = true
			close(quit)
			<-done
			free0()
			free1()
		}
	}
}

func idTaken(id string) error {
	return fault.New(fault.Conflict, "id", "a grid with id %q already exists", id)
}

// readFault turns a GDAL open or read failure into a fault about the file.
func readFault(name string, err error) error {
	field := "file"
	if errors.Is(err, gdal.ErrSeveralVariables) || errors.Is(err, gdal.ErrNoSuchVariable) {
		field = "variable"
	}
	return fault.New(fault.InvalidGrid, field, "%s is not a readable grid: %w", name, err)
}

// displayName is the file's base name, also for GDAL names such as NETCDF:"dir/f.nc":var.
func displayName(path string) string {
	if i := strings.Index(path, `"`); i >= 0 {
		if j := strings.Index(path[i+1:], `"`); j >= 0 {
			return filepath.Base(path[i+1 : i+1+j])
		}
	}
	return filepath.Base(path)
}

// latticeScale sets the precision origin and spacing are kept to: 1/latticeScale = 1e-9°
// (about 0.1 mm on the ground). Formats that store coordinates rather than a geotransform (netCDF coordinate
// variables) give the lattice back with rounding errors of about 1e-15°; snapping makes the
// same lattice compare equal whichever format carried it.
const latticeScale = 1e9

// snap rounds x to the nearest multiple of 1/latticeScale (the double nearest that decimal).
func snap(x float64) float64 { return math.Round(x*latticeScale) / latticeScale }

// snapLattice snaps g's origin and spacing (snap) and refuses, as a fault.InvalidGrid about the
// file, a lattice that is not finite or whose spacing snaps to nothing (below 1/latticeScale).
func snapLattice(name string, g *geo.Grid) error {
	g.West, g.North, g.DX, g.DY = snap(g.West), snap(g.North), snap(g.DX), snap(g.DY)
	for _, v := range []float64{g.West, g.North, g.DX, g.DY} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fault.New(fault.InvalidGrid, "file", "%s is not a readable grid: its georeferencing is not finite", name)
		}
	}
	if !(g.DX > 0 && g.DY > 0) {
		return fault.New(fault.InvalidGrid, "file", "%s is not a readable grid: its cell spacing is below %g°", name, 1/latticeScale)
	}
	return nil
}

// prepare converts a block to the stored unit in place and gives every no-data cell the same
// NaN bit pattern (so equal grids give equal files and digests).
func prepare(blk []float32, factor float64) {
	nan := float32(math.NaN())
	for i, v := range blk {
		switch {
		case v != v:
			blk[i] = nan
		case factor != 1:
			blk[i] = float32(float64(v) * factor)
		}
	}
}

// reconcileSense decides the vertical sense of a bathymetry grid and the kind it is stored as.
// The sense is the explicit override, else the file's declaration, else the asked kind's
// (depth: positive down; elevation: positive up). The sign of the values
// (geo.SenseOfNegativeFraction) must agree with a sense that was not given explicitly; an
// explicit override that disagrees is kept with a note. Other kinds have no sense.
func reconcileSense(asked store.GridKind, vertical string, declared geo.VerticalSense, s *Stats) (store.GridKind, geo.VerticalSense, []string, error) {
	if asked != store.KindDepth && asked != store.KindElevation {
		return asked, geo.SenseUnknown, nil, nil
	}
	explicit, _ := geo.ParseVerticalSense(vertical) // checked by Request.Check
	sense, by := explicit, "vertical says"
	if sense == geo.SenseUnknown {
		sense, by = declared, "the file declares"
	}
	if sense == geo.SenseUnknown {
		sense, by = geo.DepthPositiveDown, "kind "+string(asked)+" implies"
		if asked == store.KindElevation {
			sense = geo.ElevationPositiveUp
		}
	}
	var notes []string
	frac := s.NegativeFraction()
	if guess := geo.SenseOfNegativeFraction(frac); guess != geo.SenseUnknown && guess != sense {
		if explicit == geo.SenseUnknown {
			return asked, sense, nil, fault.New(fault.InvalidGrid, "vertical",
				"%.0f%% of the values are negative, which reads as %s, but %s %s; declare which it is with vertical: depth or elevation",
				100*frac, senseText(guess), by, senseText(sense))
		}
		notes = append(notes, fmt.Sprintf("%.0f%% of the values are negative, which reads as %s; stored as %s as vertical says", 100*frac, senseText(guess), senseText(sense)))
	}
	kind := store.KindDepth
	if sense == geo.ElevationPositiveUp {
		kind = store.KindElevation
	}
	if kind != asked {
		notes = append(notes, fmt.Sprintf("%s %s, so the grid is stored as kind %s", by, sense, kind))
	}
	return kind, sense, notes, nil
}

// senseText names a vertical sense with its sign convention.
func senseText(s geo.VerticalSense) string {
	switch s {
	case geo.DepthPositiveDown:
		return "depth (positive down)"
	case geo.ElevationPositiveUp:
		return "elevation (positive up)"
	}
	return s.String()
}

// digest hashes a grid's values block by block, in row order.
type digest struct {
	h   hash.Hash
	buf []byte
}

func newDigest() *digest { return &digest{h: sha256.New(), buf: make([]byte, 4<<10)} }

// littleEndian: float32 values in memory are already the bytes the digest hashes.
var littleEndian = binary.NativeEndian.Uint16([]byte{1, 0}) == 1

// add hashes the values' little-endian bytes (in place on little-endian machines, else
// through a small buffer of its own).
func (d *digest) add(blk []float32) {
	if littleEndian && len(blk) > 0 {
		d.h.Write(unsafe.Slice((*byte)(unsafe.Pointer(&blk[0])), 4*len(blk)))
		return
	}
	for len(blk) > 0 {
		n := min(len(blk), len(d.buf)/4)
		for i, v := range blk[:n] {
			binary.LittleEndian.PutUint32(d.buf[4*i:], math.Float32bits(v))
		}
		d.h.Write(d.buf[:4*n])
		blk = blk[n:]
	}
}

// id is ContentID from the values' digest and the description.
func (d *digest) id(g *geo.Grid, kind store.GridKind, units string, sense store.VerticalSense) string {
	h := sha256.New()
	fmt.Fprintf(h, "%s\x00%s\x00%s\x00%d %d %v\x00", kind, units, sense, g.NX, g.NY, g.Registration)
	var buf [8]byte
	for _, v := range []float64{g.West, g.North, g.DX, g.DY} {
		binary.LittleEndian.PutUint64(buf[:], math.Float64bits(v))
		h.Write(buf[:])
	}
	h.Write(d.h.Sum(nil))
	return store.PrefixGrid + hex.EncodeToString(h.Sum(nil))[:32]
}

// ContentID is the id an import without an explicit id gives a grid: "gr_" and 32 hex digits
// of SHA-256 over kind, units, vertical sense, lattice (size, registration, origin, spacing)
// and the values in row order (no-data as one NaN pattern). g's values must already be in the
// stored unit.
func ContentID(g *geo.Grid, kind store.GridKind, units string, sense store.VerticalSense) string {
	d := newDigest()
	blk := append([]float32(nil), g.Data...)
	prepare(blk, 1)
	d.add(blk)
	return d.id(g, kind, units, sense)
}
