package geo

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// refSample gathers the valid masked values and their weights, sorted by value, the form gonum's
// stat functions want.
func refSample(g *Grid, m Mask, w Weighting) (x, wt []float64, nodata int) {
	ws, _ := rowWeights(g, w)
	nx := seamColumns(g)
	type pair struct{ v, w float64 }
	var ps []pair
	for r := 0; r < g.NY; r++ {
		for c := 0; c < nx; c++ {
			i := r*g.NX + c
			if m.Len() > 0 && !m.Get(i) {
				continue
			}
			v := g.Data[i]
			if math.IsNaN(float64(v)) {
				nodata++
				continue
			}
			ps = append(ps, pair{float64(v), ws[r]})
		}
	}
	sort.SliceStable(ps, func(i, j int) bool { return ps[i].v < ps[j].v })
	for _, p := range ps {
		x = append(x, p.v)
		wt = append(wt, p.w)
	}
	return x, wt, nodata
}

// randomResidualGrid fills a grid with synthetic residual-depth-like values (m): a smooth swell,
// noise, some repeated values, and ~10 % no-data.
func randomResidualGrid(seed uint64, nx, ny int, reg Registration) *Grid {
	rng := newTestRand(seed)
	g := NewGrid(nx, ny, -30, 60, 0.5, 0.8, reg)
	for r := 0; r < ny; r++ {
		for c := 0; c < nx; c++ {
			v := 400*math.Exp(-math.Pow(float64(c-nx/2)/20, 2)) + 150*rng.NormFloat64()
			switch u := rng.Float64(); {
			case u < 0.1:
				v = math.NaN()
			case u < 0.15:
				v = 100 // a repeated value, as after rounding
			}
			g.Data[r*nx+c] = float32(v)
		}
	}
	return g
}

func TestAreaWeightedStatsAgainstGonum(t *testing.T) {
	// Reference library: gonum.org/v1/gonum/stat — stat.Mean(x, w), stat.PopStdDev(x, w)
	// (weighted population standard deviation; stat.StdDev is the unbiased frequency-weight form,
	// which does not apply to area weights), stat.Quantile(p, stat.Empirical, x, w), and
	// stat.Histogram(nil, dividers, x, w).
	for _, c := range []struct {
		name   string
		seed   uint64
		reg    Registration
		weight Weighting
		region bool
	}{
		{"cos-lat weights, whole grid", 1, CellCentre, WeightCosLat, false},
		{"cos-lat weights, region mask", 2, CellCentre, WeightCosLat, true},
		{"ellipsoid cell areas, region mask", 3, Node, WeightCellArea, true},
		{"equal weights", 4, Node, WeightEqual, false},
	} {
		t.Run(c.name, func(t *testing.T) {
			g := randomResidualGrid(c.seed, 157, 113, c.reg)
			var m Mask
			if c.region {
				mp, err := ParseRegion([]byte(`{"type":"Polygon","coordinates":[[[-25,55],[40,50],[45,-20],[0,-25],[-25,55]],[[0,10],[10,10],[5,20],[0,10]]]}`), 0)
				if err != nil {
					t.Fatal(err)
				}
				if m, err = GridMask(g, mp); err != nil {
					t.Fatal(err)
				}
			}
			st, err := AreaWeightedStats(g, m, StatsOptions{Weighting: c.weight, HistogramBins: 17, HistogramMin: -1000, HistogramMax: 1200})
			if err != nil {
				t.Fatal(err)
			}
			x, w, nodata := refSample(g, m, c.weight)
			if st.Count != len(x) || st.NoData != nodata {
				t.Fatalf("count %d nodata %d, want %d and %d", st.Count, st.NoData, len(x), nodata)
			}
			if len(x) < 1000 || nodata == 0 {
				t.Fatalf("test sample too small: %d values, %d no-data", len(x), nodata)
			}
			checks := []struct {
				name      string
				got, want float64
				tol       float64
			}{
				{"mean", st.Mean, stat.Mean(x, w), 1e-9},
				{"std", st.Std, stat.PopStdDev(x, w), 1e-9},
				{"min", st.Min, x[0], 0},
				{"max", st.Max, x[len(x)-1], 0},
				{"p05", st.P05, stat.Quantile(0.05, stat.Empirical, x, w), 0},
				{"p25", st.P25, stat.Quantile(0.25, stat.Empirical, x, w), 0},
				{"median", st.Median, stat.Quantile(0.5, stat.Empirical, x, w), 0},
				{"p75", st.P75, stat.Quantile(0.75, stat.Empirical, x, w), 0},
				{"p95", st.P95, stat.Quantile(0.95, stat.Empirical, x, w), 0},
			}
			for _, k := range checks {
				if math.Abs(k.got-k.want) > k.tol*math.Max(1, math.Abs(k.want)) {
					t.Errorf("%s = %.12g, gonum %.12g", k.name, k.got, k.want)
				}
			}
			h := st.Histogram
			if h == nil || len(h.Edges) != 18 {
				t.Fatalf("histogram %+v", h)
			}
			wantW := stat.Histogram(nil, h.Edges, x, w)
			wantN := stat.Histogram(nil, h.Edges, x, nil)
			sumW := 0.0
			for _, v := range w {
				sumW += v
			}
			for k := range h.Counts {
				if float64(h.Counts[k]) != wantN[k] {
					t.Errorf("bin %d count %d, gonum %g", k, h.Counts[k], wantN[k])
				}
				if math.Abs(h.AreaFractions[k]-wantW[k]/sumW) > 1e-12 {
					t.Errorf("bin %d fraction %.15f, gonum %.15f", k, h.AreaFractions[k], wantW[k]/sumW)
				}
			}
		})
	}
}

func TestAreaWeightedStatsHandWorked(t *testing.T) {
	// 3 rows at latitudes 60, 0, −60 (cos = 0.5, 1, 0.5), two columns.
	// Values: row 60°: 10, NaN; row 0°: 20, 40; row −60°: 30, 50.
	// Weighted mean = (0.5·10 + 20 + 40 + 0.5·30 + 0.5·50)/(0.5+1+1+0.5+0.5) = 105/3.5 = 30.
	// Sorted (value, weight): (10,.5) (20,1) (30,.5) (40,1) (50,.5); W = 3.5.
	// Median: first cumulative ≥ 1.75 → 10:0.5, 20:1.5, 30:2.0 → 30.
	// P95: ≥ 3.325 → 40:3.0, 50:3.5 → 50. P05: ≥ 0.175 → 10.
	// Variance = (0.5·400 + 100 + 100 + 0 + 0.5·400)/3.5 = 600/3.5.
	g := NewGrid(2, 3, 0, 60, 1, 60, Node)
	copy(g.Data, []float32{10, float32(math.NaN()), 20, 40, 30, 50})
	st, err := AreaWeightedStats(g, Mask{}, StatsOptions{HistogramBinWidth: 20})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"mean", st.Mean, 30}, {"median", st.Median, 30}, {"p05", st.P05, 10}, {"p95", st.P95, 50},
		{"std", st.Std, math.Sqrt(600 / 3.5)}, {"count", float64(st.Count), 5}, {"nodata", float64(st.NoData), 1},
		{"weight", st.WeightSum, 3.5},
	} {
		if math.Abs(c.got-c.want) > 1e-12 {
			t.Errorf("%s = %g, want %g", c.name, c.got, c.want)
		}
	}
	// width-20 bins aligned to multiples of 20 over 10..50: [0,20) [20,40) [40,60]
	h := st.Histogram
	if fmt.Sprint(h.Edges) != "[0 20 40 60]" || fmt.Sprint(h.Counts) != "[1 2 2]" {
		t.Errorf("histogram edges %v counts %v", h.Edges, h.Counts)
	}
	if math.Abs(h.AreaFractions[0]-0.5/3.5) > 1e-15 || math.Abs(h.AreaFractions[1]-1.5/3.5) > 1e-15 {
		t.Errorf("fractions %v", h.AreaFractions)
	}
}

func TestAreaWeightedStatsSeamAndPole(t *testing.T) {
	// Global node grid with a repeated seam column and pole rows.
	g := NewGrid(361, 181, -180, 90, 1, 1, Node)
	for i := range g.Data {
		g.Data[i] = 0
	}
	for r := 0; r < g.NY; r++ {
		g.Data[r*g.NX+360] = 1e6 // the repeated column must be ignored
	}
	for c := 0; c < 360; c++ {
		g.Data[c] = 1000 // north pole row: weight cos 90° = 0
	}
	st, err := AreaWeightedStats(g, Mask{}, StatsOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if st.Max != 1000 || st.Count != 360*181 {
		t.Errorf("max %g count %d: the seam column was not skipped", st.Max, st.Count)
	}
	if math.Abs(st.Mean) > 1e-9 || st.P95 != 0 {
		t.Errorf("pole row should carry no cos-latitude weight: mean %g p95 %g", st.Mean, st.P95)
	}
	// with exact cell areas the polar cap cells count (area of the cap poleward of 89.5°)
	st, _ = AreaWeightedStats(g, Mask{}, StatsOptions{Weighting: WeightCellArea})
	if !(st.Mean > 0) {
		t.Errorf("cell-area mean %g, want > 0", st.Mean)
	}
}

func TestAreaWeightedStatsEmptyAndErrors(t *testing.T) {
	g := NewGrid(4, 4, 0, 10, 1, 1, CellCentre) // all NaN
	st, err := AreaWeightedStats(g, Mask{}, StatsOptions{HistogramBins: 4})
	if err != nil {
		t.Fatal(err)
	}
	if st.Count != 0 || st.NoData != 16 || !math.IsNaN(st.Mean) || !math.IsNaN(st.Median) {
		t.Errorf("empty stats %+v", st)
	}
	for _, c := range []struct {
		name string
		mask Mask
		opt  StatsOptions
		want string
	}{
		{"mask size", NewMask(5), StatsOptions{}, "mask has 5 cells"},
		{"both histogram kinds", Mask{}, StatsOptions{HistogramBins: 3, HistogramBinWidth: 1}, "not both"},
		{"too many bins", Mask{}, StatsOptions{HistogramBins: MaxHistogramBins + 1}, "limit"},
		{"bad weighting", Mask{}, StatsOptions{Weighting: 9}, "unknown weighting"},
	} {
		t.Run(c.name, func(t *testing.T) {
			g := NewGrid(4, 4, 0, 10, 1, 1, CellCentre)
			for i := range g.Data {
				g.Data[i] = float32(i)
			}
			_, err := AreaWeightedStats(g, c.mask, c.opt)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("err = %v, want %q", err, c.want)
			}
		})
	}
}

// BenchmarkAreaWeightedStats10MCells: statistics and a 50-bin histogram over a 4472×2236 grid.
func BenchmarkAreaWeightedStats10MCells(b *testing.B) {
	g := randomResidualGrid(9, 4472, 2236, CellCentre)
	g.North, g.DY, g.DX, g.West = 89.9, 0.08, 0.08, -180
	b.ReportAllocs()
	for b.Loop() {
		if _, err := AreaWeightedStats(g, Mask{}, StatsOptions{HistogramBins: 50}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(g.NX*g.NY)*float64(b.N)/b.Elapsed().Seconds()/1e6, "Mcells/s")
}
