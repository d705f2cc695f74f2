package evaluate

import (
	"context"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"runtime"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/ingest"
	"ridgeflank/store"
	_ "ridgeflank/store/sqlite"
	"ridgeflank/store/storetest"
)

// gdalGrid makes a global SYNTHETIC test grid of nx×ny cells with GDAL's own tools: a small
// seed (ESRI ASCII grid of seed(col, row) on sx×sy cells) resampled by gdalwarp with cubic
// splines to the full size, tiled and compressed like the grids users bring.
func gdalGrid(t testing.TB, dir, name string, sx, sy, nx, ny int, seed func(lon, lat float64) float64) string {
	t.Helper()
	if _, err := exec.LookPath("gdalwarp"); err != nil {
		t.Skip("gdalwarp not installed (make deps-test installs gdal-bin)")
	}
	var b strings.Builder
	cell := 360.0 / float64(sx)
	fmt.Fprintf(&b, "ncols %d\nnrows %d\nxllcorner -180\nyllcorner -90\ncellsize %g\nNODATA_value -9999\n", sx, sy, cell)
	for r := 0; r < sy; r++ {
		for c := 0; c < sx; c++ {
			lon, lat := -180+(float64(c)+0.5)*cell, 90-(float64(r)+0.5)*cell
			fmt.Fprintf(&b, "%.3f ", seed(lon, lat))
		}
		b.WriteByte('\n')
	}
	seedPath := filepath.Join(dir, name+"-seed.asc")
	if err := os.WriteFile(seedPath, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, name+".tif")
	cmd := exec.Command("gdalwarp", "-q", "-overwrite", "-s_srs", "EPSG:4326", "-t_srs", "EPSG:4326", "-te", "-180", "-90", "180", "90",
		"-ts", fmt.Sprint(nx), fmt.Sprint(ny), "-r", "cubicspline", "-ot", "Float32", "-srcnodata", "-9999", "-dstnodata", "-9999",
		"-co", "TILED=YES", "-co", "COMPRESS=DEFLATE", seedPath, out)
	if o, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("gdalwarp: %v\n%s", err, o)
	}
	return out
}

// A dataset whose grids are larger than the service's memory budget is served, through
// windows and a block cache that never exceeds its share of the budget, with the same answers
// as the in-memory path (the whole grids read at once and evaluated with geo.Evaluate and
// geo.Grid.SampleBilinear) on every cell they share. The budget is lowered to 4 MB so the test
// stays small: the grids are 11.5 MB each (the idea, not the size, is what is tested).
func TestServedLargerThanBudgetEqualsInMemory(t *testing.T) {
	dir := t.TempDir()
	const nx, ny = 2400, 1200 // 0.15° global
	// SYNTHETIC fields: age grows away from a sinuous ridge; sea land (NaN) near one pole.
	ageSeed := func(lon, lat float64) float64 {
		if lat > 75 {
			return -9999
		}
		return math.Min(180, 1.1*math.Abs(lon-20*math.Sin(lat*math.Pi/60)))
	}
	depthSeed := func(lon, lat float64) float64 {
		a := math.Max(0, ageSeed(lon, lat))
		if lat > 75 {
			return -9999
		}
		d := 2600 + 330*math.Sqrt(a)
		if math.Hypot(lon+120, lat+10) < 6 { // a seamount
			d -= 2500
		}
		return d
	}
	sedSeed := func(lon, lat float64) float64 { return 100 + 4*math.Abs(lat) + 2*math.Abs(lon) }
	agePath := gdalGrid(t, dir, "age", 90, 45, nx, ny, ageSeed)
	depthPath := gdalGrid(t, dir, "depth", 90, 45, nx, ny, depthSeed)
	sedPath := gdalGrid(t, dir, "sediment", 45, 23, nx/3, ny/3, sedSeed) // another lattice: sampled bilinearly

	ctx := context.Background()
	st := storetest.OpenStore(t, store.BackendSQLite, filepath.Join(dir, "store"))
	var ids []string
	for _, in := range []struct {
		path string
		kind store.GridKind
	}{{agePath, store.KindAge}, {depthPath, store.KindDepth}, {sedPath, store.KindSedimentThickness}} {
		res, err := ingest.Import(ctx, st, ingest.Request{Path: in.path, Kind: in.kind}, nil)
		if err != nil {
			t.Fatal(err)
		}
		ids = append(ids, res.Grid.ID)
	}
	if _, err := st.CreateDataset(ctx, store.Dataset{ID: "big", Name: "bigger than the budget (SYNTHETIC)", AgeGridID: ids[0], DepthGridID: ids[1], SedimentGridID: ids[2]}); err != nil {
		t.Fatal(err)
	}
	const budget = 4 << 20
	s := New(Config{Store: st, MemoryBudget: budget})

	// The in-memory reference: the stored files read whole.
	full := map[string]*geo.Grid{}
	for i, id := range ids {
		row, err := st.GetGrid(ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		p, err := st.Blobs().Path(row.Path)
		if err != nil {
			t.Fatal(err)
		}
		g, _, err := gdal.Read(p)
		if err != nil {
			t.Fatal(err)
		}
		if i < 2 && len(g.Data)*4 <= budget {
			t.Fatalf("grid %s has %d bytes, not more than the budget", id, len(g.Data)*4)
		}
		full[[]string{"age", "depth", "sed"}[i]] = g
	}
	blocks, _ := BudgetShares(budget)
	o := Options{Parameters: []string{PResidualDepth, PPredictedDepth, PObservedDepth}}

	for _, b := range []orb.Bound{
		{Min: orb.Point{-140, -30}, Max: orb.Point{-100, 10}},
		{Min: orb.Point{170, -20}, Max: orb.Point{190, 5}}, // across the antimeridian
		{Min: orb.Point{-180, -90}, Max: orb.Point{180, 90}},
	} {
		t.Run(fmt.Sprintf("area %v", b), func(t *testing.T) {
			ring := orb.Ring{b.Min, {b.Max[0], b.Min[1]}, b.Max, {b.Min[0], b.Max[1]}, b.Min}
			r, err := s.PrepareRegion(orb.MultiPolygon{{ring}}, "coords")
			if err != nil {
				t.Fatal(err)
			}
			got, err := s.Area(ctx, "big", o, r, 0, 0)
			if err != nil {
				t.Fatal(err)
			}
			ageW, err := full["age"].Window(r.Bound)
			if err != nil {
				t.Fatal(err)
			}
			mask, err := geo.GridMask(ageW, r.Parts)
			if err != nil {
				t.Fatal(err)
			}
			model, err := s.Model(ctx, "")
			if err != nil {
				t.Fatal(err)
			}
			q, _ := s.load(ctx, "big", o)
			ev, err := geo.Evaluate(ctx, geo.Inputs{Age: ageW, Model: model, Compaction: q.Sediment, Mask: mask,
				Depth: full["depth"], DepthSense: geo.DepthPositiveDown, Sediment: full["sed"]}, geo.OutResidualDepth|geo.OutPredictedDepth)
			if err != nil {
				t.Fatal(err)
			}
			if got.Lattice.NX != ageW.NX || got.Lattice.NY != ageW.NY || math.Abs(got.Lattice.West-ageW.West) > 1e-9 {
				t.Fatalf("lattice %d×%d west %g, in memory %d×%d west %g", got.Lattice.NX, got.Lattice.NY, got.Lattice.West, ageW.NX, ageW.NY, ageW.West)
			}
			compared := 0
			for i := range ageW.Data {
				if !mask.Get(i) {
					continue
				}
				for _, c := range []struct {
					name      string
					got, want float32
				}{
					{"residual", got.Grids[0].Data[i], ev.ResidualDepthM.Data[i]},
					{"predicted", got.Grids[1].Data[i], ev.PredictedDepthM.Data[i]},
				} {
					if c.got != c.want && !(c.got != c.got && c.want != c.want) {
						t.Fatalf("cell %d %s: served %v, in memory %v", i, c.name, c.got, c.want)
					}
				}
				compared++
			}
			if compared == 0 {
				t.Fatal("no cell compared")
			}
			if cs := s.CacheStats(); cs.UsedBytes > blocks {
				t.Fatalf("block cache holds %d bytes, more than its share %d of the budget", cs.UsedBytes, blocks)
			}
		})
	}

	t.Run("positions", func(t *testing.T) {
		lons := []float64{-120, -119.93, 179.95, -179.95, 0.01, 45.5, -60, 179.999}
		lats := []float64{-10, -10.02, 3, 3, 0, 60, -89.9, 74.9}
		got, err := s.Points(ctx, "big", Options{Parameters: []string{PSeafloorAge, PObservedDepth}}, lons, lats)
		if err != nil {
			t.Fatal(err)
		}
		for j := range lons {
			wantAge := full["age"].SampleBilinear(lons[j], lats[j])
			wantObs := full["depth"].SampleBilinear(lons[j], lats[j])
			for _, c := range []struct {
				name      string
				got, want float64
			}{{"age", got.Values[0][j], float64(wantAge)}, {"observed depth", got.Values[1][j], float64(wantObs)}} {
				// Positions are interpolated relative to the window's origin rather than the
				// grid's: equal to float32 rounding (2⁻²⁰ relative).
				if !(math.Abs(c.got-c.want) <= math.Abs(c.want)/(1<<20)) && !(math.IsNaN(c.got) && math.IsNaN(c.want)) {
					t.Errorf("(%g, %g) %s: served %v, in memory %v", lons[j], lats[j], c.name, c.got, c.want)
				}
			}
		}
	})

	t.Run("statistics streamed in bands equal one block", func(t *testing.T) {
		ring := orb.Ring{{-160, -60}, {-20, -60}, {-20, 60}, {-160, 60}, {-160, -60}}
		r, err := s.PrepareRegion(orb.MultiPolygon{{ring}}, "coords")
		if err != nil {
			t.Fatal(err)
		}
		banded, err := s.Statistics(ctx, "big", Options{Parameters: []string{PResidualDepth}}, r, 0, 0, nil)
		if err != nil {
			t.Fatal(err)
		}
		area, err := s.Area(ctx, "big", Options{Parameters: []string{PResidualDepth}}, r, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		// Exact in-memory statistics of the same cells (geo.AreaWeightedStats).
		exact, err := geo.AreaWeightedStats(area.Grids[0], area.Mask, geo.StatsOptions{HistogramBinWidth: 50})
		if err != nil {
			t.Fatal(err)
		}
		g := banded.Stats[0]
		if g.Count != exact.Count || g.Min != exact.Min || g.Max != exact.Max {
			t.Fatalf("count/min/max %d %g %g, exact %d %g %g", g.Count, g.Min, g.Max, exact.Count, exact.Min, exact.Max)
		}
		if math.Abs(g.Mean-exact.Mean) > 1e-9*math.Abs(exact.Mean)+1e-9 || math.Abs(g.Std-exact.Std) > 1e-9*exact.Std+1e-9 {
			t.Fatalf("mean/std %g %g, exact %g %g", g.Mean, g.Std, exact.Mean, exact.Std)
		}
		for _, p := range []struct{ got, want float64 }{{g.Median, exact.Median}, {g.P05, exact.P05}, {g.P95, exact.P95}} {
			if math.Abs(p.got-p.want) > g.PercentileErrorBound+1e-9 {
				t.Fatalf("percentile %g, exact %g, beyond the stated bound %g", p.got, p.want, g.PercentileErrorBound)
			}
		}
	})

	// Bands are evaluated two at a time on two cores and fed to the statistics in band order:
	// the answer must be the one core's, bit for bit (the sums are formed in the same order).
	t.Run("statistics on one core and on two are the same", func(t *testing.T) {
		ring := orb.Ring{{-170, -70}, {-10, -70}, {-10, 70}, {-170, 70}, {-170, -70}}
		r, err := s.PrepareRegion(orb.MultiPolygon{{ring}}, "coords")
		if err != nil {
			t.Fatal(err)
		}
		d, err := s.Dataset(ctx, "big")
		if err != nil {
			t.Fatal(err)
		}
		plan, err := planArea(d, r.Bound, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		bands, err := rowBands(d.Files.Age, r.Bound, plan)
		if err != nil {
			t.Fatal(err)
		}
		defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
		answer := func(procs int) string {
			runtime.GOMAXPROCS(procs)
			if w := bandWorkers(bands, &plan, d.Files.Age); len(bands) < 2 || w != min(procs, maxBandWorkers) {
				t.Fatalf("%d bands, %d evaluated at once on %d cores: the test does not compare what it should", len(bands), w, procs)
			}
			res, err := s.Statistics(ctx, "big", Options{Parameters: []string{PResidualDepth, PObservedDepth}}, r, 0, 0, nil)
			if err != nil {
				t.Fatal(err)
			}
			out := fmt.Sprintf("cells %d flags %+v lattice %+v", res.Cells, res.Flags, res.Lattice)
			for _, st := range res.Stats {
				h := st.Histogram
				st.Histogram = nil
				out += fmt.Sprintf(" %#v %#v", st, h)
			}
			return out
		}
		if one, two := answer(1), answer(2); one != two {
			t.Fatalf("one core: %s\ntwo cores: %s", one, two)
		}
	})

	t.Run("statistics over the limit are refused with its name", func(t *testing.T) {
		small := New(Config{Store: st, MemoryBudget: budget, Limits: Limits{MaxStatisticsCells: 1000}})
		ring := orb.Ring{{-160, -60}, {-20, -60}, {-20, 60}, {-160, 60}, {-160, -60}}
		r, _ := small.PrepareRegion(orb.MultiPolygon{{ring}}, "coords")
		_, err := small.Statistics(ctx, "big", Options{Parameters: []string{PResidualDepth}}, r, 0, 0, nil)
		f, ok := fault.As(err)
		if !ok || f.Kind != fault.LimitExceeded || f.Limit == nil || f.Limit.Name != "max_statistics_cells" {
			t.Fatalf("error %v, want limit max_statistics_cells", err)
		}
		// As a job the same question is answered, with the numbers of the service whose
		// request limit it fits, and progress reaching 1.
		req := StatisticsRequest{Dataset: "big", Coords: "POLYGON((-160 -60,-20 -60,-20 60,-160 60,-160 -60))", Options: Options{Parameters: []string{PResidualDepth}}}
		job, cells, err := small.StatisticsAsJob(ctx, req)
		if err != nil || !job || cells <= 1000 {
			t.Fatalf("as job %v, %d cells, %v", job, cells, err)
		}
		var last float64
		got, _, err := small.AnswerStatistics(ctx, req, func(f float64) { last = f })
		if err != nil {
			t.Fatal(err)
		}
		want, err := s.Statistics(ctx, "big", req.Options, r, 0, 0, nil)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got.Stats, want.Stats) || got.Cells != want.Cells || last != 1 {
			t.Fatalf("job %+v (progress %g), at once %+v", got.Stats[0], last, want.Stats[0])
		}
		tiny := New(Config{Store: st, MemoryBudget: budget, Limits: Limits{MaxStatisticsCells: 1000, MaxStatisticsJobCells: 2000}})
		if _, _, err := tiny.StatisticsAsJob(ctx, req); !fault.Is(err, fault.LimitExceeded) {
			t.Fatalf("over the job limit: %v", err)
		}
	})

	t.Run("large export streamed in bands equals the area answer", func(t *testing.T) {
		small := New(Config{Store: st, MemoryBudget: budget, Limits: Limits{MaxAreaCells: 10_000}})
		for _, c := range []struct {
			format, ext string
			res         float64
		}{{FormatCOG, "tif", 0}, {FormatCOG, "tif", 0.45}, {FormatNetCDF, "nc", 0}, {FormatNetCDF, "nc", 0.45}} {
			res := c.res
			wktArea := "POLYGON((-170 -70,160 -70,160 70,-170 70,-170 -70))"
			req := ExportRequest{Dataset: "big", Options: Options{Parameters: []string{PResidualDepth}}, Coords: wktArea,
				ResX: res, ResY: res, Format: c.format}
			path := filepath.Join(dir, fmt.Sprintf("export-%g.%s", res, c.ext))
			var fractions []float64
			if _, err := small.Export(ctx, req, path, func(f float64, _ string) { fractions = append(fractions, f) }); err != nil {
				t.Fatalf("%s: %v", c.format, err)
			}
			got, _, err := gdal.Read(path)
			if err != nil {
				t.Fatal(err)
			}
			if out := (areaPlan{inX: got.NX, inY: got.NY, k: 1, rx: 1, ry: 1}).outCells(); out <= 10_000 {
				t.Fatalf("%s: %d cells, not over max_area_cells: not streamed", c.format, out)
			}
			mp, _ := ParseArea(wktArea)
			r, _ := s.PrepareRegion(mp, "coords")
			want, err := s.Area(ctx, "big", req.Options, r, res, res)
			if err != nil {
				t.Fatal(err)
			}
			w := want.Grids[0]
			if got.NX != w.NX || got.NY != w.NY || math.Abs(got.West-w.West) > 1e-9 || math.Abs(got.North-w.North) > 1e-9 {
				t.Fatalf("resolution %g: file %d×%d at %g,%g; area %d×%d at %g,%g", res, got.NX, got.NY, got.West, got.North, w.NX, w.NY, w.West, w.North)
			}
			// The sediment grid lies on another lattice and is interpolated relative to each
			// band's window rather than the whole area's: equal to float32 rounding (2⁻²⁰
			// relative); cells on the age lattice are read, not interpolated, and equal exactly.
			for i := range w.Data {
				a, b := got.Data[i], w.Data[i]
				if (a != a) != (b != b) || math.Abs(float64(a-b)) > math.Abs(float64(b))/(1<<20) {
					t.Fatalf("%s resolution %g: cell %d file %v, area %v", c.format, res, i, a, b)
				}
			}
			if len(fractions) < 3 || fractions[len(fractions)-1] != 1 {
				t.Fatalf("progress %v", fractions)
			}
		}
		// Over max_export_cells both formats are refused with the limit's name, and nothing
		// is left at the path.
		tiny := New(Config{Store: st, MemoryBudget: budget, Limits: Limits{MaxAreaCells: 10_000, MaxExportCells: 100_000}})
		for _, format := range []string{FormatCOG, FormatNetCDF} {
			req := ExportRequest{Dataset: "big", Options: Options{Parameters: []string{PResidualDepth}},
				Coords: "POLYGON((-170 -70,160 -70,160 70,-170 70,-170 -70))", Format: format}
			path := filepath.Join(dir, "refused."+format)
			_, err := tiny.Export(ctx, req, path, nil)
			if f, ok := fault.As(err); !ok || f.Limit == nil || f.Limit.Name != "max_export_cells" {
				t.Fatalf("%s: error %v (%T), want limit max_export_cells", format, err, err)
			}
			if _, err := os.Stat(path); !os.IsNotExist(err) {
				t.Fatalf("%s: %s left behind", format, path)
			}
		}
	})
}
