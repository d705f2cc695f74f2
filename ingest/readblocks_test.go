package ingest

import (
	"context"
	"os/exec"
	"path/filepath"
	"slices"
	"testing"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// TestReadBlocksWholeTileRows: a file tiled 64 rows high (made by GDAL's own gdal_translate) is
// read in blocks of 16 rows through whole rows of tiles at a time; the blocks arrive in order,
// cover every row once (the last row of tiles is short: 300 = 4·64 + 44 rows) and hold exactly
// what one read of the whole grid through GDAL returns. Blocks as tall as the tiles, or taller,
// are read as they are.
func TestReadBlocksWholeTileRows(t *testing.T) {
	const nx, ny = 1000, 300
	g := &geo.Grid{NX: nx, NY: ny, DX: 0.36, DY: 0.36, West: -179.82, North: 53.82, Data: make([]float32, nx*ny)}
	for i := range g.Data {
		g.Data[i] = float32(i%nx) + 1000*float32(i/nx)
	}
	tiled, whole := tiledFile(t, g, "tiled-64.tif", "m")
	d, err := gdal.Open(tiled, gdal.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	if got := d.BlockRows(); got != 64 {
		t.Fatalf("BlockRows = %d, want the file's 64 (gdal_translate BLOCKYSIZE=64)", got)
	}
	for _, rows := range []int{16, 64, 128} {
		t.Run(map[int]string{16: "blocks of 16 rows", 64: "blocks as tall as the tiles", 128: "blocks taller than the tiles"}[rows], func(t *testing.T) {
			blocks, stop := readBlocks(d, nx, ny, rows)
			defer stop()
			next := 0
			for b := range blocks {
				if b.err != nil {
					t.Fatal(b.err)
				}
				if b.row != next || b.n != min(rows, ny-next) || len(b.data) != b.n*nx {
					t.Fatalf("block at row %d, %d rows, %d values; want row %d, %d rows", b.row, b.n, len(b.data), next, min(rows, ny-next))
				}
				if !slices.Equal(b.data, whole[b.row*nx:(b.row+b.n)*nx]) {
					t.Fatalf("block at row %d differs from GDAL's read of the whole grid", b.row)
				}
				next += b.n
				b.release()
			}
			if next != ny {
				t.Fatalf("blocks ended at row %d of %d", next, ny)
			}
		})
	}
}

// TestReaderThroughRowsOfTiles: a compressed file tiled 64 rows high (made by gdal_translate) is
// read by a Reader in pieces shorter than its tiles, across the boundary of two rows of tiles,
// backwards, as tall as the tiles and at the short last row of tiles; every piece equals what
// GDAL reads of the same rows of the file directly.
func TestReaderThroughRowsOfTiles(t *testing.T) {
	const nx, ny = 700, 300
	g := &geo.Grid{NX: nx, NY: ny, DX: 0.5, DY: 0.5, West: -174.75, North: 74.75, Data: make([]float32, nx*ny)}
	for i := range g.Data {
		g.Data[i] = float32(i%nx)/10 + float32(i/nx)/7 // ages 0–142 Ma
	}
	tiled, whole := tiledFile(t, g, "age-tiled-64.tif", "Ma", "-co", "COMPRESS=DEFLATE", "-co", "PREDICTOR=3")
	r, err := OpenReader(context.Background(), Request{Path: tiled, Kind: store.KindAge}, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	for _, p := range []struct{ row0, n int }{
		{0, 16}, {16, 16}, {48, 32}, {64, 64}, {20, 8}, {130, 100}, {256, 44}, {290, 10}, {0, 300},
	} {
		got := make([]float32, p.n*nx)
		if err := r.ReadRows(p.row0, got); err != nil {
			t.Fatalf("rows %d..%d: %v", p.row0, p.row0+p.n-1, err)
		}
		if !slices.Equal(got, whole[p.row0*nx:(p.row0+p.n)*nx]) {
			t.Errorf("rows %d..%d differ from GDAL's direct read", p.row0, p.row0+p.n-1)
		}
	}
	if err := r.ReadRows(290, make([]float32, 20*nx)); err == nil {
		t.Error("rows 290..309 of a 300-row grid: no error")
	}
}

// tiledFile writes g (values in units) as a GeoTIFF tiled 128 × 64 by GDAL's own
// gdal_translate (with the extra creation options opts) in a temporary directory, and returns its path and GDAL's read of the
// whole grid. It skips the test when gdal_translate is not installed.
func tiledFile(t *testing.T, g *geo.Grid, name, units string, opts ...string) (path string, whole []float32) {
	t.Helper()
	if _, err := exec.LookPath("gdal_translate"); err != nil {
		t.Skip("gdal_translate not installed (Debian: gdal-bin)")
	}
	dir := t.TempDir()
	src := filepath.Join(dir, "src.tif")
	if err := gdal.WriteCOG(src, g, gdal.Meta{Units: units}); err != nil {
		t.Fatal(err)
	}
	path = filepath.Join(dir, name)
	args := append([]string{"-q", "-co", "TILED=YES", "-co", "BLOCKXSIZE=128", "-co", "BLOCKYSIZE=64"}, opts...)
	if out, err := exec.Command("gdal_translate", append(args, src, path)...).CombinedOutput(); err != nil {
		t.Fatalf("gdal_translate: %v\n%s", err, out)
	}
	d, err := gdal.Open(path, gdal.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	whole = make([]float32, g.NX*g.NY)
	if err := d.ReadRows(0, whole); err != nil {
		t.Fatal(err)
	}
	return path, whole
}
