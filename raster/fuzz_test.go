package raster

import (
	"bytes"
	"context"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/geo/gdal"
)

// FuzzOpen feeds corrupt GeoTIFF (COG) files to the windowed reader the evaluate service
// serves grids from: a tiny valid COG written here with GDAL is the seed and the fuzzer mutates
// its bytes. Every file must be refused with an error or give levels with a sane lattice (the
// overviews no finer than the full grid) and a window read whose size matches its lattice; GDAL
// errors go to geo/gdal's error handler, never to a crash.
//
//	go test ./raster -run '^$' -fuzz '^FuzzOpen$' -fuzztime 60s
func FuzzOpen(f *testing.F) {
	g := field(16, 8, -179.5, 60, 0.5, 0.5, true) // crosses nothing; 8 × 4 degrees
	seed, err := gdal.EncodeCOG(g, gdal.Meta{Units: "m"})
	if err != nil {
		f.Fatal(err)
	}
	f.Add(seed)
	f.Add(seed[:len(seed)/3])
	f.Add([]byte{})
	f.Add([]byte("MM\x00*\x00\x00\x00\x08"))
	cache := NewCache(1 << 20)
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) > 64<<10 {
			return
		}
		p := filepath.Join(t.TempDir(), "g.tif")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		isSeed := bytes.Equal(data, seed)
		rf, err := Open(p, "fuzz-"+p, gdal.ReadOptions{}, cache)
		if err != nil {
			if isSeed {
				t.Fatalf("the unchanged seed is refused: %v", err)
			}
			if err.Error() == "" {
				t.Fatal("empty error message")
			}
			return
		}
		defer rf.Close(true)
		lv := rf.Levels()
		h := lv[0].Grid
		for i, l := range lv {
			lg := l.Grid
			if lg.NX <= 0 || lg.NY <= 0 || !(lg.DX > 0) || !(lg.DY > 0) || math.IsInf(lg.DX, 0) || math.IsInf(lg.DY, 0) ||
				math.IsNaN(lg.West) || math.IsNaN(lg.North) || math.IsInf(lg.West, 0) || math.IsInf(lg.North, 0) {
				t.Fatalf("level %d has an unusable lattice: %d × %d, west %v north %v, spacing %v × %v", i, lg.NX, lg.NY, lg.West, lg.North, lg.DX, lg.DY)
			}
			if i > 0 && (lg.NX > h.NX || lg.NY > h.NY) {
				t.Fatalf("overview %d (%d × %d) is larger than the grid (%d × %d)", i, lg.NX, lg.NY, h.NX, h.NY)
			}
		}
		if h.NX > 1<<12 || h.NY > 1<<12 {
			return // a corrupt header may claim a huge grid: read only small ones
		}
		// A window of a few cells at the grid's north-west corner.
		w, n := h.West, h.North
		b := orb.Bound{Min: orb.Point{w, n - 3*h.DY}, Max: orb.Point{w + 3*h.DX, n}}
		out, err := rf.Window(context.Background(), b, 0)
		if err != nil {
			if isSeed {
				t.Fatalf("the seed's window %v: %v", b, err)
			}
			return
		}
		if len(out.Data) != out.NX*out.NY || out.NX > h.NX || out.NY > h.NY {
			t.Fatalf("window of %d × %d cells has %d values (grid %d × %d)", out.NX, out.NY, len(out.Data), h.NX, h.NY)
		}
		if isSeed { // round trip: the cells read are the cells written
			for r := range out.NY {
				for c := range out.NX {
					col := int(math.Round((out.Lon(c) - g.West) / g.DX))
					row := int(math.Round((g.North - out.Lat(r)) / g.DY))
					got, want := out.Data[r*out.NX+c], g.At(col, row)
					if got != want && !(math.IsNaN(float64(got)) && math.IsNaN(float64(want))) {
						t.Fatalf("seed cell (%d, %d) reads %v, written %v", col, row, got, want)
					}
				}
			}
		}
	})
}
