package geo

import (
	"errors"
	"fmt"
	"math"
	"testing"

	"github.com/paulmach/orb"
)

// linearGrid fills g with f(lon, lat) = a·lon + b·lat + c at each sample position.
func linearGrid(g *Grid, a, b, c float64) *Grid {
	for r := 0; r < g.NY; r++ {
		for col := 0; col < g.NX; col++ {
			g.Set(col, r, float32(a*g.Lon(col)+b*g.Lat(r)+c))
		}
	}
	return g
}

func near(a, b, tol float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Abs(a-b) <= tol
}

// Registration semantics follow OGC GeoTIFF 1.1 (OGC 19-008r4, "raster space"): PixelIsArea
// values stand for a cell whose corner is the raster origin; PixelIsPoint values sit on the
// sample point. A 1° global grid covers −180..180, −90..90 either way.
func TestGridRegistrationBounds(t *testing.T) {
	tests := []struct {
		name string
		g    *Grid
		want orb.Bound
	}{
		{"cell-centre 1° global", NewGrid(360, 180, -179.5, 89.5, 1, 1, CellCentre),
			orb.Bound{Min: orb.Point{-180, -90}, Max: orb.Point{180, 90}}},
		{"node 1° global", NewGrid(361, 181, -180, 90, 1, 1, Node),
			orb.Bound{Min: orb.Point{-180, -90}, Max: orb.Point{180, 90}}},
		{"cell-centre 0..360 regional", NewGrid(20, 10, 170.25, 10.25, 0.5, 0.5, CellCentre),
			orb.Bound{Min: orb.Point{170, 5.5}, Max: orb.Point{180, 10.5}}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := tc.g.Bounds()
			for i, pair := range [][2]float64{{got.Min.X(), tc.want.Min.X()}, {got.Min.Y(), tc.want.Min.Y()},
				{got.Max.X(), tc.want.Max.X()}, {got.Max.Y(), tc.want.Max.Y()}} {
				if !near(pair[0], pair[1], 1e-12) {
					t.Errorf("bound component %d = %v, want %v", i, pair[0], pair[1])
				}
			}
			if err := tc.g.Validate(); err != nil {
				t.Errorf("Validate: %v", err)
			}
		})
	}
}

// Bilinear interpolation reproduces a linear field exactly (a property of the method; any
// numerical-analysis text), so converted samples must equal the field at their new positions.
func TestGridRegistrationConversion(t *testing.T) {
	t.Run("cell-centre to node keeps the footprint", func(t *testing.T) {
		g := linearGrid(NewGrid(8, 6, 10.5, 5.5, 1, 1, CellCentre), 2, -3, 1)
		n, err := g.ToNode()
		if err != nil {
			t.Fatal(err)
		}
		if n.NX != 9 || n.NY != 7 || n.West != 10 || n.North != 6 || n.Registration != Node {
			t.Fatalf("node grid %d×%d west %g north %g %v", n.NX, n.NY, n.West, n.North, n.Registration)
		}
		if n.Bounds() != g.Bounds() {
			t.Errorf("footprint changed: %v vs %v", n.Bounds(), g.Bounds())
		}
		for r := 1; r < n.NY-1; r++ {
			for c := 1; c < n.NX-1; c++ {
				want := 2*n.Lon(c) - 3*n.Lat(r) + 1
				if got := float64(n.At(c, r)); !near(got, want, 1e-4) {
					t.Fatalf("node (%d,%d) = %g, want %g", c, r, got, want)
				}
			}
		}
	})
	t.Run("node to cell-centre keeps the footprint", func(t *testing.T) {
		g := linearGrid(NewGrid(9, 7, 10, 6, 1, 1, Node), 2, -3, 1)
		c, err := g.ToCellCentre()
		if err != nil {
			t.Fatal(err)
		}
		if c.NX != 8 || c.NY != 6 || c.West != 10.5 || c.North != 5.5 || c.Bounds() != g.Bounds() {
			t.Fatalf("cell grid %d×%d west %g north %g bounds %v", c.NX, c.NY, c.West, c.North, c.Bounds())
		}
		for r := 0; r < c.NY; r++ {
			for col := 0; col < c.NX; col++ {
				want := 2*c.Lon(col) - 3*c.Lat(r) + 1
				if got := float64(c.At(col, r)); !near(got, want, 1e-4) {
					t.Fatalf("cell (%d,%d) = %g, want %g", col, r, got, want)
				}
			}
		}
	})
	t.Run("global cell-centre to node wraps the seam and fills the poles", func(t *testing.T) {
		g := NewGrid(4, 2, -135, 45, 90, 90, CellCentre) // centres at ±45, ±135; edges reach both poles
		for i := range g.Data {
			g.Data[i] = float32(i) // row 0: 0 1 2 3, row 1: 4 5 6 7
		}
		n, err := g.ToNode()
		if err != nil {
			t.Fatal(err)
		}
		if n.NX != 5 || n.NY != 3 || n.West != -180 || n.North != 90 {
			t.Fatalf("node grid %d×%d west %g north %g", n.NX, n.NY, n.West, n.North)
		}
		// north pole row: mean of 0..3 = 1.5; south pole: mean of 4..7 = 5.5
		// equator node at lon −180 (seam): mean of cells 3,0,7,4 = 3.5; at −90: cells 0,1,4,5 = 2.5
		want := map[[2]int]float64{{0, 0}: 1.5, {3, 0}: 1.5, {2, 2}: 5.5, {0, 1}: 3.5, {4, 1}: 3.5, {1, 1}: 2.5}
		for k, w := range want {
			if got := float64(n.At(k[0], k[1])); !near(got, w, 1e-6) {
				t.Errorf("node (%d,%d) = %g, want %g", k[0], k[1], got, w)
			}
		}
		back, err := n.ToCellCentre()
		if err != nil {
			t.Fatal(err)
		}
		if back.NX != 4 || back.NY != 2 || back.West != -135 || back.North != 45 {
			t.Errorf("round trip shape %d×%d west %g north %g", back.NX, back.NY, back.West, back.North)
		}
	})
	t.Run("no-data cells are skipped", func(t *testing.T) {
		g := NewGrid(2, 1, 0.5, 0, 1, 1, CellCentre)
		g.Data[0] = 4 // Data[1] stays NaN
		n, err := g.ToNode()
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range []int{0, 1} {
			if n.At(c, 0) != 4 {
				t.Errorf("node %d = %g, want 4 (only valid neighbour)", c, n.At(c, 0))
			}
		}
		if !isNaN32(n.At(2, 0)) {
			t.Errorf("node 2 = %g, want NaN", n.At(2, 0))
		}
	})
}

// globalLinearLon is a global 1° cell-centre grid whose value is the longitude of the centre in
// 0..360, so samples can be checked against hand interpolation.
func globalLon360() *Grid {
	g := NewGrid(360, 180, 0.5, 89.5, 1, 1, CellCentre)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			g.Set(c, r, float32(g.Lon(c)))
		}
	}
	return g
}

// Expected values are hand bilinear interpolation between neighbouring centres (linear
// interpolation, any numerical-analysis text); longitude equivalence mod 360 is the definition
// of longitude.
func TestGridSampleLongitudeConventions(t *testing.T) {
	g360 := globalLon360()
	g180 := NewGrid(360, 180, -179.5, 89.5, 1, 1, CellCentre)
	for r := 0; r < g180.NY; r++ {
		for c := 0; c < g180.NX; c++ {
			g180.Set(c, r, float32(LonTo360(g180.Lon(c))))
		}
	}
	regional := NewGrid(61, 11, 150, 5, 1, 1, Node) // nodes 150..210, stored past 180
	for r := 0; r < regional.NY; r++ {
		for c := 0; c < regional.NX; c++ {
			regional.Set(c, r, float32(regional.Lon(c)))
		}
	}
	tests := []struct {
		name     string
		g        *Grid
		lon, lat float64
		bilinear bool
		want     float64
	}{
		{"0..360 grid at −170 (bilinear)", g360, -170, 0.5, true, 190},
		{"0..360 grid at 190 (bilinear)", g360, 190, 0.5, true, 190},
		{"0..360 grid at −170.2 (nearest)", g360, -170.2, 10, false, 189.5},
		{"−180..180 grid at 190 (bilinear)", g180, 190, 0.5, true, 190},
		{"−180..180 grid at 550 (one more turn)", g180, 550, 0.5, true, 190},
		{"regional 150..210 at −175", regional, -175, 0, true, 185},
		{"regional 150..210 at 185", regional, 185, 0, true, 185},
		{"regional 150..210 at 150 (edge)", regional, 150, 0, true, 150},
		{"regional 150..210 at −150 (east edge)", regional, -150, 0, true, 210},
		{"regional outside (100)", regional, 100, 0, true, math.NaN()},
		{"regional outside (−140)", regional, -140, 0, true, math.NaN()},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var got float32
			if tc.bilinear {
				got = tc.g.SampleBilinear(tc.lon, tc.lat)
			} else {
				got = tc.g.SampleNearest(tc.lon, tc.lat)
			}
			if !near(float64(got), tc.want, 1e-4) {
				t.Errorf("got %g, want %g", got, tc.want)
			}
		})
	}
}

func TestGridSampleAntimeridianAndPoles(t *testing.T) {
	// Global −180..180 cell-centre grid with value = cos(lon): the seam lies between the centres
	// at 179.5 (col 359) and −179.5 (col 0). Expected = linear interpolation across the seam.
	g := NewGrid(360, 180, -179.5, 89.5, 1, 1, CellCentre)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			g.Set(c, r, float32(math.Cos(g.Lon(c)*math.Pi/180)+g.Lat(r)/100))
		}
	}
	cosd := func(d float64) float64 { return math.Cos(d * math.Pi / 180) }
	seam := func(lon, lat float64) float64 { // interpolate between 179.5 and 180.5 (= −179.5)
		x := LonTo360(lon) // 179.5..180.5
		t := x - 179.5
		return (1-t)*cosd(179.5) + t*cosd(-179.5) + lat/100
	}
	tests := []struct {
		name     string
		lon, lat float64
		want     float64
	}{
		{"seam at 180", 180, 0.5, seam(180, 0.5)},
		{"seam at −180", -180, 0.5, seam(180, 0.5)},
		{"seam at 179.9", 179.9, 0.5, seam(179.9, 0.5)},
		{"seam at −179.8", -179.8, 0.5, seam(180.2, 0.5)},
		// Poles: the band between the last centre row (±89.5) and the pole is clamped to that row.
		{"north pole", 10.5, 90, cosd(10.5) + 89.5/100},
		{"north pole within rounding", 10.5, 90 + 1e-12, cosd(10.5) + 89.5/100},
		{"south pole", 10.5, -90, cosd(10.5) - 89.5/100},
		{"south pole at the seam", 180, -90, seam(180, -89.5)},
		{"beyond the pole", 10, 91, math.NaN()},
		{"NaN latitude", 10, math.NaN(), math.NaN()},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := g.SampleBilinear(tc.lon, tc.lat)
			if !near(float64(got), tc.want, 2e-6) {
				t.Errorf("SampleBilinear(%g,%g) = %.7f, want %.7f", tc.lon, tc.lat, got, tc.want)
			}
		})
	}
	t.Run("node grid with a repeated seam column", func(t *testing.T) {
		n := NewGrid(5, 3, 0, 90, 90, 90, Node) // nodes 0,90,180,270,360(=0)
		for r := 0; r < 3; r++ {
			for c := 0; c < 5; c++ {
				n.Set(c, r, float32(c%4)) // column 4 repeats column 0
			}
		}
		// between 270 (value 3) and 360 (value 0) at 315: 1.5 either way the longitude is written
		for _, lon := range []float64{315, -45, 675} {
			if got := n.SampleBilinear(lon, 0); !near(float64(got), 1.5, 1e-6) {
				t.Errorf("lon %g: got %g, want 1.5", lon, got)
			}
		}
		if got := n.SampleBilinear(-45, 90); !near(float64(got), 1.5, 1e-6) {
			t.Errorf("pole node row at −45: got %g, want 1.5", got)
		}
	})
}

// Renormalising the bilinear weights over valid neighbours is common practice (no source); the
// expected values are the hand-computed weighted means.
func TestGridSampleNoData(t *testing.T) {
	nan := float32(math.NaN())
	g := NewGrid(2, 2, 0, 1, 1, 1, Node) // nodes (0,1) (1,1) / (0,0) (1,0)
	copy(g.Data, []float32{1, 2, 3, nan})
	tests := []struct {
		name     string
		lon, lat float64
		want     float64
	}{
		{"centre, one NaN corner: mean of three", 0.5, 0.5, 2},
		{"quarter point, renormalised", 0.25, 0.75, (0.5625*1 + 0.1875*2 + 0.1875*3) / 0.9375},
		{"exactly on the NaN node", 1, 0, math.NaN()},
		{"on the edge between valid nodes", 0.5, 1, 1.5},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := g.SampleBilinear(tc.lon, tc.lat); !near(float64(got), tc.want, 1e-6) {
				t.Errorf("got %g, want %g", got, tc.want)
			}
		})
	}
	t.Run("all neighbours NaN", func(t *testing.T) {
		e := NewGrid(2, 2, 0, 1, 1, 1, Node)
		if got := e.SampleBilinear(0.5, 0.5); !isNaN32(got) {
			t.Errorf("got %g, want NaN", got)
		}
	})
	t.Run("nearest on NaN is NaN", func(t *testing.T) {
		if got := g.SampleNearest(0.9, 0.1); !isNaN32(got) {
			t.Errorf("got %g, want NaN", got)
		}
		if got := g.SampleNearest(0.1, 0.1); got != 3 {
			t.Errorf("got %g, want 3", got)
		}
	})
}

func TestGridWindow(t *testing.T) {
	g := NewGrid(360, 180, -179.5, 89.5, 1, 1, CellCentre)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			g.Set(c, r, float32(LonTo180(g.Lon(c))*1000+g.Lat(r)))
		}
	}
	g360 := globalLon360()
	node := NewGrid(11, 11, 0, 10, 1, 1, Node)
	for i := range node.Data {
		node.Data[i] = float32(i)
	}
	bound := func(w, s, e, n float64) orb.Bound {
		return orb.Bound{Min: orb.Point{w, s}, Max: orb.Point{e, n}}
	}
	tests := []struct {
		name                string
		g                   *Grid
		b                   orb.Bound
		nx, ny              int
		west, north         float64
		firstLon, firstLat  float64 // expected longitude (−180..180) / latitude stored at (0,0)
		lastLon             float64 // expected stored longitude of the last column
		valueIsLonTimes1000 bool
	}{
		{"regional box", g, bound(10, -5, 20, 5), 10, 10, 10.5, 4.5, 10.5, 4.5, 19.5, true},
		{"antimeridian, Min.X > Max.X", g, bound(170, -1, -170, 1), 20, 2, 170.5, 0.5, 170.5, 0.5, -170.5, true},
		{"antimeridian, Max.X past 180", g, bound(170, -1, 190, 1), 20, 2, 170.5, 0.5, 170.5, 0.5, -170.5, true},
		{"antimeridian, both negative shift", g, bound(-190, -1, -170, 1), 20, 2, 170.5, 0.5, 170.5, 0.5, -170.5, true},
		{"0..360 grid, window across 0°", g360, bound(-10, 0, 10, 1), 20, 1, -9.5, 0.5, 350.5, 0.5, 9.5, false},
		{"cell partly overlapped is kept", g, bound(10.2, 0.2, 10.4, 0.4), 1, 1, 10.5, 0.5, 10.5, 0.5, 10.5, true},
		{"pole to pole, 360° wide", g, bound(-180, -90, 180, 90), 360, 180, -179.5, 89.5, -179.5, 89.5, 179.5, true},
		{"polar cap", g, bound(-180, 88, 180, 90), 360, 2, -179.5, 89.5, -179.5, 89.5, 179.5, true},
		{"node grid, closed bound", node, bound(2, 3, 4, 5), 3, 3, 2, 5, 2, 5, 4, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			w, err := tc.g.Window(tc.b)
			if err != nil {
				t.Fatal(err)
			}
			if w.NX != tc.nx || w.NY != tc.ny || !near(w.West, tc.west, 1e-9) || !near(w.North, tc.north, 1e-9) {
				t.Fatalf("window %d×%d west %g north %g, want %d×%d west %g north %g",
					w.NX, w.NY, w.West, w.North, tc.nx, tc.ny, tc.west, tc.north)
			}
			if err := w.Validate(); err != nil {
				t.Fatal(err)
			}
			// every window sample equals the parent sampled at the same position
			for r := 0; r < w.NY; r++ {
				for c := 0; c < w.NX; c++ {
					want := tc.g.SampleNearest(w.Lon(c), w.Lat(r))
					if got := w.At(c, r); got != want {
						t.Fatalf("(%d,%d) = %g, parent has %g", c, r, got, want)
					}
				}
			}
			if tc.valueIsLonTimes1000 {
				if got := float64(w.At(0, 0)); !near(got, tc.firstLon*1000+tc.firstLat, 1e-2) {
					t.Errorf("first value %g, want %g", got, tc.firstLon*1000+tc.firstLat)
				}
				if got := float64(w.At(w.NX-1, 0)); !near(got, tc.lastLon*1000+tc.firstLat, 1e-2) {
					t.Errorf("last value %g, want lon %g", got, tc.lastLon)
				}
			}
		})
	}
	t.Run("empty window", func(t *testing.T) {
		r := NewGrid(10, 10, 0.5, 9.5, 1, 1, CellCentre)
		if _, err := r.Window(bound(20, 0, 30, 5)); !errors.Is(err, ErrEmptyWindow) {
			t.Errorf("err = %v, want ErrEmptyWindow", err)
		}
		if _, err := r.Window(bound(0, 5, 5, 0)); err == nil {
			t.Error("south above north accepted")
		}
	})
}

func TestGridResample(t *testing.T) {
	nan := float32(math.NaN())
	t.Run("cell-centre block mean ignoring NaN at the equator", func(t *testing.T) {
		// Rows at ±0.5°: area weights differ by nothing (symmetric), so a plain mean is expected.
		g := NewGrid(4, 2, 0.5, 0.5, 1, 1, CellCentre)
		copy(g.Data, []float32{1, 2, 10, nan, 3, 4, nan, nan})
		r, err := g.Resample(2, 2)
		if err != nil {
			t.Fatal(err)
		}
		if r.NX != 2 || r.NY != 1 || r.West != 1 || r.North != 0 || r.DX != 2 {
			t.Fatalf("shape %d×%d west %g north %g dx %g", r.NX, r.NY, r.West, r.North, r.DX)
		}
		if r.At(0, 0) != 2.5 || r.At(1, 0) != 10 {
			t.Errorf("values %v, want [2.5 10]", r.Data)
		}
		if r.Bounds() != g.Bounds() {
			t.Errorf("footprint %v, want %v", r.Bounds(), g.Bounds())
		}
	})
	t.Run("rows weighted by spherical cell area", func(t *testing.T) {
		// cells 60..70 and 70..80 N: weights sin70−sin60 and sin80−sin70 (spherical zone area,
		// Snyder 1987 with e = 0).
		g := NewGrid(1, 2, 0.5, 75, 1, 10, CellCentre)
		copy(g.Data, []float32{1, 0})
		r, err := g.Resample(1, 20)
		if err != nil {
			t.Fatal(err)
		}
		s := func(d float64) float64 { return math.Sin(d * math.Pi / 180) }
		want := (s(80) - s(70)) / (s(80) - s(60))
		if !near(float64(r.At(0, 0)), want, 1e-6) {
			t.Errorf("got %g, want %g", r.At(0, 0), want)
		}
	})
	t.Run("all NaN block stays NaN; partial block dropped", func(t *testing.T) {
		g := NewGrid(5, 2, 0.5, 0.5, 1, 1, CellCentre)
		copy(g.Data, []float32{nan, nan, 1, 1, 7, nan, nan, 1, 1, 7})
		r, err := g.Resample(2, 2)
		if err != nil {
			t.Fatal(err)
		}
		if r.NX != 2 || !isNaN32(r.At(0, 0)) || r.At(1, 0) != 1 {
			t.Errorf("got %d cols %v", r.NX, r.Data)
		}
	})
	t.Run("global node grid wraps the block across the seam", func(t *testing.T) {
		g := NewGrid(5, 1, 0, 0, 90, 1, Node) // 0,90,180,270,360 at the equator
		copy(g.Data, []float32{0, 4, 8, 12, 0})
		r, err := g.Resample(180, 1)
		if err != nil {
			t.Fatal(err)
		}
		// output nodes at 0 and 180 and 360; node 0 averages 270(½),0,90(½): (6+0+2)/2 = 4
		if r.NX != 3 || !near(float64(r.At(0, 0)), 4, 1e-6) || !near(float64(r.At(1, 0)), 8, 1e-6) || r.At(2, 0) != r.At(0, 0) {
			t.Errorf("got %d nodes %v", r.NX, r.Data)
		}
	})
	t.Run("cell-centre blocks equal the weighted sums term by term", func(t *testing.T) {
		// Σ w·v / Σ w over each 3×4 block with w the row's zone area (as above), summed row by
		// row and cell by cell in reading order: the same float64 operations as the definition,
		// so the same float32 answer, bit for bit, with NaN cells and a dropped partial block.
		g := NewGrid(11, 13, -179.5, 80.5, 1, 1, CellCentre)
		for i := range g.Data {
			g.Data[i] = float32(math.Sin(float64(i)*0.37) * 1000)
			if i%7 == 3 {
				g.Data[i] = nan
			}
		}
		r, err := g.Resample(3, 4)
		if err != nil {
			t.Fatal(err)
		}
		if r.NX != 3 || r.NY != 3 {
			t.Fatalf("shape %d×%d, want 3×3", r.NX, r.NY)
		}
		for R := range r.NY {
			for C := range r.NX {
				var sv, sw float64
				for k := range 4 {
					row := R*4 + k
					lat := g.Lat(row)
					w := math.Sin(math.Min(90, lat+0.5)*math.Pi/180) - math.Sin(math.Max(-90, lat-0.5)*math.Pi/180)
					for j := range 3 {
						if v := g.At(C*3+j, row); !isNaN32(v) {
							sv += w * float64(v)
							sw += w
						}
					}
				}
				want := float32(math.NaN())
				if sw > 0 {
					want = float32(sv / sw)
				}
				if got := r.At(C, R); math.Float32bits(got) != math.Float32bits(want) && !(isNaN32(got) && isNaN32(want)) {
					t.Errorf("block (%d, %d): %v, want %v", C, R, got, want)
				}
			}
		}
	})
	t.Run("spacing must be a whole multiple", func(t *testing.T) {
		g := NewGrid(4, 4, 0.5, 3.5, 1, 1, CellCentre)
		if _, err := g.Resample(1.5, 2); err == nil {
			t.Error("1.5× accepted")
		}
		if _, err := g.Resample(8, 8); err == nil {
			t.Error("block larger than the grid accepted")
		}
	})
}

func TestGridAreaWeights(t *testing.T) {
	t.Run("cos latitude", func(t *testing.T) {
		g := NewGrid(1, 3, 0, 60, 1, 60, Node)
		for i, want := range []float64{0.5, 1, 0.5} { // cos 60° = ½ exactly
			if got := g.AreaWeight(i); !near(got, want, 1e-12) {
				t.Errorf("row %d: %g, want %g", i, got, want)
			}
		}
	})
	t.Run("global sum equals the WGS84 ellipsoid area", func(t *testing.T) {
		// 510065621724088.5 m²: total area of the WGS84 ellipsoid as given in GeographicLib's
		// documentation (Karney), from memory; tolerance 1 part in 10⁹.
		for _, g := range []*Grid{
			NewGrid(360, 180, -179.5, 89.5, 1, 1, CellCentre),
			NewGrid(360, 181, -180, 90, 1, 1, Node), // polar node rows get half cells
		} {
			var sum float64
			for r := 0; r < g.NY; r++ {
				sum += g.CellAreaM2(r) * float64(g.NX)
			}
			if math.Abs(sum/510065621724088.5-1) > 1e-9 {
				t.Errorf("%v: sum %.1f m²", g.Registration, sum)
			}
		}
	})
	t.Run("1° cell at the equator", func(t *testing.T) {
		// ≈ 111.319 km (1° of longitude at the equator, a·π/180) × 110.574 km (1° of latitude at
		// the equator on WGS84; from memory) = 12309 km²; tolerance 0.1%.
		g := NewGrid(1, 1, 0.5, 0, 1, 1, CellCentre)
		if got := g.CellAreaM2(0) / 1e6; math.Abs(got/(111.319*110.574)-1) > 1e-3 {
			t.Errorf("got %g km²", got)
		}
	})
}

func TestGridVerticalSense(t *testing.T) {
	mk := func(v ...float32) *Grid {
		g := NewGrid(len(v), 1, 0, 0, 1, 1, Node)
		copy(g.Data, v)
		return g
	}
	nan := float32(math.NaN())
	// Thresholds are common practice, no source: ocean grids stored as elevation are mostly negative.
	tests := []struct {
		name string
		g    *Grid
		want VerticalSense
	}{
		{"ocean as elevation", mk(-4000, -3500, -5000, 200, nan), ElevationPositiveUp},
		{"ocean as depth", mk(4000, 3500, 5000, -200, nan), DepthPositiveDown},
		{"coastal mix", mk(-100, 100, -50, 50), SenseUnknown},
		{"no data", mk(nan, 0), SenseUnknown},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got, _ := DetectVerticalSense(tc.g); got != tc.want {
				t.Errorf("got %v, want %v", got, tc.want)
			}
		})
	}
	t.Run("convert to depth", func(t *testing.T) {
		e := mk(-4000, 100, nan)
		d, err := e.ToDepthM(ElevationPositiveUp)
		if err != nil {
			t.Fatal(err)
		}
		if d.Data[0] != 4000 || d.Data[1] != -100 || !isNaN32(d.Data[2]) || e.Data[0] != -4000 {
			t.Errorf("got %v (input %v)", d.Data, e.Data)
		}
		if _, err := e.ToDepthM(SenseUnknown); err == nil {
			t.Error("unknown sense accepted")
		}
		if ToDepthM(-3000, ElevationPositiveUp) != 3000 || ToDepthM(3000, DepthPositiveDown) != 3000 {
			t.Error("scalar conversion")
		}
	})
	t.Run("parse", func(t *testing.T) {
		for in, want := range map[string]VerticalSense{"depth": DepthPositiveDown, "Elevation": ElevationPositiveUp, "": SenseUnknown} {
			if got, err := ParseVerticalSense(in); err != nil || got != want {
				t.Errorf("%q: %v %v", in, got, err)
			}
		}
		if _, err := ParseVerticalSense("sideways"); err == nil {
			t.Error("nonsense accepted")
		}
	})
}

func ExampleGrid_SampleBilinear() {
	// A 1° global grid stored 0..360 whose value is the longitude of each cell centre.
	g := NewGrid(360, 180, 0.5, 89.5, 1, 1, CellCentre)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			g.Set(c, r, float32(g.Lon(c)))
		}
	}
	fmt.Println(g.SampleBilinear(-170, 0.5), g.SampleBilinear(190, 0.5), g.SampleBilinear(0, 90))
	// Output: 190 190 180
}

func ExampleGrid_ToNode() {
	g := NewGrid(2, 1, 0.5, 0, 1, 1, CellCentre)
	copy(g.Data, []float32{1, 3})
	n, _ := g.ToNode()
	fmt.Println(n.Registration, n.NX, n.NY, n.West, n.North, n.Data[:3], g.Bounds() == n.Bounds())
	// Output: node 3 2 0 0.5 [1 2 3] true
}

func BenchmarkGridSampleBilinear(b *testing.B) {
	g := NewGrid(3600, 1800, -179.95, 89.95, 0.1, 0.1, CellCentre)
	for i := range g.Data {
		g.Data[i] = float32(i % 1000)
	}
	b.ReportAllocs()
	var s float32
	i := 0
	for b.Loop() {
		lon := float64(i%3600)*0.1 - 180 + 0.037
		lat := float64(i%1700)*0.1 - 85 + 0.013
		s += g.SampleBilinear(lon, lat)
		i++
	}
	_ = s
}
