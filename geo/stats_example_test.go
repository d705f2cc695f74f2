package geo_test

import (
	"fmt"
	"math"

	"ridgeflank/geo"
)

func ExampleAreaWeightedStats() {
	// A SYNTHETIC residual-depth grid (m): rows at 60°N, 0° and 60°S, one no-data cell.
	g := geo.NewGrid(2, 3, 0, 60, 1, 60, geo.Node)
	copy(g.Data, []float32{10, float32(math.NaN()), 20, 40, 30, 50})
	st, _ := geo.AreaWeightedStats(g, geo.Mask{}, geo.StatsOptions{HistogramBinWidth: 20})
	fmt.Printf("count %d no-data %d mean %.1f median %.1f std %.2f p05 %.0f p95 %.0f\n",
		st.Count, st.NoData, st.Mean, st.Median, st.Std, st.P05, st.P95)
	fmt.Println("edges", st.Histogram.Edges, "counts", st.Histogram.Counts)
	// Output:
	// count 5 no-data 1 mean 30.0 median 30.0 std 13.09 p05 10 p95 50
	// edges [0 20 40 60] counts [1 2 2]
}
