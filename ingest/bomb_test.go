package ingest

import (
	"context"
	"os/exec"
	"path/filepath"
	"runtime"
	"testing"

	"ridgeflank/fault"
	"ridgeflank/store"
)

// A file of a few hundred bytes declaring a 16000 × 16000 Float32 grid in one compressed block
// (SPARSE_OK: the block is never written) made an import hold the whole 1 GiB block, as GDAL
// decodes whole blocks whatever its cache size (measured: 1.1 GB peak resident with the
// command-line import, against 0.30 GB for the same grid tiled). It is refused from its header,
// before any value is read; a file declaring more cells than Request.MaxCells likewise.
func TestDeclaredSizeRefusedBeforeReading(t *testing.T) {
	if _, err := exec.LookPath("gdal_create"); err != nil {
		t.Skip("gdal_create not installed (Debian package gdal-bin)")
	}
	dir := t.TempDir()
	bomb := filepath.Join(dir, "bomb.tif")
	out, err := exec.Command("gdal_create", "-outsize", "16000", "16000", "-ot", "Float32",
		"-a_srs", "EPSG:4326", "-a_ullr", "-180", "90", "180", "-90",
		"-co", "SPARSE_OK=TRUE", "-co", "BLOCKYSIZE=16000", "-co", "COMPRESS=DEFLATE", bomb).CombinedOutput()
	if err != nil {
		t.Fatalf("gdal_create: %v\n%s", err, out)
	}
	st := openStore(t)
	ctx := context.Background()
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	_, err = Import(ctx, st, Request{Path: bomb, Kind: store.KindAge, Units: "Ma"}, nil)
	runtime.ReadMemStats(&after)
	f, ok := fault.As(err)
	if !ok || f.Kind != fault.LimitExceeded || f.Limit == nil || f.Limit.Name != "max_block_bytes" || f.Limit.Asked != 16000*16000*4 {
		t.Fatalf("one 1 GiB block: %v", err)
	}
	// Refused before reading: the import allocated far less than one block (16 MiB: common
	// practice, no source; the block is 1 GiB).
	if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 16<<20 {
		t.Errorf("the refused import allocated %d bytes", alloc)
	}

	// The same lattice tiled is within the block limit; a small MaxCells refuses it by its
	// declared size, before reading too.
	tiled := filepath.Join(dir, "tiled.tif")
	if out, err := exec.Command("gdal_create", "-outsize", "16000", "16000", "-ot", "Float32",
		"-a_srs", "EPSG:4326", "-a_ullr", "-180", "90", "180", "-90",
		"-co", "SPARSE_OK=TRUE", "-co", "TILED=YES", "-co", "COMPRESS=DEFLATE", tiled).CombinedOutput(); err != nil {
		t.Fatalf("gdal_create: %v\n%s", err, out)
	}
	_, err = Import(ctx, st, Request{Path: tiled, Kind: store.KindAge, Units: "Ma", MaxCells: 100_000_000}, nil)
	if f, ok := fault.As(err); !ok || f.Limit == nil || f.Limit.Name != "max_import_cells" || f.Limit.Asked != 16000*16000 || f.Limit.Value != 100_000_000 {
		t.Fatalf("declared cells over MaxCells: %v", err)
	}
	if _, err := OpenReader(ctx, Request{Path: bomb, Kind: store.KindAge, Units: "Ma"}, nil); err == nil {
		t.Error("OpenReader read the 1 GiB-block file")
	}
}
