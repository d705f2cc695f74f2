package thermal

import (
	"math"
	"sync"
	"testing"
	"time"
)

// benchAges cycles through 1024 ages spread over 0–200 Ma.
var benchAges = func() []float64 {
	a := make([]float64, 1024)
	for i := range a {
		a[i] = 200 * float64(i) / float64(len(a))
	}
	return a
}()

var sink float64

// BenchmarkPerAge compares evaluating the series with looking up the table.
// One op evaluates all 1024 benchAges; the ns/age metric is per age.
func BenchmarkPerAge(b *testing.B) {
	m := mustBuiltin(b, IDGDH1)
	tb := TableFor(m)
	tb.HeatFlowNodes() // built on first use: not part of the timing
	tb.ThermalThicknessNodes()
	for _, bc := range []struct {
		name string
		f    func(float64) float64
	}{
		{"series/depth", m.DepthM},
		{"table/depth", tb.DepthM},
		{"series/heat_flow", m.HeatFlowMWm2},
		{"table/heat_flow", tb.HeatFlowMWm2},
		{"series/thickness", m.ThermalThicknessKm},
		{"table/thickness", tb.ThermalThicknessKm},
	} {
		b.Run(bc.name, func(b *testing.B) {
			b.ReportAllocs()
			s := 0.0
			for b.Loop() {
				for _, a := range benchAges {
					s += bc.f(a)
				}
			}
			sink = s
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(benchAges)), "ns/age")
		})
	}
}

// gridCells is the size of a 2-arc-minute global grid (10800 × 5400).
const gridCells = 10800 * 5400

var grid struct {
	once      sync.Once
	ages, out []float32
}

// benchGrid builds, once per process, a SYNTHETIC age grid of gridCells
// cells: ages rising away from a ridge along each row, with blocks of NaN
// standing for land (about a third of the cells).
func benchGrid() (ages, out []float32) {
	grid.once.Do(func() {
		const nx, ny = 10800, 5400
		grid.ages = make([]float32, gridCells)
		grid.out = make([]float32, gridCells)
		for i := range grid.out { // touch the pages before any timing
			grid.out[i] = 1
		}
		for r := 0; r < ny; r++ {
			row := grid.ages[r*nx : (r+1)*nx]
			for c := range row {
				if (c/600+r/300)%3 == 0 {
					row[c] = float32(math.NaN())
					continue
				}
				row[c] = float32(math.Abs(float64((c+7*r)%3600-1800))) * 0.1 // 0–180 Ma
			}
		}
	})
	return grid.ages, grid.out
}

// BenchmarkGrid58M runs the table's DepthsM over a 58-million-cell age array
// and, in the same iterations, a plain streaming pass (read one float32
// array, write one) over the same bytes, and reports ns per cell of both and
// their ratio (lookup/stream).
func BenchmarkGrid58M(b *testing.B) {
	ages, out := benchGrid()
	tb := TableFor(mustBuiltin(b, IDGDH1))
	b.ReportAllocs()
	b.SetBytes(int64(8 * gridCells))
	var tLookup, tStream time.Duration
	for b.Loop() {
		t0 := time.Now()
		for i, a := range ages {
			out[i] = a * 2
		}
		t1 := time.Now()
		tb.DepthsM(ages, out)
		tLookup += time.Since(t1)
		tStream += t1.Sub(t0)
	}
	b.ReportMetric(float64(tLookup.Nanoseconds())/float64(b.N)/gridCells, "lookup-ns/cell")
	b.ReportMetric(float64(tStream.Nanoseconds())/float64(b.N)/gridCells, "stream-ns/cell")
	b.ReportMetric(float64(tLookup)/float64(tStream), "lookup/stream")
}

// BenchmarkSedimentCorrections is the batch sediment correction over 1M cells.
func BenchmarkSedimentCorrections(b *testing.B) {
	c, _ := CompactionByName("shale")
	sc, err := NewSedimentCorrector(c, 3330, 1030)
	if err != nil {
		b.Fatal(err)
	}
	h := make([]float32, 1<<20)
	for i := range h {
		h[i] = float32(i%5000) * 1.3
	}
	out := make([]float32, len(h))
	sc.Nodes() // built on first use: not part of the timing
	b.ReportAllocs()
	b.SetBytes(int64(8 * len(h)))
	for b.Loop() {
		sc.CorrectionsM(h, out)
	}
}

// BenchmarkTableBuild is the one-time cost of a table (per parameter set),
// with its depth nodes; heat-flow and thickness nodes are built on first use
// (BenchmarkNodesBuild).
func BenchmarkTableBuild(b *testing.B) {
	m := mustBuiltin(b, IDGDH1)
	b.ReportAllocs()
	for b.Loop() {
		_ = newTable(m)
	}
}

// BenchmarkNodesBuild is the one-time cost of the heat-flow node table
// (thickness costs the same) and of a sediment corrector with its nodes.
func BenchmarkNodesBuild(b *testing.B) {
	tb := TableFor(mustBuiltin(b, IDGDH1))
	b.Run("heat_flow", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			_ = newFloat32Nodes(TableMaxAgeMa, tb.heatSqrtAge)
		}
	})
	b.Run("sediment", func(b *testing.B) {
		c, _ := CompactionByName("shale")
		b.ReportAllocs()
		for b.Loop() {
			sc, err := NewSedimentCorrector(c, 3330, 1030)
			if err != nil {
				b.Fatal(err)
			}
			sc.Nodes()
		}
	})
}
