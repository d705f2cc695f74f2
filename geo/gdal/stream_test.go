package gdal

import (
	"bytes"
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"ridgeflank/geo"
)

// streamGrid is a 0–360° grid with structure in both directions and no-data patches, larger
// than the block bounds the tests give a COGStream.
func streamGrid(nx, ny int, reg geo.Registration) *geo.Grid {
	g := &geo.Grid{NX: nx, NY: ny, DX: 360.0 / float64(nx), DY: 180.0 / float64(ny), Registration: reg}
	g.West, g.North = g.DX/2, 90-g.DY/2
	g.Data = make([]float32, nx*ny)
	for r := 0; r < ny; r++ {
		for c := 0; c < nx; c++ {
			v := float32(-3000 - 1000*math.Sin(float64(c)/97) - 7*float64(r%113) + 0.25*float64(c%13))
			if (r/40+c/60)%7 == 0 {
				v = float32(math.NaN())
			}
			g.Data[r*nx+c] = v
		}
	}
	return g
}

// writeAllRows writes every row of g to s, a block at a time.
func writeAllRows(t *testing.T, s *COGStream, g *geo.Grid) {
	t.Helper()
	for row := 0; row < g.NY; row += s.BlockRows() {
		n := min(s.BlockRows(), g.NY-row)
		if err := s.WriteRows(row, g.Data[row*g.NX:(row+n)*g.NX]); err != nil {
			t.Fatal(err)
		}
	}
}

// streamCOG writes g through a COGStream with the given block bound.
func streamCOG(t *testing.T, path string, g *geo.Grid, m Meta, blockBytes int) *COGStream {
	t.Helper()
	s, err := NewCOGStream(*g, StreamOptions{BlockBytes: blockBytes, StageDir: t.TempDir()})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	writeAllRows(t, s, g)
	if err := s.Finish(context.Background(), path, m, nil); err != nil {
		t.Fatal(err)
	}
	return s
}

// TestCOGStreamEqualsWriteCOG: the streamed COG holds the same values, lattice and metadata as
// the one written from memory (and the same bytes, so stored grids deduplicate across both).
func TestCOGStreamEqualsWriteCOG(t *testing.T) {
	for _, reg := range []geo.Registration{geo.CellCentre, geo.Node} {
		t.Run(reg.String(), func(t *testing.T) {
			dir := t.TempDir()
			g := streamGrid(1000, 500, reg)
			m := Meta{Name: "depth", Units: "m", Sense: geo.DepthPositiveDown, Metadata: map[string]string{"kind": "depth"}}
			mem := filepath.Join(dir, "mem.tif")
			if err := WriteCOG(mem, g, m); err != nil {
				t.Fatal(err)
			}
			streamed := filepath.Join(dir, "stream.tif")
			// 32 KiB: 16-row blocks of 1000 columns (the smallest block), 32 blocks.
			s := streamCOG(t, streamed, g, m, 32<<10)
			if s.BlockRows() != minStreamRows {
				t.Fatalf("block rows %d, want %d", s.BlockRows(), minStreamRows)
			}
			sameGridFile(t, streamed, mem, g)
			ba, _ := os.ReadFile(mem)
			bb, _ := os.ReadFile(streamed)
			if !bytes.Equal(ba, bb) {
				t.Errorf("streamed COG (%d bytes) differs from the in-memory one (%d bytes)", len(bb), len(ba))
			}
			stageDir := filepath.Dir(s.stagePath)
			if err := s.Close(); err != nil {
				t.Fatal(err)
			}
			if left, _ := filepath.Glob(filepath.Join(stageDir, "*")); len(left) != 0 {
				t.Errorf("staging files left: %v", left)
			}
		})
	}
}

// TestCOGStreamBlockRows: blocks are powers of two between 16 and 256 rows within the bound.
func TestCOGStreamBlockRows(t *testing.T) {
	for _, tc := range []struct {
		name      string
		nx, bytes int
		want      int
	}{
		{"4000 columns, 1 MiB", 4000, 1 << 20, 64},
		{"86400 columns, default", 86400, 0, 256},
		{"100000 columns, default", 100000, 0, 128},
		{"43200 columns, default", 43200, 0, 256},
		{"narrow grid", 100, 0, 256},
		{"bound below 16 rows", 4000, 1000, 16},
	} {
		t.Run(tc.name, func(t *testing.T) {
			g := geo.Grid{NX: tc.nx, NY: 20, DX: 0.1, DY: 0.1, West: 0.05, North: 10}
			s, err := NewCOGStream(g, StreamOptions{BlockBytes: tc.bytes, StageDir: t.TempDir()})
			if err != nil {
				t.Fatal(err)
			}
			defer s.Close()
			if s.BlockRows() != tc.want {
				t.Fatalf("block rows %d, want %d", s.BlockRows(), tc.want)
			}
		})
	}
}

// TestCOGStreamMisuse: rows out of order, an unfinished grid and a non-NaN no-data value are
// refused, and nothing is left at the destination.
func TestCOGStreamMisuse(t *testing.T) {
	dir := t.TempDir()
	g := streamGrid(100, 40, geo.CellCentre)
	s, err := NewCOGStream(*g, StreamOptions{BlockBytes: 100 * 4 * 16, StageDir: dir})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if err := s.WriteRows(16, g.Data[16*100:32*100]); err == nil {
		t.Fatal("a block out of order was accepted")
	}
	if err := s.WriteRows(0, g.Data[:15*100]); err == nil {
		t.Fatal("a short block was accepted")
	}
	if err := s.WriteRows(0, g.Data[:16*100]); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out.tif")
	if err := s.Finish(context.Background(), out, Meta{}, nil); err == nil {
		t.Fatal("an unfinished grid was written")
	}
	for row := 16; row < 40; row += 16 {
		if err := s.WriteRows(row, g.Data[row*100:min(row+16, 40)*100]); err != nil {
			t.Fatal(err)
		}
	}
	nd := -9999.0
	if err := s.Finish(context.Background(), out, Meta{NoData: &nd}, nil); err == nil {
		t.Fatal("a non-NaN no-data value was accepted")
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if err := s.Finish(ctx, out, Meta{}, nil); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled finish: %v, want context.Canceled", err)
	}
	if _, err := os.Stat(out); err == nil {
		t.Fatal("a cancelled finish left a file")
	}
	if err := s.Finish(context.Background(), out, Meta{}, nil); err != nil {
		t.Fatal(err)
	}
	back, _ := mustRead(t, out)
	sameData(t, back, g)
}

// TestTranslateCOG: GDAL's own translate (the benchmark peer) copies values unchanged.
func TestTranslateCOG(t *testing.T) {
	dir := t.TempDir()
	g := streamGrid(300, 150, geo.CellCentre)
	src := filepath.Join(dir, "src.tif")
	if err := WriteCOG(src, g, Meta{Units: "m"}); err != nil {
		t.Fatal(err)
	}
	dst := filepath.Join(dir, "dst.tif")
	if err := TranslateCOG(context.Background(), src, dst); err != nil {
		t.Fatal(err)
	}
	sameAsGrid(t, dst, g)
}

// TestCOGStreamCancelledDuringCopy: cancelling the context while GDAL builds the COG stops it
// with the context's error and leaves no file. The 4000×2000 grid takes far longer than the
// 30 ms before the cancellation (about a second on this project's machine).
func TestCOGStreamCancelledDuringCopy(t *testing.T) {
	dir := t.TempDir()
	g := streamGrid(4000, 2000, geo.CellCentre)
	s, err := NewCOGStream(*g, StreamOptions{StageDir: dir})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	writeAllRows(t, s, g)
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Millisecond)
	defer cancel()
	out := filepath.Join(dir, "out.tif")
	if err := s.Finish(ctx, out, Meta{}, nil); !errors.Is(err, context.DeadlineExceeded) {
		t.Fatalf("finish cancelled during the copy: %v, want context.DeadlineExceeded", err)
	}
	if left, _ := filepath.Glob(filepath.Join(dir, "*out.tif*")); len(left) > 0 {
		t.Fatalf("files left: %v", left)
	}
}

// sameGridFile checks that the grid file got reads as the file want does (lattice, metadata)
// and holds g's values on g's lattice.
func sameGridFile(t *testing.T, got, want string, g *geo.Grid) {
	t.Helper()
	a, ma := mustRead(t, want)
	b, mb := mustRead(t, got)
	sameHeader(t, b, a)
	sameHeader(t, b, g)
	sameData(t, b, g)
	if ma.Units != mb.Units || ma.Name != mb.Name || ma.Sense != mb.Sense || ma.Driver != mb.Driver {
		t.Fatalf("meta %+v, want %+v", mb, ma)
	}
	for k, v := range ma.Metadata {
		if mb.Metadata[k] != v {
			t.Errorf("metadata %s = %q, want %q", k, mb.Metadata[k], v)
		}
	}
	if len(ma.Metadata) != len(mb.Metadata) {
		t.Errorf("metadata %v, want %v", mb.Metadata, ma.Metadata)
	}
}

// sameAsGrid checks that the grid file path holds g: its lattice and its values.
func sameAsGrid(t *testing.T, path string, g *geo.Grid) {
	t.Helper()
	got, _ := mustRead(t, path)
	sameHeader(t, got, g)
	sameData(t, got, g)
}
