package ingest

import (
	"bytes"
	"context"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"testing"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// streamSource is a 4000×2000 global grid on 0–360° longitudes (0.09° cells) with structure in
// both directions and no-data patches, the values f(col, row); 32 MB as float32, far more
// than the 256 KiB blocks the test allows an import.
func streamSource(reg geo.Registration, f func(c, r int) float32) *geo.Grid {
	const nx, ny = 4000, 2000
	g := &geo.Grid{NX: nx, NY: ny, DX: 0.09, DY: 0.09, Registration: reg, West: 0.045, North: 89.955}
	g.Data = make([]float32, nx*ny)
	for r := 0; r < ny; r++ {
		for c := 0; c < nx; c++ {
			v := f(c, r)
			if (r/50+c/70)%6 == 0 {
				v = float32(math.NaN())
			}
			g.Data[r*nx+c] = v
		}
	}
	return g
}

// TestImportStreamsLargeGrid: a grid many times larger than the import's block bound is
// imported block by block and stored exactly as the in-memory path (gdal.Read, the unit
// conversion, gdal.WriteCOG) stores it: same lattice, same values and no-data cells, same
// content id and the same COG bytes; a re-import finds it. The files are made with GDAL
// (through this project's writers, and with gdal_create).
func TestImportStreamsLargeGrid(t *testing.T) {
	old := blockBytes
	blockBytes = 256 << 10 // 16-row blocks of 4000 columns: 125 blocks
	t.Cleanup(func() { blockBytes = old })

	dir := t.TempDir()
	stageDir := t.TempDir()
	t.Setenv("TMPDIR", stageDir) // staging files go to os.TempDir()
	depthKm := streamSource(geo.CellCentre, func(c, r int) float32 {
		return float32(4.5 + 1.5*math.Sin(float64(c)/211)*math.Cos(float64(r)/157) + 0.001*float64(c%17))
	})
	tifKm := filepath.Join(dir, "depth-km.tif")
	nodata := -99999.0
	if err := gdal.WriteCOG(tifKm, depthKm, gdal.Meta{Units: "km", NoData: &nodata}); err != nil {
		t.Fatal(err)
	}
	sediment := streamSource(geo.Node, func(c, r int) float32 { return float32((c*7+r*13)%5000) + 0.5 })
	nc := filepath.Join(dir, "sediment.nc") // netCDF stores rows bottom-up; nodes; _FillValue
	if err := gdal.WriteNetCDF(nc, sediment, gdal.Meta{Units: "m", Name: "thickness"}); err != nil {
		t.Fatal(err)
	}

	cases := []struct {
		name, path string
		kind       store.GridKind
		units      string
		factor     float64 // to the stored unit
		wantKind   store.GridKind
		wantSense  geo.VerticalSense
	}{
		{"GeoTIFF depth in km, no-data value, 0-360", tifKm, store.KindDepth, "", 1000, store.KindDepth, geo.DepthPositiveDown},
		{"netCDF sediment, node-registered, bottom-up rows", nc, store.KindSedimentThickness, "", 1, store.KindSedimentThickness, geo.SenseUnknown},
	}
	if _, err := exec.LookPath("gdal_create"); err == nil {
		// GDAL's own tool: a constant elevation grid over 0..360° with a no-data value.
		p := filepath.Join(dir, "made-by-gdal-create.tif")
		out, err := exec.Command("gdal_create", "-outsize", "4000", "2000", "-ot", "Float32", "-burn", "-4000",
			"-a_srs", "EPSG:4326", "-a_ullr", "0", "90", "360", "-90", "-a_nodata", "-32768",
			"-co", "COMPRESS=DEFLATE", "-co", "TILED=YES", p).CombinedOutput()
		if err != nil {
			t.Fatalf("gdal_create: %v\n%s", err, out)
		}
		cases = append(cases, struct {
			name, path string
			kind       store.GridKind
			units      string
			factor     float64
			wantKind   store.GridKind
			wantSense  geo.VerticalSense
		}{"gdal_create elevation", p, store.KindElevation, "m", 1, store.KindElevation, geo.ElevationPositiveUp})
	} else {
		t.Log("gdal_create not installed (Debian package gdal-bin): its case is skipped")
	}

	st := openStore(t)
	ctx := context.Background()
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			// The in-memory reading.
			want, _, err := gdal.Read(tc.path)
			if err != nil {
				t.Fatal(err)
			}
			want.West, want.North, want.DX, want.DY = snap(want.West), snap(want.North), snap(want.DX), snap(want.DY)
			prepare(want.Data, tc.factor)
			gridBytes := uint64(4 * len(want.Data))

			var reads int
			last := -1.0
			progress := func(f float64, msg string) {
				if f < last {
					t.Errorf("progress went back from %g to %g (%s)", last, f, msg)
				}
				last = f
				if msg == "reading and checking values" {
					reads++
				}
			}
			var before, after runtime.MemStats
			runtime.GC()
			runtime.ReadMemStats(&before)
			res, err := Import(ctx, st, Request{Path: tc.path, Kind: tc.kind, Units: tc.units}, progress)
			runtime.ReadMemStats(&after)
			if err != nil {
				t.Fatal(err)
			}
			if want := (want.NY + 15) / 16; reads != want {
				t.Errorf("%d blocks reported, want %d of 16 rows", reads, want)
			}
			if last != 1 {
				t.Errorf("progress ended at %g, want 1", last)
			}
			// Go allocations stay far below the grid (common practice, no source: a quarter).
			if alloc := after.TotalAlloc - before.TotalAlloc; alloc > gridBytes/4 {
				t.Errorf("import allocated %d bytes for a %d-byte grid", alloc, gridBytes)
			}
			if !res.Created || res.Grid.Kind != tc.wantKind || res.NX != want.NX || res.NY != want.NY {
				t.Fatalf("import: %+v", res)
			}
			storeSense := map[geo.VerticalSense]store.VerticalSense{geo.SenseUnknown: store.VerticalNone,
				geo.DepthPositiveDown: store.DepthPositiveDown, geo.ElevationPositiveUp: store.ElevationPositiveUp}[tc.wantSense]
			if id := ContentID(want, tc.wantKind, StoredUnit(tc.wantKind), storeSense); res.Grid.ID != id {
				t.Errorf("streamed content id %s, in-memory %s", res.Grid.ID, id)
			}

			path, err := st.Blobs().Path(res.Grid.Path)
			if err != nil {
				t.Fatal(err)
			}
			got, _, err := gdal.Read(path)
			if err != nil {
				t.Fatal(err)
			}
			if got.NX != want.NX || got.NY != want.NY || got.Registration != want.Registration ||
				snap(got.West) != want.West || snap(got.North) != want.North || snap(got.DX) != want.DX || snap(got.DY) != want.DY {
				t.Fatalf("stored lattice %d×%d %v west %g north %g, want %d×%d %v west %g north %g",
					got.NX, got.NY, got.Registration, got.West, got.North, want.NX, want.NY, want.Registration, want.West, want.North)
			}
			nan := 0
			for i, w := range want.Data {
				g := got.Data[i]
				if w != w {
					nan++
				}
				if (g != g) != (w != w) || (w == w && g != w) {
					t.Fatalf("cell col %d row %d: stored %g, in-memory %g", i%want.NX, i/want.NX, g, w)
				}
			}
			if tc.kind != store.KindElevation && nan == 0 {
				t.Error("the source has no no-data cells to check")
			}

			// The same bytes as the in-memory writer gives: grids stored before streaming
			// deduplicate with grids stored now.
			mem, err := gdal.EncodeCOG(want, gdal.Meta{Name: string(tc.wantKind), Units: StoredUnit(tc.wantKind), Sense: tc.wantSense,
				Metadata: map[string]string{"kind": string(tc.wantKind)}})
			if err != nil {
				t.Fatal(err)
			}
			stored, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(mem, stored) {
				t.Errorf("stored COG (%d bytes) differs from the in-memory COG (%d bytes)", len(stored), len(mem))
			}

			again, err := Import(ctx, st, Request{Path: tc.path, Kind: tc.kind, Units: tc.units}, nil)
			if err != nil || again.Created || again.Grid.ID != res.Grid.ID {
				t.Fatalf("re-import: %+v, %v", again, err)
			}
		})
	}
	// No staging file is left behind.
	if left, _ := filepath.Glob(filepath.Join(stageDir, "*")); len(left) > 0 {
		t.Errorf("staging files left: %v", left)
	}
}
