package server

import (
	"math"
	"net/http"
	"testing"

	"ridgeflank/evaluate"
	"ridgeflank/geo"
)

// discardWriter is an http.ResponseWriter that keeps only the byte count.
type discardWriter struct {
	h http.Header
	n int64
}

func (d *discardWriter) Header() http.Header {
	if d.h == nil {
		d.h = http.Header{}
	}
	return d.h
}
func (d *discardWriter) Write(p []byte) (int, error) { d.n += int64(len(p)); return len(p), nil }
func (d *discardWriter) WriteHeader(int)             {}

// benchLattice is a SYNTHETIC 1000 × 1000 residual-depth answer at 1′ (1 M cells; one in ten
// cells no data, as over land), the size of the area query the scale benchmark asks.
func benchLattice() (*geo.Grid, []evaluate.Parameter, []*geo.Grid) {
	const n = 1000
	lat := geo.NewGrid(n, n, -45, 0, 1.0/60, 1.0/60, geo.CellCentre)
	g := geo.NewGrid(n, n, -45, 0, 1.0/60, 1.0/60, geo.CellCentre)
	for i := range g.Data {
		if i%10 == 3 {
			g.Data[i] = float32(math.NaN())
			continue
		}
		g.Data[i] = float32(300*math.Sin(float64(i)*1e-3) + 0.01*float64(i%977))
	}
	p, _ := evaluate.ParameterByID(evaluate.PResidualDepth)
	return lat, []evaluate.Parameter{p}, []*geo.Grid{g}
}

// BenchmarkAreaCoverageJSON writes the CoverageJSON of a 1 M-cell area answer (gridCoverage and
// writeJSON, as the area query does), without the evaluation.
func BenchmarkAreaCoverageJSON(b *testing.B) {
	lat, ps, gs := benchLattice()
	b.ReportAllocs()
	var w discardWriter
	for b.Loop() {
		w.n = 0
		if err := writeJSON(&w, http.StatusOK, MediaCovJSON, gridCoverage(lat, ps, gs)); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(w.n)/1e6, "MB")
}
