package ingest

import (
	"context"
	"io"
	"log/slog"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// benchBlock is a 2160-column row block of 256 rows (a 10-arc-minute global grid's width) of
// values from −2500 to 2499, a tenth of them no-data (NaN).
func benchBlock() []float32 {
	blk := make([]float32, 2160*256)
	for i := range blk {
		blk[i] = float32(i%5000) - 2500
		if i%10 == 0 {
			blk[i] = float32(math.NaN())
		}
	}
	return blk
}

// BenchmarkStatsAdd measures the one-pass statistics over a 2160-column row block of 256 rows
// (a 10-arc-minute global grid's width), with a tenth of the cells no-data.
func BenchmarkStatsAdd(b *testing.B) {
	blk := benchBlock()
	b.SetBytes(int64(4 * len(blk)))
	for b.Loop() {
		var s Stats
		s.Add(blk)
	}
}

// BenchmarkReadRowsCheck compares ReadRows's value check of one block (the same block as
// BenchmarkStatsAdd): prepare then Stats.Add (the two passes it made before) against
// prepareRange (one pass, the extremes only). Compare ns/op of the two in one run.
func BenchmarkReadRowsCheck(b *testing.B) {
	src := benchBlock()
	blk := make([]float32, len(src))
	b.Run("prepare+Stats.Add", func(b *testing.B) {
		b.ReportAllocs()
		b.SetBytes(int64(4 * len(blk)))
		for b.Loop() {
			copy(blk, src)
			prepare(blk, 1)
			var s Stats
			s.Add(blk)
		}
	})
	b.Run("prepareRange", func(b *testing.B) {
		b.ReportAllocs()
		b.SetBytes(int64(4 * len(blk)))
		for b.Loop() {
			copy(blk, src)
			prepareRange(blk, 1)
		}
	})
}

// BenchmarkImportStreaming imports a 4-arc-minute global depth grid (5400×2700 float32, a
// tiled DEFLATE GeoTIFF without overviews, of smooth relief with hash noise and ~15% no-data)
// into a fresh store, and
// in the same run converts the same file with GDAL's own translate to a COG with the same
// creation options (gdal.TranslateCOG, the library form of `gdal_translate -of COG`). It
// reports both times per operation and their ratio (import/translate); the import also reads,
// converts, checks and hashes every value and stages the grid, which translate does not.
func BenchmarkImportStreaming(b *testing.B) {
	const nx, ny = 5400, 2700
	dir := b.TempDir()
	g := geo.NewGrid(nx, ny, -180+1.0/30, 90-1.0/30, 1.0/15, 1.0/15, geo.CellCentre)
	for r := 0; r < ny; r++ {
		for c := 0; c < nx; c++ {
			h := uint32(c*73856093) ^ uint32(r*19349663)
			v := 4000 + 1500*math.Sin(float64(c)/300)*math.Cos(float64(r)/200) + float64(h%1000)/100
			if (r/90+c/120)%7 == 0 {
				v = math.NaN()
			}
			g.Data[r*nx+c] = float32(v)
		}
	}
	cog := filepath.Join(dir, "depth-cog.tif")
	if err := gdal.WriteCOG(cog, g, gdal.Meta{Units: "m"}); err != nil {
		b.Fatal(err)
	}
	g = nil
	// The input has no overviews (a COG's would let the translate skip building them).
	if _, err := exec.LookPath("gdal_translate"); err != nil {
		b.Skip("gdal_translate not installed (Debian package gdal-bin)")
	}
	src := filepath.Join(dir, "depth.tif")
	if out, err := exec.Command("gdal_translate", "-q", "-of", "GTiff", "-co", "TILED=YES", "-co", "COMPRESS=DEFLATE",
		"-co", "PREDICTOR=3", cog, src).CombinedOutput(); err != nil {
		b.Fatalf("gdal_translate: %v\n%s", err, out)
	}
	ctx := context.Background()
	var importDur, translateDur time.Duration
	i := 0
	b.ReportAllocs()
	for b.Loop() {
		b.StopTimer()
		st, err := store.Open(ctx, store.Config{DataDir: filepath.Join(dir, "store", string(rune('a'+i%26))), Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
		if err != nil {
			b.Fatal(err)
		}
		b.StartTimer()
		t0 := time.Now()
		res, err := Import(ctx, st, Request{Path: src, Kind: store.KindDepth}, nil)
		importDur += time.Since(t0)
		if err != nil || !res.Created {
			b.Fatalf("import: %+v, %v", res, err)
		}
		b.StopTimer()
		st.Close()
		os.RemoveAll(filepath.Join(dir, "store"))
		dst := filepath.Join(dir, "translated.tif")
		t0 = time.Now()
		if err := gdal.TranslateCOG(ctx, src, dst); err != nil {
			b.Fatal(err)
		}
		translateDur += time.Since(t0)
		os.Remove(dst)
		b.StartTimer()
		i++
	}
	b.ReportMetric(float64(translateDur.Nanoseconds())/float64(i), "translate-ns/op")
	b.ReportMetric(float64(importDur)/float64(translateDur), "import/translate")
}
