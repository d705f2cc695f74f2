package main

import (
	"context"
	"fmt"
	"log/slog"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/demobasin"
	"ridgeflank/evaluate"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/ingest"
	"ridgeflank/store"
)

// gridFixture is the demo basin (SYNTHETIC) as files and as an installed store, plus a second
// stored dataset whose sediment grid lies on a coarser lattice (made with GDAL's own gdalwarp)
// than the age grid, so that the command's bilinear sampling of companions across row blocks
// is compared too.
type gridFixture struct {
	dataDir                  string
	age, elevation, sediment string // demo files
	ageUnc                   string // the demo age-uncertainty file
	coarseSediment           string // gdalwarp -tr 0.35 of the sediment file
	coarseDataset            string
}

func newGridFixture(t *testing.T) gridFixture {
	t.Helper()
	b := smallBasin(t)
	dir := t.TempDir()
	files, err := demobasin.WriteFiles(dir, b)
	if err != nil {
		t.Fatal(err)
	}
	f := gridFixture{dataDir: filepath.Join(t.TempDir(), "data"), coarseDataset: "coarse-sediment"}
	for _, p := range files {
		switch filepath.Base(p) {
		case demobasin.FilePrefix + "-age.tif":
			f.age = p
		case demobasin.FilePrefix + "-elevation.tif":
			f.elevation = p
		case demobasin.FilePrefix + "-sediment-thickness.tif":
			f.sediment = p
		case demobasin.FilePrefix + "-age-uncertainty.tif":
			f.ageUnc = p
		}
	}
	if f.age == "" || f.elevation == "" || f.sediment == "" || f.ageUnc == "" {
		t.Fatalf("demo files missing: %v", files)
	}
	f.coarseSediment = filepath.Join(dir, "sediment-coarse.tif")
	if out, err := exec.Command("gdalwarp", "-q", "-tr", "0.35", "0.35", "-r", "average", f.sediment, f.coarseSediment).CombinedOutput(); err != nil {
		t.Fatalf("gdalwarp: %v\n%s", err, out)
	}
	ctx := context.Background()
	st, err := store.Open(ctx, store.Config{DataDir: f.dataDir, Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	if _, err := demobasin.Install(ctx, st, b); err != nil {
		t.Fatal(err)
	}
	demo, err := st.GetDataset(ctx, demobasin.DatasetID)
	if err != nil {
		t.Fatal(err)
	}
	res, err := ingest.Import(ctx, st, ingest.Request{Path: f.coarseSediment, Kind: store.KindSedimentThickness}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := st.CreateDataset(ctx, store.Dataset{ID: f.coarseDataset, Name: "coarse sediment (SYNTHETIC)",
		AgeGridID: demo.AgeGridID, DepthGridID: demo.DepthGridID, SedimentGridID: res.Grid.ID}); err != nil {
		t.Fatal(err)
	}
	return f
}

// areaAnswer is the API's answer (evaluate.Service.Area) for one parameter of a stored dataset
// at the age grid's own spacing over a region covering the whole grid.
func areaAnswer(t *testing.T, dataDir, datasetID, param string) *geo.Grid {
	t.Helper()
	ctx := context.Background()
	st, err := store.Open(ctx, store.Config{DataDir: dataDir, Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	svc := evaluate.New(evaluate.Config{Store: st})
	d, err := svc.DatasetMeta(ctx, datasetID)
	if err != nil {
		t.Fatal(err)
	}
	b := d.Bounds
	pad := 0.5
	box := orb.Bound{Min: orb.Point{b.Min[0] - pad, b.Min[1] - pad}, Max: orb.Point{b.Max[0] + pad, b.Max[1] + pad}}
	r, err := svc.PrepareRegion(orb.MultiPolygon{box.ToPolygon()}, "coords")
	if err != nil {
		t.Fatal(err)
	}
	res, err := svc.Area(ctx, datasetID, evaluate.Options{Parameters: []string{param}}, r, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	return res.Grids[0]
}

// sameFloat32 compares two float32 values to float32 rounding: equal NaN-ness and a difference
// of at most 2 units in the last place of the larger magnitude (2·2⁻²⁴ relative; IEEE 754
// binary32 has a 24-bit significand).
func sameFloat32(a, b float32) bool {
	if a != a || b != b {
		return a != a && b != b
	}
	d := math.Abs(float64(a) - float64(b))
	return d <= 2*math.Pow(2, -24)*math.Max(math.Abs(float64(a)), math.Abs(float64(b)))
}

// TestGridMatchesArea: `ridgeflank grid` answers every cell as the API does (Service.Area at
// the grid's own resolution over the whole grid), for residual and predicted depth, from
// files and from a stored dataset, as COG and as netCDF, in blocks of 16 rows (7 blocks of
// the 100-row demo grid), with a companion grid on the age lattice and one on a coarser
// lattice sampled bilinearly. Tolerance: float32 rounding (sameFloat32).
func TestGridMatchesArea(t *testing.T) {
	old := gridBlockBytes
	gridBlockBytes = 1 // the smallest blocks: 16 rows
	t.Cleanup(func() { gridBlockBytes = old })
	f := newGridFixture(t)
	type source struct {
		name    string
		dataset string   // the stored dataset Area answers for
		args    []string // the inputs given to grid
	}
	sources := []source{
		{"demo files", demobasin.DatasetID, []string{"--age", f.age, "--depth", f.elevation, "--sediment", f.sediment, "--age-uncertainty", f.ageUnc}},
		{"demo dataset", demobasin.DatasetID, []string{"--dataset", demobasin.DatasetID, "--data", f.dataDir}},
		{"coarse sediment file", f.coarseDataset, []string{"--age", f.age, "--depth", f.elevation, "--vertical", "elevation-positive-up", "--sediment", f.coarseSediment}},
		{"coarse sediment dataset", f.coarseDataset, []string{"--dataset", f.coarseDataset, "--data", f.dataDir}},
	}
	for _, src := range sources {
		params := []string{evaluate.PResidualDepth, evaluate.PPredictedDepth}
		if src.dataset == demobasin.DatasetID {
			// the age-uncertainty grid read block by block, as Area reads it whole
			params = append(params, evaluate.PResidualDepthUncertainty)
		}
		for _, param := range params {
			want := areaAnswer(t, f.dataDir, src.dataset, param)
			for _, form := range []struct {
				ext, name string
				args      []string
			}{{".tif", ".tif", nil}, {".nc", ".nc", nil}, {".tif", "-zstd.tif", []string{"--compress", "zstd"}},
				// written in place, inputs not hashed
				{".tif", "-none.tif", []string{"--compress", "none", "--overviews", "none", "--content-ids=false"}},
				{".tif", "-none-overviews.tif", []string{"--compress", "none"}}} {
				ext := form.ext
				t.Run(src.name+"/"+param+form.name, func(t *testing.T) {
					out := filepath.Join(t.TempDir(), param+ext)
					args := append(append([]string{"grid", "--parameter", param, "--out", out}, form.args...), src.args...)
					code, stdout, stderr := runCLI(t, nil, args...)
					if code != 0 {
						t.Fatalf("exit %d: %s", code, stderr)
					}
					if strings.TrimSpace(stdout) != out {
						t.Errorf("stdout %q, want the path written", stdout)
					}
					got, meta, err := gdal.Read(out)
					if err != nil {
						t.Fatal(err)
					}
					if got.NX != want.NX || got.NY != want.NY || math.Abs(got.West-want.West) > 1e-9 || math.Abs(got.North-want.North) > 1e-9 {
						t.Fatalf("lattice %d×%d at (%g, %g), want %d×%d at (%g, %g)", got.NX, got.NY, got.West, got.North, want.NX, want.NY, want.West, want.North)
					}
					valid, bad := 0, 0
					for i := range want.Data {
						if !sameFloat32(got.Data[i], want.Data[i]) {
							if bad < 5 {
								t.Errorf("cell %d: grid %g, Area %g", i, got.Data[i], want.Data[i])
							}
							bad++
						}
						if want.Data[i] == want.Data[i] {
							valid++
						}
					}
					if bad > 0 || valid < len(want.Data)/2 {
						t.Fatalf("%d cells differ, %d of %d valid", bad, valid, len(want.Data))
					}
					md := meta.Metadata
					key := func(k string) string {
						if ext == ".nc" {
							return "NC_GLOBAL#" + k
						}
						return k
					}
					if md[key("ridgeflank_model")] != evaluate.DefaultModel || md[key("ridgeflank_parameter")] != param ||
						md[key("ridgeflank_caution")] != evaluate.Caution || !strings.HasPrefix(md[key("ridgeflank_software")], "ridgeflank ") {
						t.Errorf("provenance missing: %v", md)
					}
					if src.args[0] == "--age" {
						// inputs named, with the content id import would give unless told not to
						ageInput := md[key("ridgeflank_input_"+evaluate.PSeafloorAge)]
						hashed := !slices.Contains(form.args, "--content-ids=false")
						if !strings.HasPrefix(ageInput, filepath.Base(f.age)) || strings.Contains(ageInput, "content id gr_") != hashed {
							t.Errorf("age input recorded as %q (content id wanted: %v)", ageInput, hashed)
						}
					}
				})
			}
		}
	}
}

// TestGridBadInput: bad inputs exit with status 2 and one plain sentence, and leave nothing
// at --out (nor a temporary file beside it), also when the fault is found after some blocks
// were written (sediment values beyond 20 km once read as km).
func TestGridBadInput(t *testing.T) {
	old := gridBlockBytes
	gridBlockBytes = 1
	t.Cleanup(func() { gridBlockBytes = old })
	f := newGridFixture(t)
	cases := []struct {
		name string
		args []string
		msg  string
	}{
		{"missing age file", []string{"--parameter", "predicted_depth", "--age", filepath.Join(t.TempDir(), "none.tif")}, "not a readable grid"},
		{"unknown parameter", []string{"--parameter", "gravity", "--age", f.age}, `parameter "gravity" is not known`},
		{"depth units of an age", []string{"--parameter", "residual_depth", "--age", f.age, "--depth", f.elevation, "--depth-units", "Ma"}, "cannot be converted"},
		{"sediment in km read as metres beyond 20 km", []string{"--parameter", "residual_depth", "--age", f.age, "--depth", f.elevation,
			"--sediment", f.sediment, "--sediment-units", "km"}, "sediment_thickness values must lie between 0 and 20000 m"},
		{"residual without bathymetry", []string{"--parameter", "residual_depth", "--age", f.age}, "needs a grid"},
		{"unknown model", []string{"--parameter", "heat_flow", "--age", f.age, "--model", "nosuch", "--data", f.dataDir}, `no model "nosuch"`},
		{"unknown compression", []string{"--parameter", "predicted_depth", "--age", f.age, "--compress", "lzw"}, "--compress must be deflate, zstd or none"},
		{"unknown overview choice", []string{"--parameter", "predicted_depth", "--age", f.age, "--overviews", "some"}, "--overviews must be auto or none"},
		{"unknown sediment set", []string{"--parameter", "residual_depth", "--age", f.age, "--depth", f.elevation, "--sediment-set", "gravel"}, `sediment="gravel"`},
	}
	for _, c := range cases {
		for _, ext := range []string{".tif", ".nc", "-in-place.tif"} {
			t.Run(c.name+ext, func(t *testing.T) {
				dir := t.TempDir()
				args := []string{"grid", "--out", filepath.Join(dir, "out"+ext)}
				if ext == "-in-place.tif" {
					args = append(args, "--compress", "none", "--overviews", "none")
				}
				code, _, stderr := runCLI(t, nil, append(args, c.args...)...)
				if code != 2 {
					t.Fatalf("exit %d, want 2: %s", code, stderr)
				}
				if lines := strings.Count(strings.TrimSpace(stderr), "\n"); lines != 0 || !strings.Contains(stderr, c.msg) || !strings.HasPrefix(stderr, "ridgeflank grid: ") {
					t.Errorf("stderr %q: want one line naming %q", stderr, c.msg)
				}
				left, _ := os.ReadDir(dir)
				for _, e := range left {
					t.Errorf("left behind: %s", e.Name())
				}
			})
		}
	}
}

// TestGridUncompressedInputs: uncompressed GeoTIFF inputs, which grid reads straight into its
// buffers (GTIFF_DIRECT_IO) rather than through GDAL's block cache, give the same numbers, cell
// for cell, as the compressed COGs they were made from: age as striped float64, elevation as
// tiled float32 with no-data stored as −99999 instead of NaN, sediment striped float32.
func TestGridUncompressedInputs(t *testing.T) {
	f := newGridFixture(t)
	dir := t.TempDir()
	conv := func(src, name string, args ...string) string {
		out := filepath.Join(dir, name)
		cmd := exec.Command(args[0], append(append(args[1:], "-co", "COMPRESS=NONE"), src, out)...)
		if msg, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("%s: %v\n%s", args[0], err, msg)
		}
		return out
	}
	age := conv(f.age, "age64.tif", "gdal_translate", "-q", "-ot", "Float64")
	elev := conv(f.elevation, "elev-nodata.tif", "gdalwarp", "-q", "-ot", "Float32", "-srcnodata", "nan", "-dstnodata", "-99999", "-co", "TILED=YES", "-co", "BLOCKXSIZE=32", "-co", "BLOCKYSIZE=32")
	sed := conv(f.sediment, "sed.tif", "gdal_translate", "-q")
	grid := func(out, a, e, s string) *geo.Grid {
		code, _, stderr := runCLI(t, nil, "grid", "--parameter", evaluate.PResidualDepth, "--out", out, "--compress", "none", "--overviews", "none",
			"--age", a, "--depth", e, "--vertical", "elevation-positive-up", "--sediment", s)
		if code != 0 {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		g, _, err := gdal.Read(out)
		if err != nil {
			t.Fatal(err)
		}
		return g
	}
	want := grid(filepath.Join(dir, "from-cog.tif"), f.age, f.elevation, f.sediment)
	got := grid(filepath.Join(dir, "from-raw.tif"), age, elev, sed)
	valid := 0
	for i := range want.Data {
		if math.Float32bits(got.Data[i]) != math.Float32bits(want.Data[i]) && !(got.Data[i] != got.Data[i] && want.Data[i] != want.Data[i]) {
			t.Fatalf("cell %d: %g from uncompressed inputs, %g from the COGs", i, got.Data[i], want.Data[i])
		}
		if want.Data[i] == want.Data[i] {
			valid++
		}
	}
	if valid < len(want.Data)/2 {
		t.Fatalf("only %d of %d cells valid", valid, len(want.Data))
	}
	// No-data stored as −99999 in a patch of the elevation file: read with GDAL's block cache
	// (GTIFF_DIRECT_IO=NO) and straight into the buffers, the same cells are no-data and the
	// others equal.
	g := want
	poly := filepath.Join(dir, "patch.geojson")
	w, n, e, s := g.West+10*g.DX, g.North-10*g.DY, g.West+30*g.DX, g.North-25*g.DY
	if err := os.WriteFile(poly, fmt.Appendf(nil, `{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[%g,%g],[%g,%g],[%g,%g],[%g,%g],[%g,%g]]]}}]}`,
		w, n, e, n, e, s, w, s, w, n), 0o644); err != nil {
		t.Fatal(err)
	}
	if msg, err := exec.Command("gdal_rasterize", "-q", "-burn", "-99999", poly, elev).CombinedOutput(); err != nil {
		t.Fatalf("gdal_rasterize: %v\n%s", err, msg)
	}
	gdal.SetConfigOptions(map[string]string{"GTIFF_DIRECT_IO": "NO"})
	t.Setenv("GTIFF_DIRECT_IO", "NO") // grid leaves the option as the environment says
	cached := grid(filepath.Join(dir, "cached.tif"), age, elev, sed)
	gdal.SetConfigOptions(map[string]string{"GTIFF_DIRECT_IO": ""})
	os.Unsetenv("GTIFF_DIRECT_IO")
	direct := grid(filepath.Join(dir, "direct.tif"), age, elev, sed)
	nan := 0
	for i := range cached.Data {
		a, b := cached.Data[i], direct.Data[i]
		if a != a {
			nan++
		}
		if math.Float32bits(a) != math.Float32bits(b) && !(a != a && b != b) {
			t.Fatalf("cell %d: %g read through the cache, %g read directly", i, a, b)
		}
	}
	if nan < 15*20 {
		t.Errorf("%d no-data cells, want the patch's 300 at least", nan)
	}
}
