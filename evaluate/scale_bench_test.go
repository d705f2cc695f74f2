package evaluate

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ridgeflank/store"
	"ridgeflank/store/storetest"
)

// scaleService opens the store `make bench-scale` imported the SYNTHETIC 1′ global grids into
// (21600 × 10800 cells each: age, depth positive down, sediment), found through
// RIDGEFLANK_SCALE_DIR (the bench-scale SCALE_DIR, holding store/ and 1m/import-*.id), and
// makes a dataset of its three grids there when it has none. The benchmark is skipped when the
// variable is not set or the grids are not imported. The store must not be served meanwhile.
func scaleService(b *testing.B) (*Service, string) {
	b.Helper()
	dir := os.Getenv("RIDGEFLANK_SCALE_DIR")
	if dir == "" {
		b.Skip("RIDGEFLANK_SCALE_DIR is not set (the SCALE_DIR of make bench-scale SCALE_SIZES=1m)")
	}
	var ids []string
	for _, g := range []string{"age", "depth", "sediment"} {
		raw, err := os.ReadFile(filepath.Join(dir, "1m", "import-"+g+".id"))
		if err != nil {
			b.Skipf("the 1′ %s grid is not imported: %v", g, err)
		}
		ids = append(ids, strings.TrimSpace(string(raw)))
	}
	st := storetest.OpenStore(b, store.BackendSQLite, filepath.Join(dir, "store"))
	const id = "bench-global-1m"
	ctx := context.Background()
	if ds, err := st.GetDataset(ctx, id); err != nil || ds.AgeGridID != ids[0] || ds.DepthGridID != ids[1] || ds.SedimentGridID != ids[2] {
		if err == nil {
			if err := st.DeleteDataset(ctx, id, ds.Version); err != nil {
				b.Fatal(err)
			}
		}
		if _, err := st.CreateDataset(ctx, store.Dataset{ID: id, Name: "SYNTHETIC global 1′ (Go benchmarks)",
			AgeGridID: ids[0], DepthGridID: ids[1], SedimentGridID: ids[2]}); err != nil {
			b.Fatal(err)
		}
	}
	return New(Config{Store: st, MemoryBudget: DefaultMemoryBudget}), id
}

// BenchmarkScale1m asks, over the SYNTHETIC 1′ global grids of make bench-scale, the two
// questions of the scale report with goals: an area of 1000 × 1000 = 1 M output cells at the
// grid's own spacing (warm: its blocks cached by an earlier answer; cold: a new service, so the
// files opened and every block read and decoded) and residual-depth statistics over 3163 × 3163
// = 10 M cells at full resolution, the same places scripts/scalebench asks for. Besides ns/op
// (wall time, which other work on a shared machine inflates) the warm ones report cpu-ns/op,
// the process's CPU time per question (on two cores it may exceed the wall time). The HTTP
// encoding of the area answer is measured by server's BenchmarkAreaCoverageJSON.
func BenchmarkScale1m(b *testing.B) {
	ctx := context.Background()
	s, id := scaleService(b)
	const deg = 1.0 / 60
	area := boxRegion(b, s, -45, -20, -45+1000*deg, -20+1000*deg)
	stats := boxRegion(b, s, -45, -25, -45+3163*deg, -25+3163*deg)
	o := Options{Parameters: []string{PResidualDepth}}
	res, err := s.Area(ctx, id, o, area, 0, 0)
	if err != nil {
		b.Fatal(err)
	}
	b.Logf("area answer %d × %d = %d cells", res.Lattice.NX, res.Lattice.NY, res.Lattice.NX*res.Lattice.NY)
	b.Run("area-1M/warm", func(b *testing.B) {
		b.ReportAllocs()
		c0 := cpuTime(b)
		for b.Loop() {
			if _, err := s.Area(ctx, id, o, area, 0, 0); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64(cpuTime(b)-c0)/float64(b.N), "cpu-ns/op")
	})
	b.Run("area-1M/cold", func(b *testing.B) {
		b.ReportAllocs()
		for i := 0; i < b.N; i++ {
			b.StopTimer()
			cs := New(Config{Store: s.st, MemoryBudget: DefaultMemoryBudget})
			b.StartTimer()
			if _, err := cs.Area(ctx, id, o, area, 0, 0); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("statistics-10M", func(b *testing.B) {
		b.ReportAllocs()
		c0 := cpuTime(b)
		defer func() { b.ReportMetric(float64(cpuTime(b)-c0)/float64(b.N), "cpu-ns/op") }()
		for i := 0; i < b.N; i++ {
			res, err := s.Statistics(ctx, id, o, stats, 0, 0, nil)
			if err != nil {
				b.Fatal(err)
			}
			if i == 0 {
				b.ReportMetric(float64(res.Cells), "cells")
			}
		}
	})
}
