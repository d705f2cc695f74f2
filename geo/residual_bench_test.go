package geo

import (
	"context"
	"fmt"
	"math"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"ridgeflank/thermal"
)

// A global 2 arc-minute lattice (10800×5400 cells, 58.3 million): age, observed depth and
// sediment thickness in, residual depth out. Allocated once (about 0.9 GB) for all benchmarks.
const (
	benchNX = 10800
	benchNY = 5400
)

var benchData struct {
	once                 sync.Once
	age, depth, sed, out *Grid
	streamOut            []float32
}

func residualBenchGrids() (age, depth, sed, out *Grid, stream []float32) {
	d := &benchData
	d.once.Do(func() {
		mk := func() *Grid {
			return &Grid{NX: benchNX, NY: benchNY, West: -180 + 1.0/60, North: 90 - 1.0/60,
				DX: 1.0 / 30, DY: 1.0 / 30, Registration: CellCentre, Data: make([]float32, benchNX*benchNY)}
		}
		d.age, d.depth, d.sed, d.out = mk(), mk(), mk(), mk()
		d.streamOut = make([]float32, benchNX*benchNY)
		// Synthetic fields (no real data): ages 0..180 Ma in ridge-parallel bands, about 10%
		// no data (continents), depth near a plate curve, sediment 0..2 km.
		var wg sync.WaitGroup
		for w := range 4 {
			wg.Add(1)
			go func() {
				defer wg.Done()
				nan := float32(math.NaN())
				for r := w; r < benchNY; r += 4 {
					for c := 0; c < benchNX; c++ {
						i := r*benchNX + c
						x := float64(c) / benchNX
						y := float64(r) / benchNY
						a := 180 * math.Abs(math.Sin(7*x+2*y))
						if math.Sin(13*x)*math.Cos(5*y) > 0.8 {
							d.age.Data[i], d.depth.Data[i], d.sed.Data[i] = nan, nan, nan
							continue
						}
						d.age.Data[i] = float32(a)
						d.depth.Data[i] = float32(-(2600 + 300*math.Sqrt(a) - 100*math.Sin(40*y)))
						d.sed.Data[i] = float32(10*a + 500*(1+math.Sin(23*x)))
					}
				}
			}()
		}
		wg.Wait()
	})
	return d.age, d.depth, d.sed, d.out, d.streamOut
}

// streamPass is the reference: a plain parallel pass that reads three float32 arrays and writes
// one (out = a − (−b + c)), over the same row blocks and the same number of workers as Evaluate.
func streamPass(a, b, c, out []float32, nx, ny, workers int) {
	rows := defaultRowsPerBlock(nx)
	nBlocks := (ny + rows - 1) / rows
	var next atomic.Int64
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				k := int(next.Add(1) - 1)
				if k >= nBlocks {
					return
				}
				lo, hi := k*rows*nx, min((k+1)*rows, ny)*nx
				aa, bb, cc, oo := a[lo:hi], b[lo:hi], c[lo:hi], out[lo:hi]
				for i := range oo {
					oo[i] = aa[i] - (-bb[i] + cc[i])
				}
			}
		}()
	}
	wg.Wait()
}

// BenchmarkResidualGlobal reports ns per cell of the residual (age + elevation + sediment in,
// residual out), of the plain streaming pass over the same arrays in the same run, and their
// ratio (goal ≤ 1.5), for 1 and 2 workers.
func BenchmarkResidualGlobal(b *testing.B) {
	m, err := thermal.Builtin("gdh1")
	if err != nil {
		b.Fatal(err)
	}
	sh, err := thermal.CompactionByName("shale")
	if err != nil {
		b.Fatal(err)
	}
	for _, workers := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			age, depth, sed, out, stream := residualBenchGrids()
			in := Inputs{Age: age, Depth: depth, DepthSense: ElevationPositiveUp, Sediment: sed, Compaction: sh, Model: m, Workers: workers}
			dst := &Result{ResidualDepthM: out}
			cells := float64(benchNX * benchNY)
			var tRes, tStream time.Duration
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				t0 := time.Now()
				streamPass(age.Data, depth.Data, sed.Data, stream, benchNX, benchNY, workers)
				t1 := time.Now()
				if err := EvaluateInto(context.Background(), in, dst); err != nil {
					b.Fatal(err)
				}
				tStream += t1.Sub(t0)
				tRes += time.Since(t1)
			}
			b.StopTimer()
			res := float64(tRes.Nanoseconds()) / float64(b.N) / cells
			str := float64(tStream.Nanoseconds()) / float64(b.N) / cells
			b.ReportMetric(res, "ns/cell")
			b.ReportMetric(str, "stream-ns/cell")
			b.ReportMetric(res/str, "x-stream")
		})
	}
}

// BenchmarkResidualFusedChunk times the fused hot loop alone on one chunk whose inputs stay in
// the L1 cache (no memory traffic): the compute floor per cell of the residual pass.
func BenchmarkResidualFusedChunk(b *testing.B) {
	m, err := thermal.Builtin("gdh1")
	if err != nil {
		b.Fatal(err)
	}
	sh, err := thermal.CompactionByName("shale")
	if err != nil {
		b.Fatal(err)
	}
	st, err := sedTableFor(sh, m.Params().MantleDensityKgM3, m.Params().WaterDensityKgM3)
	if err != nil {
		b.Fatal(err)
	}
	dt := depthTableFor(thermal.TableFor(m))
	// Synthetic inputs (no real data): ages sweeping 0..180 Ma, sediment 0..2 km.
	age := make([]float32, residualChunk)
	obs := make([]float32, residualChunk)
	sed := make([]float32, residualChunk)
	res := make([]float32, residualChunk)
	for i := range age {
		a := 180 * float64(i) / residualChunk
		age[i] = float32(a)
		obs[i] = float32(-(2600 + 300*math.Sqrt(a)))
		sed[i] = float32(10*a + 200)
	}
	b.Run("fused", func(b *testing.B) {
		b.ReportAllocs()
		for i := 0; i < b.N; i++ {
			residualFusedChunk(res, age, obs, sed, -1, dt, st)
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/residualChunk, "ns/cell")
	})
	b.Run("stream", func(b *testing.B) {
		b.ReportAllocs()
		for i := 0; i < b.N; i++ {
			for j := range res {
				res[j] = age[j] - (-obs[j] + sed[j])
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/residualChunk, "ns/cell")
	})
}

// BenchmarkResidualTableBuild times building the fused loop's sediment table (thermal's
// SedimentCorrector and its node table; done once per compaction law and densities, then
// cached). The depth nodes are built with thermal's Table (see thermal's BenchmarkTableBuild).
func BenchmarkResidualTableBuild(b *testing.B) {
	sh, err := thermal.CompactionByName("shale")
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := newSedTable(sh, 3330, 1000); err != nil {
			b.Fatal(err)
		}
	}
}
