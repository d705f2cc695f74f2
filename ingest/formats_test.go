package ingest

import (
	"context"
	"path/filepath"
	"testing"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// The same grid as GeoTIFF and as CF netCDF is the same stored grid, although netCDF gives the
// lattice back from its coordinate variables with rounding errors (0.05° cells: a spacing of
// 0.04999999999999998 read back).
func TestSameGridFromGeoTIFFAndNetCDF(t *testing.T) {
	g := geo.NewGrid(600, 500, -144.975, -10.025, 0.05, 0.05, geo.CellCentre)
	for i := range g.Data {
		g.Data[i] = float32(i%97) + 0.5
	}
	dir := t.TempDir()
	tif, nc := filepath.Join(dir, "a.tif"), filepath.Join(dir, "a.nc")
	if err := gdal.WriteCOG(tif, g, gdal.Meta{Units: "Ma", Title: "one title"}); err != nil {
		t.Fatal(err)
	}
	if err := gdal.WriteNetCDF(nc, g, gdal.Meta{Units: "Ma", Name: "age", Title: "another title"}); err != nil {
		t.Fatal(err)
	}
	st := openStore(t)
	a, err := Import(context.Background(), st, Request{Path: tif, Kind: store.KindAge}, nil)
	if err != nil {
		t.Fatal(err)
	}
	b, err := Import(context.Background(), st, Request{Path: nc, Kind: store.KindAge}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if b.Created || b.Grid.ID != a.Grid.ID {
		t.Fatalf("netCDF import %s (created %v), GeoTIFF import %s: want the same grid", b.Grid.ID, b.Created, a.Grid.ID)
	}
}
