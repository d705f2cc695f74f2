package raster

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync"

	"github.com/paulmach/orb"
	"golang.org/x/sync/errgroup"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
)

// File is one grid file opened for windowed reads: its full-resolution grid and overview
// levels (gdal.Level), read in BlockSize blocks through a Cache. Reads are safe for concurrent
// use; the file keeps a few GDAL handles open (one read at a time on each).
type File struct {
	key    string
	path   string
	opt    gdal.ReadOptions
	levels []gdal.Level
	cache  *Cache

	mu     sync.Mutex
	idle   []*gdal.Dataset
	max    int
	slots  chan struct{}
	closed bool
}

// Open opens path for windowed reads. key names the file's content in the cache (a content
// hash: two files with one key must hold the same values); opt as for gdal.Open.
func Open(path, key string, opt gdal.ReadOptions, cache *Cache) (*File, error) {
	if cache == nil {
		return nil, errors.New("raster: nil cache")
	}
	d, err := gdal.Open(path, opt)
	if err != nil {
		return nil, err
	}
	lv, err := d.Levels()
	if err != nil {
		d.Close()
		return nil, err
	}
	n := max(2, min(runtime.GOMAXPROCS(0), 4))
	f := &File{key: key, path: path, opt: opt, levels: lv, cache: cache,
		idle: []*gdal.Dataset{d}, max: n, slots: make(chan struct{}, n)}
	return f, nil
}

// Header is the full-resolution grid's shape (no Data).
func (f *File) Header() geo.Grid { return f.levels[0].Grid }

// Levels lists the full resolution and the overviews, finest first.
func (f *File) Levels() []gdal.Level { return f.levels }

// Key is the content key the file was opened with.
func (f *File) Key() string { return f.key }

// LevelFor returns the coarsest level whose spacing is no coarser than spacingDeg in both
// directions (0, full resolution, when none is). Levels whose size is not a whole fraction of
// the full grid's are used only when exact is false.
func (f *File) LevelFor(spacingDeg float64, exact bool) int {
	best := 0
	for i, l := range f.levels[1:] {
		if l.Grid.DX > spacingDeg*(1+1e-9) || l.Grid.DY > spacingDeg*(1+1e-9) {
			break
		}
		if exact && !f.exact(i+1) {
			continue
		}
		best = i + 1
	}
	return best
}

// ExactLevel returns the level whose spacing is factor (a power of two) times the full grid's
// and whose cells are whole blocks of full-resolution cells, or −1 when the file has none.
func (f *File) ExactLevel(factor int) int {
	for i := range f.levels {
		if f.exact(i) && math.Abs(f.levels[i].Factor-float64(factor)) < 1e-9*float64(factor) {
			return i
		}
	}
	return -1
}

// exact reports whether level i's cells are whole f×f blocks of full-resolution cells, aligned
// with the grid's origin (its size divides the full size exactly), so its lattice is a
// coarsening of the full one.
func (f *File) exact(i int) bool {
	if i == 0 {
		return true
	}
	b, l := f.levels[0].Grid, f.levels[i].Grid
	fx := float64(b.NX) / float64(l.NX)
	fy := float64(b.NY) / float64(l.NY)
	return b.Registration == geo.CellCentre && fx == math.Round(fx) && fy == math.Round(fy) && fx == fy
}

// Window returns the part of level level inside bound b (the rules of geo.Grid.Window: windows
// of global grids wrap across their seam, antimeridian bounds are read as such).
func (f *File) Window(ctx context.Context, b orb.Bound, level int) (*geo.Grid, error) {
	return f.window(ctx, b, level, true)
}

// Scan is Window for a read that should not fill the cache: blocks already cached are used,
// newly read ones are not kept.
func (f *File) Scan(ctx context.Context, b orb.Bound, level int) (*geo.Grid, error) {
	return f.window(ctx, b, level, false)
}

func (f *File) window(ctx context.Context, b orb.Bound, level int, keep bool) (*geo.Grid, error) {
	if level < 0 || level >= len(f.levels) {
		return nil, fmt.Errorf("raster: no level %d in %s", level, f.path)
	}
	lv := f.levels[level].Grid
	sp, err := lv.WindowSpec(b)
	if err != nil {
		return nil, err
	}
	out := sp.Out
	out.Data = make([]float32, out.NX*out.NY)
	if err := f.fill(ctx, &out, level, sp, keep); err != nil {
		return nil, err
	}
	return &out, nil
}

// WindowMean is Window(ctx, b, level) coarsened by whole factors fx × fy with geo.BlockMean
// (Resample's block means, bit for bit), read band by band into one reused buffer so the
// full-resolution window is never held: its memory is the answer plus about one block row of
// the window. keep is Window's (true) or Scan's (false) use of the cache. The level must be
// cell-centre registered (Window and geo.Grid.Resample serve node grids).
func (f *File) WindowMean(ctx context.Context, b orb.Bound, level, fx, fy int, keep bool) (*geo.Grid, error) {
	if level < 0 || level >= len(f.levels) {
		return nil, fmt.Errorf("raster: no level %d in %s", level, f.path)
	}
	lv := f.levels[level].Grid
	sp, err := lv.WindowSpec(b)
	if err != nil {
		return nil, err
	}
	m, err := geo.NewBlockMean(&sp.Out, fx, fy)
	if err != nil {
		return nil, err
	}
	// bands of whole output rows, about one block row of the level tall
	rows := max(fy, BlockSize/fy*fy)
	buf := make([]float32, sp.Out.NX*min(rows, sp.Out.NY))
	for r := 0; r < sp.Out.NY; r += rows {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		n := min(rows, sp.Out.NY-r)
		band := sp.Out
		band.NY, band.North = n, sp.Out.North-float64(r)*sp.Out.DY
		band.Data = buf[:band.NX*n]
		bsp := sp
		bsp.Out, bsp.Row0 = band, sp.Row0+r
		if err := f.fill(ctx, &band, level, bsp, keep); err != nil {
			return nil, err
		}
		m.AddRows(r, band.Data)
	}
	return m.Result(), nil
}

// Rows calls fn with successive bands of about rowsPerBand rows of the window of bound b at
// level (each band a *geo.Grid whose North is its first row's latitude), north to south. Blocks
// it reads are not kept in the cache unless they already were, so a scan larger than the budget
// does not evict what other questions use. The band is reused after fn returns.
func (f *File) Rows(ctx context.Context, b orb.Bound, level, rowsPerBand int, fn func(band *geo.Grid) error) error {
	if level < 0 || level >= len(f.levels) {
		return fmt.Errorf("raster: no level %d in %s", level, f.path)
	}
	lv := f.levels[level].Grid
	sp, err := lv.WindowSpec(b)
	if err != nil {
		return err
	}
	if rowsPerBand <= 0 {
		rowsPerBand = BlockSize
	}
	for r := 0; r < sp.Out.NY; r += rowsPerBand {
		n := min(rowsPerBand, sp.Out.NY-r)
		band := sp.Out
		band.NY, band.North = n, sp.Out.North-float64(r)*sp.Out.DY
		band.Data = make([]float32, band.NX*n)
		bsp := sp
		bsp.Out, bsp.Row0 = band, sp.Row0+r
		if err := f.fill(ctx, &band, level, bsp, false); err != nil {
			return err
		}
		if err := fn(&band); err != nil {
			return err
		}
	}
	return nil
}

// fill copies the window sp of level into out from cached or freshly read blocks.
func (f *File) fill(ctx context.Context, out *geo.Grid, level int, sp geo.WindowSpec, keep bool) error {
	lv := f.levels[level].Grid
	type part struct {
		bx, by        int
		dstCol        int // first output column of this run
		srcCol0, srcN int // run within the level
	}
	var parts []part
	by0, by1 := sp.Row0/BlockSize, (sp.Row0+out.NY-1)/BlockSize
	dc := 0
	for _, run := range sp.Runs {
		for by := by0; by <= by1; by++ {
			for bx := run.Src0 / BlockSize; bx <= (run.Src0+run.N-1)/BlockSize; bx++ {
				parts = append(parts, part{bx, by, dc, run.Src0, run.N})
			}
		}
		dc += run.N
	}
	copyPart := func(p part, blk []float32) {
		bw := min(BlockSize, lv.NX-p.bx*BlockSize)
		// columns of this block inside the run
		c0 := max(p.srcCol0, p.bx*BlockSize)
		c1 := min(p.srcCol0+p.srcN, (p.bx+1)*BlockSize) // exclusive
		r0 := max(sp.Row0, p.by*BlockSize)
		r1 := min(sp.Row0+out.NY, (p.by+1)*BlockSize)
		for r := r0; r < r1; r++ {
			src := blk[(r-p.by*BlockSize)*bw:]
			dst := out.Data[(r-sp.Row0)*out.NX+p.dstCol+(c0-p.srcCol0):]
			copy(dst[:c1-c0], src[c0-p.bx*BlockSize:c1-p.bx*BlockSize])
		}
	}
	var missing []part
	for _, p := range parts {
		if blk, ok := f.cache.get(blockKey{f.key, level, p.bx, p.by}); ok {
			f.cache.hits.Add(1)
			copyPart(p, blk)
		} else {
			missing = append(missing, p)
		}
	}
	if len(missing) == 0 {
		return nil
	}
	get := func(p part) error {
		blk, err := f.cache.load(blockKey{f.key, level, p.bx, p.by}, keep, func() ([]float32, error) {
			return f.readBlock(level, p.bx, p.by)
		})
		if err != nil {
			return err
		}
		copyPart(p, blk)
		return nil
	}
	if len(missing) == 1 {
		return get(missing[0])
	}
	g, gctx := errgroup.WithContext(ctx)
	g.SetLimit(f.max)
	for _, p := range missing {
		g.Go(func() error {
			if err := gctx.Err(); err != nil {
				return err
			}
			return get(p)
		})
	}
	return g.Wait()
}

// readBlock reads block (bx, by) of level from the file.
func (f *File) readBlock(level, bx, by int) ([]float32, error) {
	lv := f.levels[level].Grid
	c0, r0 := bx*BlockSize, by*BlockSize
	nx, ny := min(BlockSize, lv.NX-c0), min(BlockSize, lv.NY-r0)
	buf := make([]float32, nx*ny)
	d, err := f.handle()
	if err != nil {
		return nil, err
	}
	err = d.ReadWindow(level, c0, r0, nx, ny, buf)
	f.put(d)
	if err != nil {
		return nil, err
	}
	return buf, nil
}

// handle waits for one of the file's max read slots, then takes an idle GDAL handle or opens
// another. put gives both back.
func (f *File) handle() (*gdal.Dataset, error) {
	f.slots <- struct{}{}
	f.mu.Lock()
	if f.closed {
		f.mu.Unlock()
		<-f.slots
		return nil, fmt.Errorf("raster: %s is closed", f.path)
	}
	if n := len(f.idle); n > 0 {
		d := f.idle[n-1]
		f.idle = f.idle[:n-1]
		f.mu.Unlock()
		return d, nil
	}
	f.mu.Unlock()
	d, err := gdal.Open(f.path, f.opt)
	if err != nil {
		<-f.slots
		return nil, err
	}
	return d, nil
}

func (f *File) put(d *gdal.Dataset) {
	f.mu.Lock()
	closed := f.closed
	if !closed {
		f.idle = append(f.idle, d)
	}
	f.mu.Unlock()
	if closed {
		d.Close()
	}
	<-f.slots
}

// Close closes the file's idle handles (handles in use close when their read ends) and forgets
// its cached blocks when forget is true.
func (f *File) Close(forget bool) error {
	f.mu.Lock()
	f.closed = true
	idle := f.idle
	f.idle = nil
	f.mu.Unlock()
	var err error
	for _, d := range idle {
		if e := d.Close(); err == nil {
			err = e
		}
	}
	if forget {
		f.cache.drop(f.key)
	}
	return err
}
