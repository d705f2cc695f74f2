package raster

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"sync"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
)

// field is a smooth synthetic test field with no-data holes (SYNTHETIC, for tests only).
func field(nx, ny int, west, north, dx, dy float64, holes bool) *geo.Grid {
	g := geo.NewGrid(nx, ny, west, north, dx, dy, geo.CellCentre)
	for r := 0; r < ny; r++ {
		for c := 0; c < nx; c++ {
			lon, lat := g.Lon(c), g.Lat(r)
			v := 3000 + 1500*math.Sin(lon*math.Pi/60)*math.Cos(lat*math.Pi/90) + float64((c*7+r*13)%17)
			if holes && (c/37+r/23)%11 == 0 {
				v = math.NaN()
			}
			g.Data[r*nx+c] = float32(v)
		}
	}
	return g
}

func writeCOG(t testing.TB, g *geo.Grid) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "g.tif")
	if err := gdal.WriteCOG(p, g, gdal.Meta{Units: "m"}); err != nil {
		t.Fatal(err)
	}
	return p
}

func sameGrid(t *testing.T, name string, got, want *geo.Grid) {
	t.Helper()
	if got.NX != want.NX || got.NY != want.NY || math.Abs(got.West-want.West) > 1e-9 || math.Abs(got.North-want.North) > 1e-9 ||
		got.DX != want.DX || got.DY != want.DY || got.Registration != want.Registration {
		t.Fatalf("%s: shape %d×%d west %g north %g, want %d×%d west %g north %g", name,
			got.NX, got.NY, got.West, got.North, want.NX, want.NY, want.West, want.North)
	}
	for i := range want.Data {
		a, b := got.Data[i], want.Data[i]
		if a != b && !(a != a && b != b) {
			t.Fatalf("%s: cell %d = %v, want %v", name, i, a, b)
		}
	}
}

// Windows read block by block from the file equal geo.Grid.Window of the whole grid read at
// once (the in-memory path), for bounds inside, across block edges, across the antimeridian
// and the 0°/360° seam, at the poles and for the whole world.
func TestWindowEqualsInMemory(t *testing.T) {
	for _, tc := range []struct {
		name        string
		west, north float64
	}{
		{"global −180..180", -180 + 360.0/2048/2, 90 - 180.0/1024/2},
		{"global 0..360", 360.0 / 2048 / 2, 90 - 180.0/1024/2},
	} {
		g := field(2048, 1024, tc.west, tc.north, 360.0/2048, 180.0/1024, true)
		p := writeCOG(t, g)
		full, _, err := gdal.Read(p)
		if err != nil {
			t.Fatal(err)
		}
		f, err := Open(p, "k-"+tc.name, gdal.ReadOptions{}, NewCache(64<<20))
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close(true)
		for _, b := range []orb.Bound{
			{Min: orb.Point{10, 10}, Max: orb.Point{20, 15}},
			{Min: orb.Point{-100, -60}, Max: orb.Point{80, 61}},   // many blocks
			{Min: orb.Point{170, -10}, Max: orb.Point{-170, 10}},  // antimeridian, Min > Max
			{Min: orb.Point{170, -10}, Max: orb.Point{190, 10}},   // antimeridian, Max past 180
			{Min: orb.Point{-5, -10}, Max: orb.Point{5, 10}},      // 0° meridian (the seam of a 0..360 grid)
			{Min: orb.Point{-180, 80}, Max: orb.Point{180, 90}},   // north polar cap
			{Min: orb.Point{-30, -90}, Max: orb.Point{30, -89.5}}, // at the south pole
			{Min: orb.Point{-180, -90}, Max: orb.Point{180, 90}},  // the world
			{Min: orb.Point{33.3, 44.4}, Max: orb.Point{33.3, 44.4}},
		} {
			t.Run(fmt.Sprintf("%s %v", tc.name, b), func(t *testing.T) {
				want, err := full.Window(b)
				if err != nil {
					t.Fatal(err)
				}
				got, err := f.Window(context.Background(), b, 0)
				if err != nil {
					t.Fatal(err)
				}
				sameGrid(t, "window", got, want)
				// the streaming bands hold the same rows
				row := 0
				err = f.Rows(context.Background(), b, 0, 100, func(band *geo.Grid) error {
					for i, v := range band.Data {
						w := want.Data[row*want.NX+i]
						if v != w && !(v != v && w != w) {
							return fmt.Errorf("band at row %d: cell %d = %v, want %v", row, i, v, w)
						}
					}
					if math.Abs(band.North-want.Lat(row)) > 1e-9 {
						return fmt.Errorf("band north %g, want %g", band.North, want.Lat(row))
					}
					row += band.NY
					return nil
				})
				if err != nil {
					t.Fatal(err)
				}
				if row != want.NY {
					t.Fatalf("bands covered %d rows, want %d", row, want.NY)
				}
				// block means read band by band equal Resample of the whole window, bit for bit
				for _, fxy := range [][2]int{{3, 3}, {2, 5}, {7, 1}} {
					wantM, werr := want.Resample(float64(fxy[0])*want.DX, float64(fxy[1])*want.DY)
					gotM, gerr := f.WindowMean(context.Background(), b, 0, fxy[0], fxy[1], true)
					if (werr == nil) != (gerr == nil) {
						t.Fatalf("block means %v: Resample error %v, WindowMean error %v", fxy, werr, gerr)
					}
					if werr == nil {
						sameGrid(t, fmt.Sprintf("block means %v", fxy), gotM, wantM)
					}
				}
			})
		}
	}
}

// Overview levels agree with area-weighted block means of the full-resolution grid
// (geo.Grid.Resample, the in-memory reference). GDAL's AVERAGE overviews weight cells equally
// and build each level from the one before, so the stated tolerance is: for blocks without
// no-data, the difference is at most the block's value range times the relative spread of its
// row weights (cos latitude across f rows: f·DY·tan|φ| in radians, plus 1e-5 for float32
// rounding); for blocks with no-data, the overview value lies within the block's range.
func TestOverviewsMatchAreaWeightedMeans(t *testing.T) {
	g := field(2048, 1024, -180+360.0/2048/2, 90-180.0/1024/2, 360.0/2048, 180.0/1024, true)
	p := writeCOG(t, g)
	f, err := Open(p, "ov", gdal.ReadOptions{}, NewCache(64<<20))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close(true)
	if len(f.Levels()) < 3 {
		t.Fatalf("want at least 2 overviews, got %d levels", len(f.Levels()))
	}
	for _, factor := range []int{2, 4} {
		t.Run(fmt.Sprint("factor ", factor), func(t *testing.T) {
			lvl := f.ExactLevel(factor)
			if lvl < 0 {
				t.Fatalf("no exact level for factor %d", factor)
			}
			b := orb.Bound{Min: orb.Point{-180, -80}, Max: orb.Point{180, 80}}
			ov, err := f.Window(context.Background(), b, lvl)
			if err != nil {
				t.Fatal(err)
			}
			ref, err := g.Resample(float64(factor)*g.DX, float64(factor)*g.DY)
			if err != nil {
				t.Fatal(err)
			}
			checked := 0
			for r := 0; r < ov.NY; r++ {
				lat := ov.Lat(r)
				rr := int(math.Round((ref.North - lat) / ref.DY))
				for c := 0; c < ov.NX; c++ {
					cc := int(math.Round((ov.Lon(c) - ref.West) / ref.DX))
					want, got := ref.Data[rr*ref.NX+cc], ov.Data[r*ov.NX+c]
					lo, hi, holes := math.Inf(1), math.Inf(-1), false
					for i := 0; i < factor; i++ {
						for j := 0; j < factor; j++ {
							v := float64(g.Data[(rr*factor+i)*g.NX+cc*factor+j])
							if math.IsNaN(v) {
								holes = true
								continue
							}
							lo, hi = math.Min(lo, v), math.Max(hi, v)
						}
					}
					if math.IsInf(lo, 1) { // all no-data
						if !math.IsNaN(float64(got)) {
							t.Fatalf("(%d,%d): %v where the block has no data", c, r, got)
						}
						continue
					}
					if holes {
						if float64(got) < lo-1e-3 || float64(got) > hi+1e-3 {
							t.Fatalf("(%d,%d): %v outside the block's range %g..%g", c, r, got, lo, hi)
						}
						continue
					}
					tol := (hi-lo)*(float64(factor)*g.DY*math.Pi/180*math.Abs(math.Tan(lat*math.Pi/180))) + 1e-5*math.Abs(hi)
					if d := math.Abs(float64(got) - float64(want)); d > tol {
						t.Fatalf("(%d,%d) lat %.2f: overview %v vs area-weighted mean %v (difference %g > %g)", c, r, lat, got, want, d, tol)
					}
					checked++
				}
			}
			if checked < ov.NX*ov.NY/2 {
				t.Fatalf("only %d cells checked", checked)
			}
		})
	}
}

// The cache never holds more than its budget, and concurrent readers get the same answers.
func TestCacheBudgetAndConcurrency(t *testing.T) {
	g := field(2048, 1024, -180+360.0/2048/2, 90-180.0/1024/2, 360.0/2048, 180.0/1024, false)
	p := writeCOG(t, g)
	budget := int64(3 * BlockSize * BlockSize * 4) // three blocks
	c := NewCache(budget)
	f, err := Open(p, "budget", gdal.ReadOptions{}, c)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close(true)
	var wg sync.WaitGroup
	errs := make(chan error, 16)
	for i := 0; i < 16; i++ {
		wg.Add(1)
		go func(i int) {
			defer wg.Done()
			lon := -170 + float64(i)*20
			b := orb.Bound{Min: orb.Point{lon, -40}, Max: orb.Point{lon + 15, 40}}
			got, err := f.Window(context.Background(), b, 0)
			if err != nil {
				errs <- err
				return
			}
			want, _ := g.Window(b)
			for k := range want.Data {
				if got.Data[k] != want.Data[k] {
					errs <- fmt.Errorf("reader %d: cell %d differs", i, k)
					return
				}
			}
			if s := c.Stats(); s.UsedBytes > budget {
				errs <- fmt.Errorf("cache holds %d bytes, budget %d", s.UsedBytes, budget)
			}
		}(i)
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Fatal(err)
	}
	if s := c.Stats(); s.UsedBytes > budget || s.Misses == 0 {
		t.Fatalf("stats %+v", s)
	}
}
