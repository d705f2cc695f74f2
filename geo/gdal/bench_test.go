package gdal

import (
	"bufio"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"strconv"
	"strings"
	"sync"
	"testing"

	"ridgeflank/geo"
)

// Benchmark inputs: a global 10800×5400 float32 grid (2 arc-minutes, cell-centre) of a
// synthetic seafloor (smooth relief + 5 m of hash noise, ~30% no-data "land"), written once as
// netCDF-4 (DEFLATE) and as COG. They are kept out of the repository: in
// $RIDGEFLANK_BENCH_DIR, else the user cache directory, else a temporary directory.

const benchNX, benchNY = 10800, 5400

var (
	benchOnce  sync.Once
	benchFiles map[string]string
	benchErr   error
)

func benchDir() (string, bool) {
	if d := os.Getenv("RIDGEFLANK_BENCH_DIR"); d != "" {
		return d, true
	}
	if d, err := os.UserCacheDir(); err == nil {
		return filepath.Join(d, "ridgeflank-bench"), true
	}
	return "", false
}

func benchInputs(b *testing.B) map[string]string {
	b.Helper()
	benchOnce.Do(func() {
		dir, ok := benchDir()
		if !ok {
			dir, benchErr = os.MkdirTemp("", "ridgeflank-bench")
			if benchErr != nil {
				return
			}
		}
		if benchErr = os.MkdirAll(dir, 0o755); benchErr != nil {
			return
		}
		benchFiles = map[string]string{
			"netcdf4": filepath.Join(dir, "seafloor-10800x5400-v1.nc"),
			"cog":     filepath.Join(dir, "seafloor-10800x5400-v1.tif"),
		}
		var g *geo.Grid
		for kind, p := range benchFiles {
			if _, err := os.Stat(p); err == nil {
				continue
			}
			if g == nil {
				g = benchGrid()
			}
			m := Meta{Name: "elevation", Units: "m", Title: "benchmark seafloor (SYNTHETIC)"}
			if kind == "cog" {
				benchErr = WriteCOG(p, g, m)
			} else {
				benchErr = WriteNetCDF(p, g, m)
			}
			if benchErr != nil {
				return
			}
		}
	})
	if benchErr != nil {
		b.Fatal(benchErr)
	}
	return benchFiles
}

func benchGrid() *geo.Grid {
	dx := 360.0 / benchNX
	g := geo.NewGrid(benchNX, benchNY, -180+dx/2, 90-dx/2, dx, dx, geo.CellCentre)
	for r := 0; r < benchNY; r++ {
		lat := g.Lat(r) * math.Pi / 180
		for c := 0; c < benchNX; c++ {
			lon := g.Lon(c) * math.Pi / 180
			v := -4500 + 1500*math.Sin(3*lon)*math.Cos(2*lat) + 800*math.Sin(11*lon+5*lat)
			if v > -3300 && math.Sin(2*lon)*math.Cos(3*lat) > 0.3 {
				continue // stays NaN: land
			}
			h := uint32(r*benchNX+c) * 2654435761
			v += float64(h>>22)/1024*10 - 5
			g.Data[r*benchNX+c] = float32(v)
		}
	}
	return g
}

// procStatusKB returns a field of /proc/self/status in kB (Linux), or −1.
func procStatusKB(field string) int64 {
	f, err := os.Open("/proc/self/status")
	if err != nil {
		return -1
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if rest, ok := strings.CutPrefix(sc.Text(), field+":"); ok {
			v, _ := strconv.ParseInt(strings.Fields(rest)[0], 10, 64)
			return v
		}
	}
	return -1
}

// benchRead times Read and reports the process's peak resident memory growth during a read
// (VmHWM after resetting it through /proc/self/clear_refs, minus VmRSS before), which includes
// GDAL's C-side block cache and decompression buffers that Go's MemStats cannot see.
func benchRead(b *testing.B, path string) {
	b.ReportAllocs()
	var peakMB float64
	for b.Loop() {
		b.StopTimer()
		runtime.GC()
		debug.FreeOSMemory()
		base := procStatusKB("VmRSS")
		resetOK := os.WriteFile("/proc/self/clear_refs", []byte("5"), 0) == nil
		b.StartTimer()
		g, _, err := Read(path)
		b.StopTimer()
		if err != nil {
			b.Fatal(err)
		}
		if hwm := procStatusKB("VmHWM"); resetOK && hwm > 0 && base > 0 {
			peakMB = math.Max(peakMB, float64(hwm-base)/1024)
		}
		if g.NX != benchNX || g.NY != benchNY {
			b.Fatalf("read %d×%d", g.NX, g.NY)
		}
		b.StartTimer()
	}
	b.ReportMetric(peakMB, "peak-rss-growth-MB")
	b.ReportMetric(float64(benchNX*benchNY*4)/(1<<20), "grid-MB")
}

func BenchmarkReadNetCDF4Deflate10800x5400(b *testing.B) {
	benchRead(b, benchInputs(b)["netcdf4"])
}

func BenchmarkReadCOG10800x5400(b *testing.B) {
	benchRead(b, benchInputs(b)["cog"])
}

func BenchmarkDatasetReadRows256(b *testing.B) {
	p := benchInputs(b)["cog"]
	d, err := Open(p, ReadOptions{})
	if err != nil {
		b.Fatal(err)
	}
	defer d.Close()
	buf := make([]float32, 256*benchNX)
	b.ReportAllocs()
	row := 0
	for b.Loop() {
		if row+256 > benchNY {
			row = 0
		}
		if err := d.ReadRows(row, buf); err != nil {
			b.Fatal(err)
		}
		row += 256
	}
}
