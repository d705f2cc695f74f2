package geo_test

import (
	"fmt"
	"math"
	"sync"

	"ridgeflank/geo"
)

// Statistics of a grid too big to hold, read as row bands by two goroutines per pass. Here the
// bands of a SYNTHETIC 1° global residual-depth grid (m) are computed on the fly; a real caller
// reads them from a file (e.g. geo/gdal Dataset.ReadRows), setting each band's North to the big
// grid's latitude of its first row so that its rows get their own area weights.
func ExampleStatsStream() {
	const nx, ny, bandRows = 360, 180, 16
	band := func(r0 int) *geo.Grid {
		r1 := min(ny, r0+bandRows)
		b := geo.NewGrid(nx, r1-r0, -179.5, 89.5-float64(r0), 1, 1, geo.CellCentre)
		for r := 0; r < b.NY; r++ {
			for c := 0; c < nx; c++ {
				lat, lon := b.Lat(r), b.Lon(c)
				if lat < -70 {
					continue // no data (NaN) south of 70°S
				}
				b.Set(c, r, float32(300*math.Sin(lat*math.Pi/90)+50*math.Cos(lon*math.Pi/60)))
			}
		}
		return b
	}
	s, err := geo.NewStatsStream(geo.StatsOptions{Weighting: geo.WeightCellArea, HistogramBinWidth: 200}, 0)
	if err != nil {
		panic(err)
	}
	pass := func(add func(*geo.StatsStream, *geo.Grid, geo.Mask) error) {
		parts := []*geo.StatsStream{s.NewPart(), s.NewPart()}
		var wg sync.WaitGroup
		for w, p := range parts {
			wg.Go(func() {
				for r0 := w * bandRows; r0 < ny; r0 += len(parts) * bandRows {
					if err := add(p, band(r0), geo.Mask{}); err != nil {
						panic(err)
					}
				}
			})
		}
		wg.Wait()
		for _, p := range parts {
			if err := s.Merge(p); err != nil {
				panic(err)
			}
		}
	}
	pass((*geo.StatsStream).AddMoments)
	if err := s.BeginHistogram(); err != nil {
		panic(err)
	}
	pass((*geo.StatsStream).AddHistogram)
	st, err := s.Result()
	if err != nil {
		panic(err)
	}
	fmt.Printf("count %d no-data %d area %.4g km²\n", st.Count, st.NoData, st.WeightSum/1e6)
	fmt.Printf("mean %.2f m, std %.2f m, min %.1f m, max %.1f m\n", st.Mean, st.Std, st.Min, st.Max)
	fmt.Printf("p05 %.2f m, median %.2f m, p95 %.2f m, within %g m of exact\n", st.P05, st.Median, st.P95, st.PercentileErrorBound)
	fmt.Println("edges (m)", st.Histogram.Edges, "counts", st.Histogram.Counts)
	// A bound of 0: each percentile's fine bin held one distinct value, so they are exact.

	// Output:
	// count 57600 no-data 7200 area 4.946e+08 km²
	// mean 4.16 m, std 224.02 m, min -349.9 m, max 349.9 m
	// p05 -318.07 m, median 17.43 m, p95 318.07 m, within 0 m of exact
	// edges (m) [-400 -200 0 200 400] counts [16590 9162 14724 17124]
}
