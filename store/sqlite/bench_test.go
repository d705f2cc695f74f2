package sqlite_test

import (
	"context"
	"fmt"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/store"
	"ridgeflank/store/sqlite"
)

// benchStore fills a store with n 1°×1° regions on a lon/lat lattice.
func benchStore(b *testing.B, n int) *sqlite.Store {
	b.Helper()
	s, err := sqlite.Open(context.Background(), store.Config{DataDir: b.TempDir(), Logger: quiet})
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { s.Close() })
	for i := range n {
		w, south := float64(i%300)-150, float64(i/300)*2-10
		g := orb.MultiPolygon{{{{w, south}, {w + 1, south}, {w + 1, south + 1}, {w, south + 1}, {w, south}}}}
		if _, err := s.CreateRegion(context.Background(), store.Region{Name: fmt.Sprint(i), Geometry: g}); err != nil {
			b.Fatal(err)
		}
	}
	return s
}

func BenchmarkListRegionsBBox(b *testing.B) {
	s := benchStore(b, 3000)
	ctx := context.Background()
	f := store.RegionFilter{BBox: &orb.Bound{Min: orb.Point{-10, -10}, Max: orb.Point{10, 10}}}
	b.ReportAllocs()
	for b.Loop() {
		if r, err := s.ListRegions(ctx, f); err != nil || len(r) == 0 {
			b.Fatal(len(r), err)
		}
	}
}

func BenchmarkCreateRegion(b *testing.B) {
	s := benchStore(b, 0)
	ctx := context.Background()
	g := orb.MultiPolygon{{{{0, 0}, {1, 0}, {1, 1}, {0, 1}, {0, 0}}}}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := s.CreateRegion(ctx, store.Region{Name: "bench", Geometry: g}); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkAuthenticate(b *testing.B) {
	s := benchStore(b, 0)
	ctx := context.Background()
	_, plain, err := s.CreateToken(ctx, "bench", store.RoleReader)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := s.Authenticate(ctx, plain); err != nil {
			b.Fatal(err)
		}
	}
}
