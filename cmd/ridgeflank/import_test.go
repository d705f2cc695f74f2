package main

import (
	"context"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// writeTestGrid writes a small 1° grid of value f(col, row) as netCDF.
func writeTestGrid(t *testing.T, name, units string, f func(c, r int) float32) string {
	t.Helper()
	g := geo.NewGrid(8, 6, -139.5, -30.5, 1, 1, geo.CellCentre)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			g.Set(c, r, f(c, r))
		}
	}
	p := filepath.Join(t.TempDir(), name)
	if err := gdal.WriteNetCDF(p, g, gdal.Meta{Name: "z", Units: units, Title: "test grid (SYNTHETIC)"}); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestImportIdempotent(t *testing.T) {
	data := t.TempDir()
	file := writeTestGrid(t, "bathy.nc", "m", func(c, r int) float32 { return float32(-4000 - 10*c - r) })
	code, out1, errOut := runCLI(t, nil, "import", "--data", data, "--kind", "elevation", "--name", "test bathymetry", file)
	if code != 0 {
		t.Fatalf("exit %d, stderr %q", code, errOut)
	}
	id := strings.TrimSpace(out1)
	if !strings.HasPrefix(id, store.PrefixGrid) || strings.Contains(id, "\n") {
		t.Fatalf("stdout %q, want one grid id", out1)
	}
	code, out2, errOut := runCLI(t, nil, "import", "--data", data, "--kind", "elevation", "--name", "again", file)
	if code != 0 || strings.TrimSpace(out2) != id || !strings.Contains(errOut, "already stored") {
		t.Fatalf("second import: exit %d, id %q (first %q), stderr %q", code, out2, id, errOut)
	}
	st, err := store.Open(context.Background(), store.Config{DataDir: data, Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	grids, err := st.ListGrids(context.Background(), store.GridFilter{})
	if err != nil {
		t.Fatal(err)
	}
	if len(grids) != 1 || grids[0].Kind != store.KindElevation || grids[0].VerticalSense != store.ElevationPositiveUp || grids[0].Units != "m" {
		t.Fatalf("catalogue %+v", grids)
	}
}

func TestImportConvertsUnitsAndSense(t *testing.T) {
	data := t.TempDir()
	open := func() store.Store {
		st, err := store.Open(context.Background(), store.Config{DataDir: data, Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
		if err != nil {
			t.Fatal(err)
		}
		return st
	}
	t.Run("sediment in km stored in m", func(t *testing.T) {
		file := writeTestGrid(t, "sed.nc", "km", func(c, r int) float32 { return 0.5 })
		code, out, errOut := runCLI(t, nil, "import", "--data", data, "--kind", "sediment_thickness", "--name", "sed", file)
		if code != 0 {
			t.Fatalf("exit %d, stderr %q", code, errOut)
		}
		st := open()
		defer st.Close()
		g, err := st.GetGrid(context.Background(), strings.TrimSpace(out))
		if err != nil {
			t.Fatal(err)
		}
		path, _ := st.Blobs().Path(g.Path)
		grid, _, err := gdal.Read(path)
		if err != nil {
			t.Fatal(err)
		}
		// 0.5 km = 500 m (SI prefix kilo = 10³, BIPM SI Brochure 9th ed., Table 7).
		if g.Units != "m" || grid.Data[0] != 500 {
			t.Fatalf("units %q, value %g; want m and 500", g.Units, grid.Data[0])
		}
	})
	t.Run("depth kind with --vertical elevation", func(t *testing.T) {
		file := writeTestGrid(t, "elev.nc", "m", func(c, r int) float32 { return -3000 })
		code, out, errOut := runCLI(t, nil, "import", "--data", data, "--kind", "depth", "--vertical", "elevation", "--name", "bathy", file)
		if code != 0 {
			t.Fatalf("exit %d, stderr %q", code, errOut)
		}
		st := open()
		defer st.Close()
		g, err := st.GetGrid(context.Background(), strings.TrimSpace(out))
		if err != nil {
			t.Fatal(err)
		}
		if g.Kind != store.KindElevation || g.VerticalSense != store.ElevationPositiveUp {
			t.Fatalf("kind %s, sense %s; want elevation positive up", g.Kind, g.VerticalSense)
		}
	})
}

func TestImportBadInput(t *testing.T) {
	data := t.TempDir()
	negDepth := writeTestGrid(t, "neg.nc", "m", func(c, r int) float32 { return -4000 })
	negAge := writeTestGrid(t, "age.nc", "Ma", func(c, r int) float32 { return float32(c - 3) })
	hours := writeTestGrid(t, "h.nc", "hours", func(c, r int) float32 { return 1 })
	cases := []struct {
		name string
		args []string
	}{
		{"no file", []string{"--kind", "age"}},
		{"missing file", []string{"--kind", "age", filepath.Join(data, "nope.nc")}},
		{"not a raster", []string{"--kind", "age", writeText(t, "x.txt", "hello")}},
		{"no kind", []string{negAge}},
		{"unknown kind", []string{"--kind", "bathymetry", negAge}},
		{"negative depths", []string{"--kind", "depth", negDepth}},
		{"negative ages", []string{"--kind", "age", negAge}},
		{"unconvertible units", []string{"--kind", "age", hours}},
		{"vertical on an age grid", []string{"--kind", "age", "--vertical", "depth", negAge}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			args := append([]string{"import", "--data", data}, tc.args...)
			code, out, errOut := runCLI(t, nil, args...)
			if code != 2 || out != "" || strings.Count(errOut, "\n") != 1 || !strings.HasPrefix(errOut, "ridgeflank import: ") {
				t.Errorf("exit %d, stdout %q, stderr %q; want 2 and one sentence", code, out, errOut)
			}
		})
	}
}

func writeText(t *testing.T, name, text string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}
