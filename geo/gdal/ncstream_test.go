package gdal

import (
	"math"
	"path/filepath"
	"testing"

	"ridgeflank/geo"
)

// TestNetCDFStreamMatchesWriteNetCDF: a grid written block by block reads back (through Read,
// which goes through GDAL's netCDF driver) with the same lattice, values, no-data cells, units
// and variable name as the whole-grid writer WriteNetCDF gives.
func TestNetCDFStreamMatchesWriteNetCDF(t *testing.T) {
	for _, reg := range []geo.Registration{geo.CellCentre, geo.Node} {
		t.Run(reg.String(), func(t *testing.T) {
			g := geo.NewGrid(37, 23, -20.25, 10.5, 0.5, 0.25, reg)
			for i := range g.Data {
				g.Data[i] = float32(i)*0.5 - 100
				if i%11 == 0 {
					g.Data[i] = float32(math.NaN())
				}
			}
			dir := t.TempDir()
			m := Meta{Name: "residual_depth", Units: "m", LongName: "Residual depth", Metadata: map[string]string{"ridgeflank_model": "gdh1"}}
			whole := filepath.Join(dir, "whole.nc")
			if err := WriteNetCDF(whole, g, m); err != nil {
				t.Fatal(err)
			}
			path := filepath.Join(dir, "stream.nc")
			s, err := NewNetCDFStream(path, *g, m)
			if err != nil {
				t.Fatal(err)
			}
			defer s.Close()
			for r0 := 0; r0 < g.NY; r0 += 5 {
				r1 := min(r0+5, g.NY)
				if err := s.WriteRows(r0, g.Data[r0*g.NX:r1*g.NX]); err != nil {
					t.Fatal(err)
				}
			}
			if err := s.Finish(map[string]string{"ridgeflank_refused": "none"}); err != nil {
				t.Fatal(err)
			}
			a, ma := mustRead(t, whole)
			b, mb := mustRead(t, path)
			if a.NX != b.NX || a.NY != b.NY || a.West != b.West || a.North != b.North || a.DX != b.DX || a.DY != b.DY || a.Registration != b.Registration {
				t.Fatalf("lattice %+v, want %+v", b, a)
			}
			for i := range a.Data {
				x, y := a.Data[i], b.Data[i]
				if !(x == y || x != x && y != y) || x != g.Data[i] && g.Data[i] == g.Data[i] {
					t.Fatalf("cell %d: stream %g, whole %g, source %g", i, y, x, g.Data[i])
				}
			}
			if mb.Name != ma.Name || mb.Units != ma.Units || mb.Metadata["NC_GLOBAL#ridgeflank_model"] != "gdh1" || mb.Metadata["NC_GLOBAL#Conventions"] != "CF-1.8" ||
				mb.Metadata["NC_GLOBAL#ridgeflank_refused"] != "none" {
				t.Fatalf("meta %q %q %v, want %q %q", mb.Name, mb.Units, mb.Metadata, ma.Name, ma.Units)
			}
		})
	}
}
