package evaluate

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sync"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/geo"
	"ridgeflank/ingest"
	"ridgeflank/store"
	"ridgeflank/store/storetest"
)

// benchGlobe is a SYNTHETIC global dataset at 3 arc-minutes (7200 × 3600 = 26 M cells per grid;
// age, depth on the same lattice, sediment on a coarser one) made with GDAL's tools and kept in
// the system's temporary directory between runs (regenerate by deleting it).
type benchGlobe struct {
	once sync.Once
	dir  string
	ids  []string
	err  error
}

var globe3m benchGlobe

func (g *benchGlobe) open(b *testing.B, budget int64) *Service {
	b.Helper()
	g.once.Do(func() {
		g.dir = filepath.Join(os.TempDir(), "ridgeflank-bench-globe-3m")
		if err := os.MkdirAll(g.dir, 0o755); err != nil {
			g.err = err
			return
		}
		st := storetest.OpenStore(b, store.BackendSQLite, filepath.Join(g.dir, "store"))
		if ds, err := st.GetDataset(context.Background(), "globe3m"); err == nil {
			g.ids = []string{ds.AgeGridID}
			return
		}
		age := func(lon, lat float64) float64 {
			if lat > 80 || (lon > 10 && lon < 40 && lat > -30 && lat < 30) { // a SYNTHETIC continent
				return -9999
			}
			return math.Min(180, 1.1*math.Abs(lon-20*math.Sin(lat*math.Pi/60)))
		}
		depth := func(lon, lat float64) float64 {
			a := age(lon, lat)
			if a < 0 {
				return -9999
			}
			return 2600 + 330*math.Sqrt(a)
		}
		sed := func(lon, lat float64) float64 { return 100 + 4*math.Abs(lat) + 2*math.Abs(lon) }
		files := []string{
			gdalGrid(b, g.dir, "age", 180, 90, 7200, 3600, age),
			gdalGrid(b, g.dir, "depth", 180, 90, 7200, 3600, depth),
			gdalGrid(b, g.dir, "sediment", 90, 45, 1440, 720, sed),
		}
		var ids []string
		for i, k := range []store.GridKind{store.KindAge, store.KindDepth, store.KindSedimentThickness} {
			res, err := ingest.Import(context.Background(), st, ingest.Request{Path: files[i], Kind: k}, nil)
			if err != nil {
				g.err = err
				return
			}
			ids = append(ids, res.Grid.ID)
		}
		_, g.err = st.CreateDataset(context.Background(), store.Dataset{ID: "globe3m", Name: "benchmark globe (SYNTHETIC)",
			AgeGridID: ids[0], DepthGridID: ids[1], SedimentGridID: ids[2]})
		g.ids = ids
	})
	if g.err != nil {
		b.Fatal(g.err)
	}
	st := storetest.OpenStore(b, store.BackendSQLite, filepath.Join(g.dir, "store"))
	return New(Config{Store: st, MemoryBudget: budget})
}

func boxRegion(b testing.TB, s *Service, w, south, e, north float64) geo.PreparedRegion {
	ring := orb.Ring{{w, south}, {e, south}, {e, north}, {w, north}, {w, south}}
	r, err := s.PrepareRegion(orb.MultiPolygon{{ring}}, "coords")
	if err != nil {
		b.Fatal(err)
	}
	return r
}

// tileAddrs are tiles at zoom 0 to 10 over ocean of the benchmark globe.
func tileAddrs() [][3]int {
	var out [][3]int
	for z := 0; z <= 10; z++ {
		n := 1 << z
		// the tile holding (-120°, -10°)
		x := int(float64(n) * (-120.0 + 180) / 360)
		latR := -10 * math.Pi / 180
		y := int(float64(n) * (1 - math.Log(math.Tan(latR)+1/math.Cos(latR))/math.Pi) / 2)
		out = append(out, [3]int{z, x, y})
	}
	return out
}

// BenchmarkTileResidual renders residual-depth tiles at zoom 0–10 on the 3′ globe: warm (the
// blocks cached; all zooms in turn, then zoom 0, 3, 6, 8 and 10 one at a time) and cold (a new
// service, so an empty cache, for every tile). Peer in the same
// run: the same tiles' age windows read cold without any computation (raster.File.Scan).
func BenchmarkTileResidual(b *testing.B) {
	ctx := context.Background()
	warm := globe3m.open(b, DefaultMemoryBudget)
	b.Run("warm", func(b *testing.B) {
		b.ReportAllocs()
		addrs := tileAddrs()
		for _, a := range addrs { // fill the cache
			tp, err := warm.Tile(ctx, "globe3m", PResidualDepth, a[0], a[1], a[2], Options{})
			if err != nil {
				b.Fatal(err)
			}
			if _, _, err := tp.Render(ctx); err != nil {
				b.Fatal(err)
			}
		}
		b.ResetTimer()
		for i := 0; i < b.N; i++ {
			a := addrs[i%len(addrs)]
			tp, _ := warm.Tile(ctx, "globe3m", PResidualDepth, a[0], a[1], a[2], Options{})
			if _, _, err := tp.Render(ctx); err != nil {
				b.Fatal(err)
			}
		}
	})
	// One zoom at a time, warm: the same tile again (its blocks cached by the loop above).
	for _, z := range []int{0, 3, 6, 8, 10} {
		a := tileAddrs()[z]
		b.Run(fmt.Sprintf("warm-z%d", z), func(b *testing.B) {
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				tp, err := warm.Tile(ctx, "globe3m", PResidualDepth, a[0], a[1], a[2], Options{})
				if err != nil {
					b.Fatal(err)
				}
				if _, _, err := tp.Render(ctx); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
	b.Run("cold", func(b *testing.B) {
		b.ReportAllocs()
		addrs := tileAddrs()
		for i := 0; i < b.N; i++ {
			b.StopTimer()
			s := globe3m.open(b, DefaultMemoryBudget)
			if _, err := s.Dataset(ctx, "globe3m"); err != nil { // open the files (not part of a tile)
				b.Fatal(err)
			}
			b.StartTimer()
			a := addrs[i%len(addrs)]
			tp, _ := s.Tile(ctx, "globe3m", PResidualDepth, a[0], a[1], a[2], Options{})
			if _, _, err := tp.Render(ctx); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkAreaMillionCells answers an area query of about 0.7 M output cells (0.15° over a
// 150° × 100° box of the 3′ globe: three cells by three per answer cell), residual depth with
// the sediment correction, warm cache.
// Peer in the same run: reading the same age cells at the same level without computing.
func BenchmarkAreaMillionCells(b *testing.B) {
	ctx := context.Background()
	s := globe3m.open(b, DefaultMemoryBudget)
	r := boxRegion(b, s, -180, -50, -30, 50) // 150° × 100°: at 0.15°, 1000 × 667 = 0.67 M cells
	o := Options{Parameters: []string{PResidualDepth}}
	res, err := s.Area(ctx, "globe3m", o, r, 0.15, 0.15)
	if err != nil {
		b.Fatal(err)
	}
	b.Logf("answer %d × %d = %d cells", res.Lattice.NX, res.Lattice.NY, res.Lattice.NX*res.Lattice.NY)
	b.Run("area", func(b *testing.B) {
		b.ReportAllocs()
		for i := 0; i < b.N; i++ {
			if _, err := s.Area(ctx, "globe3m", o, r, 0.15, 0.15); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("peer-read-only", func(b *testing.B) {
		b.ReportAllocs()
		d, _ := s.Dataset(ctx, "globe3m")
		for i := 0; i < b.N; i++ {
			if _, err := d.Files.Age.Window(ctx, r.Bound, 0); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkStatistics10M computes residual-depth statistics over about 9 M cells at full
// resolution (streamed in bands, two passes). Peer in the same run: one plain streaming pass
// over the same age cells (raster.File.Rows) with no computation.
func BenchmarkStatistics10M(b *testing.B) {
	ctx := context.Background()
	s := globe3m.open(b, DefaultMemoryBudget)
	r := boxRegion(b, s, -178, -65, -8, 65) // 170° × 130° at 0.05° = 3400 × 2600 = 8.8 M cells
	o := Options{Parameters: []string{PResidualDepth}}
	b.Run("statistics", func(b *testing.B) {
		b.ReportAllocs()
		for i := 0; i < b.N; i++ {
			res, err := s.Statistics(ctx, "globe3m", o, r, 0, 0, nil)
			if err != nil {
				b.Fatal(err)
			}
			if i == 0 {
				b.ReportMetric(float64(res.Cells), "cells")
			}
		}
	})
	b.Run("peer-one-read-pass", func(b *testing.B) {
		b.ReportAllocs()
		d, _ := s.Dataset(ctx, "globe3m")
		for i := 0; i < b.N; i++ {
			n := 0
			if err := d.Files.Age.Rows(ctx, r.Bound, 0, 512, func(g *geo.Grid) error { n += len(g.Data); return nil }); err != nil {
				b.Fatal(err)
			}
		}
	})
}
