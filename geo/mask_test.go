package geo

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/planar"
)

func newTestRand(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 0x5eed)) }

// starRing returns a closed, counter-clockwise, simple ring of n vertices around (cx, cy): vertex
// i at angle 2π(i + jitter·u)/n (u uniform in [0,1), so angles increase) and a radius uniform in
// [rmin, rmax] degrees. Star-shaped about its centre, hence simple.
func starRing(rng *rand.Rand, n int, cx, cy, rmin, rmax, jitter float64) orb.Ring {
	r := make(orb.Ring, 0, n+1)
	for i := 0; i < n; i++ {
		th := 2 * math.Pi * (float64(i) + jitter*rng.Float64()) / float64(n)
		rad := rmin + (rmax-rmin)*rng.Float64()
		r = append(r, orb.Point{cx + rad*math.Cos(th), cy + rad*math.Sin(th)})
	}
	return append(r, r[0])
}

// walkRing is like starRing but the radius follows a bounded random walk, giving a smoother,
// coastline-like boundary.
func walkRing(rng *rand.Rand, n int, cx, cy, rmin, rmax, step float64) orb.Ring {
	r := make(orb.Ring, 0, n+1)
	rad := (rmin + rmax) / 2
	for i := 0; i < n; i++ {
		th := 2 * math.Pi * float64(i) / float64(n)
		rad = math.Min(rmax, math.Max(rmin, rad+step*(2*rng.Float64()-1)))
		r = append(r, orb.Point{cx + rad*math.Cos(th), cy + rad*math.Sin(th)})
	}
	return append(r, r[0])
}

func TestMaskBitOperations(t *testing.T) {
	rng := newTestRand(3)
	for trial := 0; trial < 200; trial++ {
		n := 1 + rng.IntN(700)
		m := NewMask(n)
		want := make([]bool, n)
		for k := 0; k < 5; k++ {
			lo := rng.IntN(n + 1)
			hi := lo + rng.IntN(n-lo+1)
			m.setRange(lo, hi)
			for i := lo; i < hi; i++ {
				want[i] = true
			}
		}
		count := 0
		for i, w := range want {
			if m.Get(i) != w {
				t.Fatalf("trial %d: bit %d = %v, want %v", trial, i, m.Get(i), w)
			}
			if w {
				count++
			}
		}
		if m.Count() != count {
			t.Fatalf("trial %d: Count %d, want %d", trial, m.Count(), count)
		}
		back := MaskFromBools(want)
		if back.Count() != count || back.Len() != n {
			t.Fatalf("trial %d: MaskFromBools holds %d of %d cells, want %d of %d", trial, back.Count(), back.Len(), count, n)
		}
		for i := range want {
			if back.Get(i) != m.Get(i) {
				t.Fatalf("trial %d: bit %d from []bool = %v, set by ranges = %v", trial, i, back.Get(i), m.Get(i))
			}
		}
		// FillOutside writes exactly the cells outside, whole words or not
		data := make([]float32, n)
		for i := range data {
			data[i] = float32(i)
		}
		m.FillOutside(data, -1)
		for i, w := range want {
			if wantV := map[bool]float32{true: float32(i), false: -1}[w]; data[i] != wantV {
				t.Fatalf("trial %d: FillOutside left cell %d (inside %v) = %g, want %g", trial, i, w, data[i], wantV)
			}
		}
	}
}

// bruteMask is the reference: orb/planar's point-in-polygon test on every sample position, with
// the cell longitude moved into [frameWest, frameWest+360).
func bruteMask(g *Grid, mp orb.MultiPolygon, frameWest float64) []bool {
	out := make([]bool, g.NX*g.NY)
	for row := 0; row < g.NY; row++ {
		for col := 0; col < g.NX; col++ {
			lon := g.Lon(col)
			lon -= 360 * math.Floor((lon-frameWest)/360)
			out[row*g.NX+col] = planar.MultiPolygonContains(mp, orb.Point{lon, g.Lat(row)})
		}
	}
	return out
}

func compareMasks(t *testing.T, got Mask, want []bool) {
	t.Helper()
	if got.Len() != len(want) {
		t.Fatalf("mask length %d, want %d", got.Len(), len(want))
	}
	bad, in := 0, 0
	for i, w := range want {
		if got.Get(i) != w {
			bad++
		}
		if w {
			in++
		}
	}
	if bad > 0 {
		t.Errorf("%d of %d cells differ from the brute-force point-in-polygon mask (%d inside)", bad, len(want), in)
	}
	if in == 0 {
		t.Errorf("test polygon covers no cell; the comparison proves nothing")
	}
}

func TestGridMaskRandomPolygonsAgainstBruteForce(t *testing.T) {
	rng := newTestRand(11)
	for trial := 0; trial < 25; trial++ {
		nx, ny := 40+rng.IntN(160), 40+rng.IntN(120)
		dx, dy := 0.1+rng.Float64(), 0.1+rng.Float64()*0.6
		west := -170 + rng.Float64()*200
		north := 85 - rng.Float64()*30
		reg := CellCentre
		if trial%2 == 1 {
			reg = Node
		}
		g := &Grid{NX: nx, NY: ny, West: west, North: north, DX: dx, DY: dy, Registration: reg}
		cx := west + float64(nx)*dx/2
		cy := north - float64(ny)*dy/2
		size := math.Min(float64(nx)*dx, float64(ny)*dy) / 2
		ext := starRing(rng, 5+rng.IntN(300), cx, cy, 0.4*size, 1.1*size, 0.9)
		hole := starRing(rng, 3+rng.IntN(50), cx, cy, 0.05*size, 0.35*size, 0.9)
		reverseRing(hole)
		other := starRing(rng, 8, cx+1.5*size, cy-0.8*size, 0.1*size, 0.3*size, 0.5)
		mp := orb.MultiPolygon{{ext, hole}, {other}}
		t.Run(fmt.Sprintf("trial%02d_%s_%dx%d", trial, reg, nx, ny), func(t *testing.T) {
			m, err := GridMask(g, mp)
			if err != nil {
				t.Fatal(err)
			}
			compareMasks(t, m, bruteMask(g, mp, -180))
		})
	}
}

func TestGridMaskAntimeridianAndPoles(t *testing.T) {
	rng := newTestRand(5)
	// A region centred on the antimeridian, written with longitudes 150..210 (unwrapped).
	orig := orb.MultiPolygon{{starRing(rng, 150, 180, -30, 8, 25, 0.9), reversed(starRing(rng, 40, 180, -30, 1, 5, 0.9))}}
	norm, err := NormalizeRegion(orig, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(norm) < 2 {
		t.Fatalf("expected the region to be split, got %d polygon(s)", len(norm))
	}
	grids := []struct {
		name string
		g    *Grid
	}{
		{"global -180..180 cell-centre 0.8deg", &Grid{NX: 450, NY: 225, West: -179.6, North: 89.6, DX: 0.8, DY: 0.8, Registration: CellCentre}},
		{"global 0..360 node 1deg with repeated column", &Grid{NX: 361, NY: 181, West: 0, North: 90, DX: 1, DY: 1, Registration: Node}},
		{"window 160..200 east of the seam", &Grid{NX: 160, NY: 120, West: 160.125, North: 0, DX: 0.25, DY: 0.5, Registration: CellCentre}},
		{"window -200..-160", &Grid{NX: 80, NY: 100, West: -200, North: -5, DX: 0.5, DY: 0.5, Registration: Node}},
	}
	for _, c := range grids {
		t.Run(c.name, func(t *testing.T) {
			m, err := GridMask(c.g, norm)
			if err != nil {
				t.Fatal(err)
			}
			// brute force against the ORIGINAL unsplit polygon, in its own 0..360 frame
			compareMasks(t, m, bruteMask(c.g, orig, 0))
		})
	}

	t.Run("north polar cap on a node grid reaching the pole", func(t *testing.T) {
		// cap poleward of a wavy boundary between 63.93° and 76.13°N, given as one ring round the pole
		var ring orb.Ring
		for i := 0; i < 360; i += 5 {
			lon := float64(i) - 180
			ring = append(ring, orb.Point{lon, 70.03 + 6.1*math.Sin(3*lon*math.Pi/180)}) // off the 1° lattice
		}
		ring = append(ring, ring[0])
		capMP, err := NormalizeRegion(orb.MultiPolygon{{ring}}, 0)
		if err != nil {
			t.Fatal(err)
		}
		g := &Grid{NX: 361, NY: 181, West: -180, North: 90, DX: 1, DY: 1, Registration: Node}
		m, err := GridMask(g, capMP)
		if err != nil {
			t.Fatal(err)
		}
		for col := 0; col < g.NX; col++ {
			if !m.Get(col) {
				t.Fatalf("pole node (col %d) not in the cap", col)
			}
		}
		for row := 0; row < g.NY; row++ {
			lat := g.Lat(row)
			for col := 0; col < g.NX; col++ {
				in := m.Get(row*g.NX + col)
				if lat > 76 && !in || lat < 64 && in {
					t.Fatalf("cell (%g, %g): in=%v", g.Lon(col), lat, in)
				}
			}
		}
		// Independent reference: the boundary is a single-valued function of longitude, so a
		// cell is inside iff its latitude exceeds the boundary's linear interpolation there.
		want := make([]bool, g.NX*g.NY)
		for row := 0; row < g.NY; row++ {
			for col := 0; col < g.NX; col++ {
				lon := LonTo180(g.Lon(col))
				k := int(math.Floor((lon + 180) / 5))
				a, b := ring[k], ring[k+1]
				f := (lon - a[0]) / 5
				want[row*g.NX+col] = row == 0 || g.Lat(row) > a[1]+f*(b[1]-a[1])
			}
		}
		compareMasks(t, m, want)
	})
}

func TestGridMaskRandomAntimeridianRegions(t *testing.T) {
	// Random regions straddling the antimeridian, written unwrapped (longitudes past 180), with a
	// hole; after NormalizeRegion the mask must equal brute force on the unsplit original and
	// the area must be unchanged (the area integral does not depend on a 360° shift).
	g := &Grid{NX: 220, NY: 180, West: 125.25, North: 89.5, DX: 0.5, DY: 1, Registration: CellCentre}
	for seed := uint64(1); seed <= 8; seed++ {
		t.Run(fmt.Sprintf("seed%d", seed), func(t *testing.T) {
			rng := newTestRand(100 + seed)
			cx := 170 + 20*rng.Float64()
			cy := -40 + 80*rng.Float64()
			ext := starRing(rng, 50+rng.IntN(200), cx, cy, 12, 40, 0.9)
			for i := range ext {
				ext[i][1] = math.Max(-89, math.Min(89, ext[i][1]))
			}
			hole := reversed(starRing(rng, 30, cx, cy, 2, 10, 0.9))
			orig := orb.MultiPolygon{{ext, hole}}
			norm, err := NormalizeRegion(orig, 0)
			if err != nil {
				t.Fatal(err)
			}
			m, err := GridMask(g, norm)
			if err != nil {
				t.Fatal(err)
			}
			compareMasks(t, m, bruteMask(g, orig, 0))
			a0, a1 := SphericalAreaKm2Radius(orig, 6371), SphericalAreaKm2Radius(norm, 6371)
			if math.Abs(a0-a1) > 1e-9*a0 {
				t.Errorf("area changed by normalisation: %.6f → %.6f km²", a0, a1)
			}
		})
	}
}

func TestGridMaskAreaMatchesRegionArea(t *testing.T) {
	// Σ cell areas of the masked cells of a fine grid approaches the region's area.
	// Cell areas on the sphere: R²·Δλ·(sinφn − sinφs) (spherical zone formula).
	mp, err := ParseRegion([]byte(`{"type":"Polygon","coordinates":[[[160,-40],[205,-35],[190,-5],[170,-15],[160,-40]],
	  [[175,-30],[180,-30],[185,-20],[175,-30]]]}`), 0)
	if err != nil {
		t.Fatal(err)
	}
	g := &Grid{NX: 3600, NY: 1800, West: -179.95, North: 89.95, DX: 0.1, DY: 0.1, Registration: CellCentre}
	m, err := GridMask(g, mp)
	if err != nil {
		t.Fatal(err)
	}
	const r = 6371.0
	sum := 0.0
	for row := 0; row < g.NY; row++ {
		lat := g.Lat(row)
		cell := boxAreaKm2(r, 0, g.DX, lat-g.DY/2, lat+g.DY/2)
		for col := 0; col < g.NX; col++ {
			if m.Get(row*g.NX + col) {
				sum += cell
			}
		}
	}
	want := SphericalAreaKm2Radius(mp, r)
	if math.Abs(sum-want) > 0.005*want {
		t.Errorf("masked area %.0f km², region area %.0f km² (tolerance 0.5 %%, discretisation)", sum, want)
	}
}

func TestGridMaskRejectsBadGrid(t *testing.T) {
	if _, err := GridMask(&Grid{NX: 0, NY: 3, DX: 1, DY: 1}, nil); err == nil {
		t.Fatal("no error for an empty grid")
	}
	if _, err := GridMask(nil, nil); err == nil {
		t.Fatal("no error for a nil grid")
	}
}

// BenchmarkMask10kVertices10MCells masks a 10,000-vertex polygon over a 4472×2236 (≈10⁷ cells)
// global grid. "smooth" has a coastline-like random-walk boundary; "spiky" has a random radius at
// every vertex, so each row crosses thousands of edges (a worst case).
func BenchmarkMask10kVertices10MCells(b *testing.B) {
	const nx, ny = 4472, 2236
	dx, dy := 360.0/nx, 180.0/ny
	g := &Grid{NX: nx, NY: ny, West: -180 + dx/2, North: 90 - dy/2, DX: dx, DY: dy, Registration: CellCentre}
	for _, c := range []struct {
		name string
		ring orb.Ring
	}{
		{"smooth", walkRing(newTestRand(1), 10000, 10, 0, 30, 80, 0.5)},
		{"spiky", starRing(newTestRand(2), 10000, 10, 0, 20, 80, 0.9)},
	} {
		mp, err := NormalizeRegion(orb.MultiPolygon{{c.ring}}, 0)
		if err != nil {
			b.Fatal(err)
		}
		b.Run(c.name, func(b *testing.B) {
			b.ReportAllocs()
			var m Mask
			for b.Loop() {
				m, err = GridMask(g, mp)
				if err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(nx*ny)*float64(b.N)/b.Elapsed().Seconds()/1e6, "Mcells/s")
			if m.Count() == 0 {
				b.Fatal("empty mask")
			}
		})
	}
}
