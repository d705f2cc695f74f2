package postgis_test

import (
	"context"
	"fmt"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/store"
	"ridgeflank/store/pgtest"
	"ridgeflank/store/postgis"
)

func BenchmarkListRegionsBBox(b *testing.B) {
	ctx := context.Background()
	s, err := postgis.Open(ctx, store.Config{DatabaseURL: pgtest.NewDB(b), DataDir: b.TempDir(), Logger: quiet})
	if err != nil {
		b.Fatal(err)
	}
	defer s.Close()
	for i := range 3000 {
		w, south := float64(i%300)-150, float64(i/300)*2-10
		g := orb.MultiPolygon{{{{w, south}, {w + 1, south}, {w + 1, south + 1}, {w, south + 1}, {w, south}}}}
		if _, err := s.CreateRegion(ctx, store.Region{Name: fmt.Sprint(i), Geometry: g}); err != nil {
			b.Fatal(err)
		}
	}
	if _, err := s.Pool().Exec(ctx, "ANALYZE regions"); err != nil {
		b.Fatal(err)
	}
	f := store.RegionFilter{BBox: &orb.Bound{Min: orb.Point{-10, -10}, Max: orb.Point{10, 10}}}
	b.ReportAllocs()
	for b.Loop() {
		if r, err := s.ListRegions(ctx, f); err != nil || len(r) == 0 {
			b.Fatal(len(r), err)
		}
	}
}
