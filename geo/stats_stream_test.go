package geo

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// rowBand returns rows r0..r1−1 of g as a block sharing g's data (its North is g.Lat(r0), so
// its rows get the weights of g's rows) and the block's part of m.
func rowBand(g *Grid, m Mask, r0, r1 int) (*Grid, Mask) {
	b := *g
	b.NY = r1 - r0
	b.North = g.Lat(r0)
	b.Data = g.Data[r0*g.NX : r1*g.NX]
	var bm Mask
	if m.Len() > 0 {
		bm = NewMask(b.NX * b.NY)
		for i := 0; i < b.NX*b.NY; i++ {
			bm.Set(i, m.Get(r0*g.NX+i))
		}
	}
	return &b, bm
}

// splitRows cuts g into row bands whose heights cycle through heights.
func splitRows(g *Grid, m Mask, heights []int) (blocks []*Grid, masks []Mask) {
	for r0, k := 0, 0; r0 < g.NY; k++ {
		r1 := min(g.NY, r0+heights[k%len(heights)])
		b, bm := rowBand(g, m, r0, r1)
		blocks, masks = append(blocks, b), append(masks, bm)
		r0 = r1
	}
	return blocks, masks
}

// streamInParallel runs both passes with `workers` goroutines, each feeding its own part (block i
// goes to worker i mod workers) that is merged into the root afterwards.
func streamInParallel(g *Grid, m Mask, opt StatsOptions, columns int, heights []int, workers int) (Stats, error) {
	blocks, masks := splitRows(g, m, heights)
	root, err := NewStatsStream(opt, columns)
	if err != nil {
		return Stats{}, err
	}
	pass := func(add func(*StatsStream, *Grid, Mask) error) error {
		parts := make([]*StatsStream, workers)
		errs := make([]error, workers)
		var wg sync.WaitGroup
		for w := range parts {
			parts[w] = root.NewPart()
			wg.Go(func() {
				for i := w; i < len(blocks); i += workers {
					if err := add(parts[w], blocks[i], masks[i]); err != nil {
						errs[w] = err
						return
					}
				}
			})
		}
		wg.Wait()
		for w, p := range parts {
			if errs[w] != nil {
				return errs[w]
			}
			if err := root.Merge(p); err != nil {
				return err
			}
		}
		return nil
	}
	if err := pass((*StatsStream).AddMoments); err != nil {
		return Stats{}, err
	}
	if err := root.BeginHistogram(); err != nil {
		return Stats{}, err
	}
	if err := pass((*StatsStream).AddHistogram); err != nil {
		return Stats{}, err
	}
	return root.Result()
}

func TestStatsStreamAgainstGonumAndInMemory(t *testing.T) {
	// References: gonum.org/v1/gonum/stat — stat.Mean(x, w), stat.PopStdDev(x, w) (weighted
	// population standard deviation) and stat.Quantile(p, stat.Empirical, x, w) on the sorted
	// valid cells with their row weights (refSample); and this package's AreaWeightedStats for
	// the counts, range and histogram, which must agree exactly.
	// Tolerances: mean and std 1e-9 relative to max(|value|, Max−Min, 10⁻⁶·max|x|) (the merge
	// is exact up to rounding; stated margin; the last term admits gonum's own rounding noise,
	// e.g. a std of 7e−18 for a constant field of −4321.5); percentiles within the stream's own PercentileErrorBound, which
	// must not exceed half a fine bin, (Max−Min)/2¹⁷.
	region, err := ParseRegion([]byte(`{"type":"Polygon","coordinates":[[[-25,55],[40,50],[45,-20],[0,-25],[-25,55]],[[0,10],[10,10],[5,20],[0,10]]]}`), 0)
	if err != nil {
		t.Fatal(err)
	}
	fill := func(g *Grid, f func(c, r int) float64) *Grid {
		for r := 0; r < g.NY; r++ {
			for c := 0; c < g.NX; c++ {
				g.Data[r*g.NX+c] = float32(f(c, r))
			}
		}
		return g
	}
	rng := newTestRand(42)
	cases := []struct {
		name     string
		grid     *Grid
		region   bool // mask from the test region
		random   bool // random mask of about half the cells
		opt      StatsOptions
		minCount int // guards against a degenerate sample
		exact    bool
	}{
		{name: "smooth field (SYNTHETIC swell), cos-lat", minCount: 20000,
			grid: fill(NewGrid(211, 97, -30, 60, 0.5, 0.8, CellCentre), func(c, r int) float64 {
				return -3000 + 800*math.Sin(float64(c)/30)*math.Cos(float64(r)/20)
			}),
			opt: StatsOptions{HistogramBins: 17}},
		{name: "skewed (lognormal), cell areas, bin width", minCount: 20000,
			grid: fill(NewGrid(180, 120, 100, 40, 0.25, 0.25, Node), func(c, r int) float64 {
				return math.Exp(2 * rng.NormFloat64())
			}),
			opt: StatsOptions{Weighting: WeightCellArea, HistogramBinWidth: 25}},
		{name: "NaNs and repeated values, region mask", region: true, minCount: 3000,
			grid: randomResidualGrid(2, 157, 113, CellCentre),
			opt:  StatsOptions{HistogramBins: 17, HistogramMin: -1000, HistogramMax: 1200}},
		{name: "random mask, equal weights, NaNs", random: true, minCount: 5000,
			grid: randomResidualGrid(5, 140, 90, Node),
			opt:  StatsOptions{Weighting: WeightEqual, HistogramBinWidth: 100, HistogramMin: -200, HistogramMax: 300}},
		{name: "integer values (discrete)", minCount: 10000, exact: true,
			grid: fill(NewGrid(120, 100, 0, 45, 0.5, 0.5, CellCentre), func(c, r int) float64 {
				return math.Round(40 * rng.Float64() * rng.Float64())
			}),
			opt: StatsOptions{HistogramBins: 8}},
		{name: "large offset, small spread (mean ≫ std)", minCount: 5000,
			grid: fill(NewGrid(100, 60, 0, 30, 0.5, 0.5, CellCentre), func(c, r int) float64 {
				return 4e6 + 0.25*float64(rng.IntN(64)) // float32-exact steps of 0.25 m
			}),
			opt: StatsOptions{HistogramBins: 16}},
		{name: "constant field", minCount: 1000, exact: true,
			grid: fill(NewGrid(50, 40, 0, 20, 1, 1, CellCentre), func(c, r int) float64 { return -4321.5 }),
			opt:  StatsOptions{HistogramBins: 5}},
		{name: "single cell", minCount: 1, exact: true,
			grid: fill(NewGrid(1, 1, 10, -33, 1, 1, CellCentre), func(c, r int) float64 { return 7.25 }),
			opt:  StatsOptions{HistogramBinWidth: 2}},
		{name: "node global grid, repeated seam column, pole rows", minCount: 72 * 37, exact: false,
			grid: fill(NewGrid(73, 37, -180, 90, 5, 5, Node), func(c, r int) float64 {
				if c == 72 {
					return 1e6 // the repeated seam column, to be skipped
				}
				return 100*math.Cos(float64(c)*5*degToRad) + float64(r)
			}),
			opt: StatsOptions{HistogramBins: 10}},
		{name: "cell grid touching the south pole, cell areas", minCount: 60 * 30,
			grid: fill(NewGrid(60, 30, 0, -60.5, 1, 1, CellCentre), func(c, r int) float64 {
				return float64(r*r) + 0.01*float64(c)
			}),
			opt: StatsOptions{Weighting: WeightCellArea, HistogramBins: 12}},
	}
	for _, tc := range cases {
		g := tc.grid
		var m Mask
		switch {
		case tc.region:
			if m, err = GridMask(g, region); err != nil {
				t.Fatal(err)
			}
		case tc.random:
			m = NewMask(g.NX * g.NY)
			for i := 0; i < m.Len(); i++ {
				m.Set(i, rng.Float64() < 0.5)
			}
		}
		x, w, nodata := refSample(g, m, tc.opt.Weighting)
		want, err := AreaWeightedStats(g, m, tc.opt)
		if err != nil {
			t.Fatal(err)
		}
		for _, split := range []struct {
			name    string
			heights []int
			workers int
		}{
			{"one block", []int{g.NY}, 1},
			{"bands of 1,7,3,16,2 rows, 4 goroutines", []int{1, 7, 3, 16, 2}, 4},
			{"single rows, 3 goroutines", []int{1}, 3},
		} {
			t.Run(tc.name+"/"+split.name, func(t *testing.T) {
				if len(x) < tc.minCount {
					t.Fatalf("test sample too small: %d values", len(x))
				}
				got, err := streamInParallel(g, m, tc.opt, 0, split.heights, split.workers)
				if err != nil {
					t.Fatal(err)
				}
				// (b) exact agreement with AreaWeightedStats
				if got.Count != want.Count || got.NoData != want.NoData || got.Count != len(x) || got.NoData != nodata ||
					got.Min != want.Min || got.Max != want.Max || got.Min != x[0] || got.Max != x[len(x)-1] {
					t.Fatalf("count %d nodata %d min %g max %g; AreaWeightedStats %d %d %g %g; sample %d %d",
						got.Count, got.NoData, got.Min, got.Max, want.Count, want.NoData, want.Min, want.Max, len(x), nodata)
				}
				if math.Abs(got.WeightSum-want.WeightSum) > 1e-12*want.WeightSum {
					t.Errorf("weight sum %.15g, AreaWeightedStats %.15g", got.WeightSum, want.WeightSum)
				}
				gh, wh := got.Histogram, want.Histogram
				if gh == nil || wh == nil || fmt.Sprint(gh.Edges) != fmt.Sprint(wh.Edges) || fmt.Sprint(gh.Counts) != fmt.Sprint(wh.Counts) ||
					gh.Below != wh.Below || gh.Above != wh.Above {
					t.Fatalf("histogram %+v, AreaWeightedStats %+v", gh, wh)
				}
				for k := range gh.AreaFractions {
					if math.Abs(gh.AreaFractions[k]-wh.AreaFractions[k]) > 1e-12 {
						t.Errorf("bin %d area fraction %.15f, AreaWeightedStats %.15f", k, gh.AreaFractions[k], wh.AreaFractions[k])
					}
				}
				// (a) gonum
				spread := x[len(x)-1] - x[0]
				magnitude := max(math.Abs(x[0]), math.Abs(x[len(x)-1]))
				for _, c := range []struct {
					name      string
					got, want float64
				}{
					{"mean", got.Mean, stat.Mean(x, w)},
					{"std", got.Std, stat.PopStdDev(x, w)},
				} {
					if tol := 1e-9 * max(math.Abs(c.want), spread, 1e-6*magnitude); math.Abs(c.got-c.want) > tol || math.IsNaN(c.got) {
						t.Errorf("%s = %.15g, gonum %.15g (tolerance %g)", c.name, c.got, c.want, tol)
					}
				}
				halfBin := spread / (2 * StreamQuantileBins)
				if got.PercentileErrorBound > halfBin*(1+1e-9) || got.PercentileErrorBound < 0 {
					t.Errorf("error bound %g exceeds half a fine bin %g", got.PercentileErrorBound, halfBin)
				}
				if tc.exact && got.PercentileErrorBound != 0 {
					t.Errorf("error bound %g, want 0 for data with one distinct value per fine bin", got.PercentileErrorBound)
				}
				if want.PercentileErrorBound != 0 {
					t.Errorf("AreaWeightedStats reports error bound %g, want 0 (exact)", want.PercentileErrorBound)
				}
				for _, p := range []struct {
					name       string
					p          float64
					got, exact float64
				}{
					{"p05", 0.05, got.P05, want.P05}, {"p25", 0.25, got.P25, want.P25}, {"median", 0.5, got.Median, want.Median},
					{"p75", 0.75, got.P75, want.P75}, {"p95", 0.95, got.P95, want.P95},
				} {
					q := stat.Quantile(p.p, stat.Empirical, x, w)
					if math.Abs(p.got-q) > got.PercentileErrorBound || math.Abs(p.got-p.exact) > got.PercentileErrorBound {
						t.Errorf("%s = %.9g, gonum %.9g, AreaWeightedStats %.9g: outside the bound %g", p.name, p.got, q, p.exact, got.PercentileErrorBound)
					}
				}
			})
		}
	}
}

func TestStatsStreamErrorBoundNearlyReached(t *testing.T) {
	// Hand-built (SYNTHETIC): values 0 and 65536 fix the range, so a fine bin is 1 wide. k cells
	// of 1000 and k of 1000.999 share bin 1000; with equal weights W = 2k+2 and cumulative weight
	// k+1 at 1000, so the Empirical median (and p05, p25: targets ≤ k+1) is exactly 1000 (checked
	// with gonum stat.Quantile), and p75, p95 are 1000.999. The stream can only say "somewhere in
	// 1000..1000.999" and reports 1000.4995: its error is then its whole bound, ≈ half a bin.
	const k = 10
	hiVal := float64(float32(1000.999))
	g := NewGrid(2*k+2, 1, 0, 0, 1, 1, CellCentre)
	g.Data[0], g.Data[1] = 65536, 0
	for i := 0; i < k; i++ {
		g.Data[2+2*i], g.Data[3+2*i] = float32(hiVal), 1000
	}
	st, err := streamInParallel(g, Mask{}, StatsOptions{Weighting: WeightEqual}, 0, []int{1}, 1)
	if err != nil {
		t.Fatal(err)
	}
	x, w, _ := refSample(g, Mask{}, WeightEqual)
	halfBin := 65536.0 / StreamQuantileBins / 2
	for _, p := range []struct {
		name      string
		p         float64
		got, want float64
	}{
		{"p05", 0.05, st.P05, 1000}, {"median", 0.5, st.Median, 1000}, {"p95", 0.95, st.P95, hiVal},
	} {
		t.Run(p.name, func(t *testing.T) {
			if q := stat.Quantile(p.p, stat.Empirical, x, w); q != p.want {
				t.Fatalf("gonum says %g, the hand calculation %g", q, p.want)
			}
			e := math.Abs(p.got - p.want)
			if e > st.PercentileErrorBound {
				t.Errorf("error %g exceeds the bound %g", e, st.PercentileErrorBound)
			}
			if e < 0.99*halfBin || st.PercentileErrorBound > halfBin {
				t.Errorf("error %g, bound %g: the data was built to reach nearly half a bin (%g)", e, st.PercentileErrorBound, halfBin)
			}
		})
	}
}

func TestStatsStreamColumnsAndPole(t *testing.T) {
	// Global node grid with a repeated seam column (1e6, to be skipped by default) and a north
	// pole row of 1000 (cos-latitude weight ≈ 0), as in TestAreaWeightedStatsSeamAndPole.
	g := NewGrid(361, 181, -180, 90, 1, 1, Node)
	for i := range g.Data {
		g.Data[i] = 0
	}
	for r := 0; r < g.NY; r++ {
		g.Data[r*g.NX+360] = 1e6
	}
	for c := 0; c < 360; c++ {
		g.Data[c] = 1000
	}
	for _, c := range []struct {
		name      string
		columns   int
		wantCount int
		wantMax   float64
	}{
		{"default skips the seam column", 0, 360 * 181, 1000},
		{"all 361 columns", 361, 361 * 181, 1e6},
		{"first 10 columns", 10, 10 * 181, 1000},
	} {
		t.Run(c.name, func(t *testing.T) {
			st, err := streamInParallel(g, Mask{}, StatsOptions{}, c.columns, []int{13, 50}, 3)
			if err != nil {
				t.Fatal(err)
			}
			if st.Count != c.wantCount || st.Max != c.wantMax {
				t.Errorf("count %d max %g, want %d and %g", st.Count, st.Max, c.wantCount, c.wantMax)
			}
			if c.columns != 361 && (math.Abs(st.Mean) > 1e-9 || st.P95 != 0) {
				t.Errorf("the pole row should carry no cos-latitude weight: mean %g p95 %g", st.Mean, st.P95)
			}
		})
	}
}

func TestStatsStreamEmptyAndNoWeight(t *testing.T) {
	// Degenerate inputs must give what AreaWeightedStats gives (reference): no valid cell, an
	// empty mask, and valid cells of zero total weight (a row a hair past the pole, whose
	// cos-latitude weight rowWeights clamps to 0).
	empty := NewGrid(4, 4, 0, 10, 1, 1, CellCentre)
	some := NewGrid(4, 4, 0, 10, 1, 1, CellCentre)
	for i := range some.Data {
		some.Data[i] = float32(i)
	}
	pastPole := &Grid{NX: 3, NY: 1, West: 0, North: 90 + 1e-9, DX: 1, DY: 1, Data: []float32{5, 1, 3}}
	for _, c := range []struct {
		name string
		g    *Grid
		m    Mask
	}{
		{"all no-data", empty, Mask{}},
		{"empty mask", some, NewMask(16)},
		{"zero total weight", pastPole, Mask{}},
	} {
		t.Run(c.name, func(t *testing.T) {
			opt := StatsOptions{HistogramBins: 4}
			got, err := streamInParallel(c.g, c.m, opt, 0, []int{3}, 2)
			if err != nil {
				t.Fatal(err)
			}
			want, err := AreaWeightedStats(c.g, c.m, opt)
			if err != nil {
				t.Fatal(err)
			}
			if got.Count != want.Count || got.NoData != want.NoData || !math.IsNaN(got.Mean) || !math.IsNaN(got.Median) ||
				fmt.Sprint(got.Min, got.Max, got.WeightSum, *got.Histogram) != fmt.Sprint(want.Min, want.Max, want.WeightSum, *want.Histogram) {
				t.Errorf("stream %+v %+v\nin memory %+v %+v", got, got.Histogram, want, want.Histogram)
			}
		})
	}
}

func TestStatsStreamMisuse(t *testing.T) {
	g := NewGrid(4, 4, 0, 10, 1, 1, CellCentre)
	for i := range g.Data {
		g.Data[i] = float32(i)
	}
	fresh := func(t *testing.T) *StatsStream {
		s, err := NewStatsStream(StatsOptions{HistogramBins: 3}, 0)
		if err != nil {
			t.Fatal(err)
		}
		return s
	}
	for _, c := range []struct {
		name string
		run  func(t *testing.T) error
		want string
	}{
		{"both histogram kinds", func(t *testing.T) error {
			_, err := NewStatsStream(StatsOptions{HistogramBins: 3, HistogramBinWidth: 1}, 0)
			return err
		}, "not both"},
		{"too many bins", func(t *testing.T) error {
			_, err := NewStatsStream(StatsOptions{HistogramBins: MaxHistogramBins + 1}, 0)
			return err
		}, "limit"},
		{"too many bins of a width", func(t *testing.T) error {
			s, _ := NewStatsStream(StatsOptions{HistogramBinWidth: 1e-3}, 0)
			if err := s.AddMoments(g, Mask{}); err != nil {
				return err
			}
			return s.BeginHistogram()
		}, "limit"},
		{"bad weighting", func(t *testing.T) error { _, err := NewStatsStream(StatsOptions{Weighting: 9}, 0); return err }, "unknown weighting"},
		{"negative columns", func(t *testing.T) error { _, err := NewStatsStream(StatsOptions{}, -1); return err }, "must not be negative"},
		{"more columns than the block", func(t *testing.T) error {
			s, _ := NewStatsStream(StatsOptions{}, 5)
			return s.AddMoments(g, Mask{})
		}, "block has 4 columns"},
		{"mask size", func(t *testing.T) error { return fresh(t).AddMoments(g, NewMask(5)) }, "mask has 5 cells"},
		{"short block", func(t *testing.T) error {
			b := *g
			b.Data = b.Data[:7]
			return fresh(t).AddMoments(&b, Mask{})
		}, "with 7 values"},
		{"histogram before moments end", func(t *testing.T) error { return fresh(t).AddHistogram(g, Mask{}) }, "before BeginHistogram"},
		{"result in the first pass", func(t *testing.T) error { _, err := fresh(t).Result(); return err }, "before BeginHistogram"},
		{"moments after the first pass", func(t *testing.T) error {
			s := fresh(t)
			_ = s.BeginHistogram()
			return s.AddMoments(g, Mask{})
		}, "after BeginHistogram"},
		{"merge across passes", func(t *testing.T) error {
			s := fresh(t)
			p := s.NewPart()
			_ = s.BeginHistogram()
			return s.Merge(p)
		}, "different passes"},
		{"merge different options", func(t *testing.T) error {
			o, _ := NewStatsStream(StatsOptions{HistogramBins: 4}, 0)
			return fresh(t).Merge(o)
		}, "different options"},
		{"merge into itself", func(t *testing.T) error { s := fresh(t); return s.Merge(s) }, "into itself"},
		{"second pass reads other data", func(t *testing.T) error {
			s := fresh(t)
			_ = s.AddMoments(g, Mask{})
			_ = s.BeginHistogram()
			h := g.Clone()
			h.Data[5] = 99
			_ = s.AddHistogram(h, Mask{})
			_, err := s.Result()
			return err
		}, "passes read different data"},
		{"second pass misses a block", func(t *testing.T) error {
			s := fresh(t)
			_ = s.AddMoments(g, Mask{})
			_ = s.BeginHistogram()
			b, _ := rowBand(g, Mask{}, 0, 2)
			_ = s.AddHistogram(b, Mask{})
			_, err := s.Result()
			return err
		}, "passes read different data"},
	} {
		t.Run(c.name, func(t *testing.T) {
			err := c.run(t)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("err = %v, want %q", err, c.want)
			}
			if strings.Contains(c.want, "BeginHistogram") || strings.Contains(c.want, "different") && !strings.Contains(c.want, "data") || strings.Contains(c.want, "itself") {
				if !errors.Is(err, errStreamStage) {
					t.Errorf("misuse error %v does not wrap errStreamStage", err)
				}
			}
		})
	}
}

// BenchmarkStatsStream: statistics and a 50-bin histogram over the 4472×2236 grid (10 M cells) of
// BenchmarkAreaWeightedStats10MCells, fed as 64-row bands (two passes), beside AreaWeightedStats
// on the same grid held in memory, in the same run.
func BenchmarkStatsStream(b *testing.B) {
	g := randomResidualGrid(9, 4472, 2236, CellCentre)
	g.North, g.DY, g.DX, g.West = 89.9, 0.08, 0.08, -180
	cells := float64(g.NX * g.NY)
	opt := StatsOptions{HistogramBins: 50}
	blocks, _ := splitRows(g, Mask{}, []int{64})
	perCell := func(b *testing.B) {
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/cells, "ns/cell")
	}
	b.Run("in-memory AreaWeightedStats", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := AreaWeightedStats(g, Mask{}, opt); err != nil {
				b.Fatal(err)
			}
		}
		perCell(b)
	})
	b.Run("stream, 64-row bands, 1 goroutine", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			s, _ := NewStatsStream(opt, 0)
			for _, blk := range blocks {
				if err := s.AddMoments(blk, Mask{}); err != nil {
					b.Fatal(err)
				}
			}
			if err := s.BeginHistogram(); err != nil {
				b.Fatal(err)
			}
			for _, blk := range blocks {
				if err := s.AddHistogram(blk, Mask{}); err != nil {
					b.Fatal(err)
				}
			}
			if _, err := s.Result(); err != nil {
				b.Fatal(err)
			}
		}
		perCell(b)
	})
	workers := runtime.GOMAXPROCS(0)
	b.Run(fmt.Sprintf("stream, 64-row bands, %d goroutines", workers), func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := streamInParallelBlocks(blocks, opt, workers); err != nil {
				b.Fatal(err)
			}
		}
		perCell(b)
	})
}

// streamInParallelBlocks is streamInParallel over ready-made blocks without masks.
func streamInParallelBlocks(blocks []*Grid, opt StatsOptions, workers int) (Stats, error) {
	root, err := NewStatsStream(opt, 0)
	if err != nil {
		return Stats{}, err
	}
	pass := func(add func(*StatsStream, *Grid, Mask) error) error {
		parts := make([]*StatsStream, workers)
		var wg sync.WaitGroup
		for w := range parts {
			parts[w] = root.NewPart()
			wg.Go(func() {
				for i := w; i < len(blocks); i += workers {
					_ = add(parts[w], blocks[i], Mask{})
				}
			})
		}
		wg.Wait()
		for _, p := range parts {
			if err := root.Merge(p); err != nil {
				return err
			}
		}
		return nil
	}
	if err := pass((*StatsStream).AddMoments); err != nil {
		return Stats{}, err
	}
	if err := root.BeginHistogram(); err != nil {
		return Stats{}, err
	}
	if err := pass((*StatsStream).AddHistogram); err != nil {
		return Stats{}, err
	}
	return root.Result()
}

// A block large enough for AddHistogram to fill the user histogram and the fine percentile
// bins on two goroutines (two cores) gives the Stats, bit for bit, that one loop gives on one
// core (every sum is formed in the same order), and the counts, range and histogram of
// AreaWeightedStats exactly (whose moments and percentiles are held to gonum in
// TestStatsStreamAgainstGonumAndInMemory).
func TestStatsStreamLargeBlockOneOrTwoCores(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	g := randomResidualGrid(9, 640, 210, CellCentre) // 134 400 cells, over parallelHistogramCells
	if g.NX*g.NY < 2*parallelHistogramCells {
		t.Fatalf("test block of %d cells is too small to take the two-goroutine path", g.NX*g.NY)
	}
	rng := newTestRand(17)
	m := NewMask(g.NX * g.NY)
	for i := range m.Len() {
		m.Set(i, rng.Float64() < 0.8)
	}
	for _, opt := range []StatsOptions{{HistogramBinWidth: 50}, {HistogramBins: 50, Weighting: WeightCellArea}, {}} {
		run := func(procs int) Stats {
			t.Helper()
			runtime.GOMAXPROCS(procs)
			rows := g.NY
			st, err := NewStatsStream(opt, 0)
			if err != nil {
				t.Fatal(err)
			}
			for pass := range 2 {
				if pass == 1 {
					if err := st.BeginHistogram(); err != nil {
						t.Fatal(err)
					}
				}
				for r0 := 0; r0 < g.NY; r0 += rows {
					b, bm := rowBand(g, m, r0, min(g.NY, r0+rows))
					add := st.AddMoments
					if pass == 1 {
						add = st.AddHistogram
					}
					if err := add(b, bm); err != nil {
						t.Fatal(err)
					}
				}
			}
			res, err := st.Result()
			if err != nil {
				t.Fatal(err)
			}
			return res
		}
		one, two := run(1), run(2)
		bits := func(st Stats) string { // every field, the histogram's by value (not its address)
			h := st.Histogram
			st.Histogram = nil
			return fmt.Sprintf("%#v %#v", st, h)
		}
		if bits(one) != bits(two) {
			t.Errorf("%+v: one core %+v %+v, two %+v %+v", opt, one, one.Histogram, two, two.Histogram)
		}
		want, err := AreaWeightedStats(g, m, opt)
		if err != nil {
			t.Fatal(err)
		}
		if one.Count != want.Count || one.NoData != want.NoData || one.Min != want.Min || one.Max != want.Max {
			t.Errorf("%+v: count %d nodata %d range %g..%g; AreaWeightedStats %d %d %g..%g", opt, one.Count, one.NoData, one.Min, one.Max, want.Count, want.NoData, want.Min, want.Max)
		}
		if (one.Histogram == nil) != (want.Histogram == nil) ||
			one.Histogram != nil && (fmt.Sprint(one.Histogram.Edges, one.Histogram.Counts, one.Histogram.Below, one.Histogram.Above) !=
				fmt.Sprint(want.Histogram.Edges, want.Histogram.Counts, want.Histogram.Below, want.Histogram.Above)) {
			t.Errorf("%+v: histogram %+v, AreaWeightedStats %+v", opt, one.Histogram, want.Histogram)
		}
	}
}
