package demobasin

import (
	"context"
	"fmt"
	"math"
	"testing"

	"ridgeflank/geo"
)

// residual evaluates residual depth over the basin, with or without the sediment correction.
func residual(t *testing.T, b *Basin, withSediment bool) *geo.Grid {
	t.Helper()
	in := geo.Inputs{Age: b.Age, Depth: b.Elevation, DepthSense: ElevationSense, Model: Model()}
	if withSediment {
		in.Sediment = b.Sediment
		in.Compaction = Compaction()
	}
	res, err := geo.Evaluate(context.Background(), in, geo.OutResidualDepth)
	if err != nil {
		t.Fatal(err)
	}
	return res.ResidualDepthM
}

// awayFromFeatures reports whether a cell is clear of the seamounts (4 radii) and fracture-zone
// troughs (4 widths), where the residual holds only the swell and noise.
func awayFromFeatures(lon, lat float64) bool {
	for _, s := range Seamounts() {
		if DistanceKm(lon, lat, s.Lon, s.Lat) < 4*s.RadiusKm {
			return false
		}
	}
	for _, tl := range TransformLats() {
		if math.Abs(lat-tl)*math.Pi/180*EarthRadiusKm < 4*FractureZoneWidthKm {
			return false
		}
	}
	return true
}

var defaultBasin *Basin

// clearMask marks the cells of g's lattice that are awayFromFeatures.
func clearMask(g *geo.Grid) []bool {
	m := make([]bool, g.NX*g.NY)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			m[r*g.NX+c] = awayFromFeatures(g.Lon(c), g.Lat(r))
		}
	}
	return m
}

func basin(t *testing.T) *Basin {
	t.Helper()
	if defaultBasin == nil {
		b, err := Generate(Options{})
		if err != nil {
			t.Fatal(err)
		}
		defaultBasin = b
	}
	return defaultBasin
}

func TestGenerateLattice(t *testing.T) {
	b := basin(t)
	for name, g := range map[string]*geo.Grid{"age": b.Age, "elevation": b.Elevation, "sediment": b.Sediment} {
		t.Run(name, func(t *testing.T) {
			if g.NX != 600 || g.NY != 500 || g.Registration != geo.CellCentre {
				t.Fatalf("%d×%d %v, want 600×500 cell-centre", g.NX, g.NY, g.Registration)
			}
			bd := g.Bounds()
			if math.Abs(bd.Min[0]-WestLon) > 1e-9 || math.Abs(bd.Max[0]-EastLon) > 1e-9 ||
				math.Abs(bd.Min[1]-SouthLat) > 1e-9 || math.Abs(bd.Max[1]-NorthLat) > 1e-9 {
				t.Fatalf("bounds %v, want %g..%g, %g..%g", bd, WestLon, EastLon, SouthLat, NorthLat)
			}
			for i, v := range g.Data {
				if math.IsNaN(float64(v)) {
					t.Fatalf("cell %d has no data", i)
				}
			}
		})
	}
	t.Run("elevation is negative down", func(t *testing.T) {
		if s, frac := geo.DetectVerticalSense(b.Elevation); s != geo.ElevationPositiveUp || frac != 1 {
			t.Fatalf("sense %v with %g negative, want elevation, all negative", s, frac)
		}
	})
}

func TestAge(t *testing.T) {
	// Worked by hand: at (−140, −30) the ridge segment is at −136.5 (west flank, 25 km/Myr);
	// the distance to its meridian is R·asin(cos 30°·sin 3.5°) = 6371·asin(0.866025·0.061049)
	// = 6371 × 0.052895 = 336.99 km, so the age is 13.48 Ma.
	cases := []struct {
		name     string
		lon, lat float64
		want     float64
		tol      float64
	}{
		{"west flank", -140, -30, 13.48, 0.01},
		{"on the ridge", -136.5, -30, 0, 1e-9},
		// east flank, 35 km/Myr: 6371·asin(cos 30°·sin 6.5°)/35 = 6371·asin(0.866025·0.113203)/35
		// = 6371 × 0.098195 / 35 = 17.87 Ma
		{"east flank", -130, -30, 17.87, 0.01},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if got := AgeMa(tc.lon, tc.lat); math.Abs(got-tc.want) > tc.tol {
				t.Fatalf("age %g Ma, want %g ± %g", got, tc.want, tc.tol)
			}
		})
	}
	t.Run("fracture-zone age step", func(t *testing.T) {
		// Across the transform at −26° the ridge jumps from −134 (north) to −136.5 (south):
		// at −145 the age steps by the extra 2.5° of distance over 25 km/Myr. By hand, at
		// −25.99°: asin(cos 25.99°·sin 11°) = asin(0.898870·0.190809) = 0.172364 rad; at
		// −26.01°: asin(cos 26.01°·sin 8.5°) = asin(0.898718·0.147809) = 0.133231 rad; the
		// difference 0.039133 rad × 6371 km = 249.3 km over 25 km/Myr is 9.97 Ma.
		north, south := AgeMa(-145, -25.99), AgeMa(-145, -26.01)
		if step := north - south; math.Abs(step-9.97) > 0.02 {
			t.Fatalf("age step %g Ma (north %g, south %g), want 9.97 ± 0.02", step, north, south)
		}
	})
}

func TestDeterminism(t *testing.T) {
	a := basin(t)
	b, err := Generate(Options{Seed: DefaultSeed})
	if err != nil {
		t.Fatal(err)
	}
	if a.Hash() != b.Hash() {
		t.Fatal("same seed gave different grids")
	}
	c, err := Generate(Options{Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	if a.Hash() == c.Hash() {
		t.Fatal("different seeds gave the same grids")
	}
	// Only the noise depends on the seed.
	if a.Age.Data[1234] != c.Age.Data[1234] || a.Sediment.Data[1234] != c.Sediment.Data[1234] {
		t.Fatal("age or sediment depend on the seed")
	}
}

// TestSwellRecovery: residual depth recovers the injected swell. Tolerances (common practice,
// no source): amplitude within 15% of SwellAmplitudeM, centre within 0.5°, after masking the
// seamounts and fracture zones and smoothing with a 5×5-cell (0.25°) box mean, which lowers the
// 300 km swell's peak by under 0.1% and the 20 m noise to about 4 m.
func TestSwellRecovery(t *testing.T) {
	b := basin(t)
	res := residual(t, b, true)
	nx, ny := res.NX, res.NY
	clear := clearMask(res)
	var best float64 = math.Inf(-1)
	var bestLon, bestLat float64
	for r := 2; r < ny-2; r++ {
		for c := 2; c < nx-2; c++ {
			var sum float64
			var n int
			for dr := -2; dr <= 2; dr++ {
				for dc := -2; dc <= 2; dc++ {
					if !clear[(r+dr)*nx+c+dc] {
						continue
					}
					if v := res.At(c+dc, r+dr); !math.IsNaN(float64(v)) {
						sum += float64(v)
						n++
					}
				}
			}
			if n < 20 {
				continue
			}
			if m := sum / float64(n); m > best {
				best, bestLon, bestLat = m, res.Lon(c), res.Lat(r)
			}
		}
	}
	t.Logf("peak residual %.1f m at %.3f, %.3f (injected %g m at %g, %g)", best, bestLon, bestLat, SwellAmplitudeM, SwellCentreLon, SwellCentreLat)
	if math.Abs(best-SwellAmplitudeM) > 0.15*SwellAmplitudeM {
		t.Errorf("peak residual %.1f m, want %g ± 15%%", best, SwellAmplitudeM)
	}
	if math.Abs(bestLon-SwellCentreLon) > 0.5 || math.Abs(bestLat-SwellCentreLat) > 0.5 {
		t.Errorf("peak at %.3f, %.3f, want within 0.5° of %g, %g", bestLon, bestLat, SwellCentreLon, SwellCentreLat)
	}
	// Far from every injected feature the residual is noise around zero: mean within 5 m,
	// standard deviation within 20% of the injected noise (common practice, no source).
	var sum, sum2 float64
	var n int
	for r := 0; r < ny; r++ {
		for c := 0; c < nx; c++ {
			lon, lat := res.Lon(c), res.Lat(r)
			if !clear[r*nx+c] || DistanceKm(lon, lat, SwellCentreLon, SwellCentreLat) < 3*SwellRadiusKm {
				continue
			}
			v := float64(res.At(c, r))
			sum += v
			sum2 += v * v
			n++
		}
	}
	mean := sum / float64(n)
	std := math.Sqrt(sum2/float64(n) - mean*mean)
	t.Logf("background residual over %d cells: mean %.2f m, std %.2f m", n, mean, std)
	if math.Abs(mean) > 5 || math.Abs(std-DefaultNoiseStdM) > 0.2*DefaultNoiseStdM {
		t.Errorf("background residual mean %.2f m, std %.2f m; want 0 ± 5 and %g ± 20%%", mean, std, DefaultNoiseStdM)
	}
}

func TestSeamountRecovery(t *testing.T) {
	// The residual's maximum within 0.1° of each seamount is its height within 10%: a cell
	// centre may sit up to 0.025° (2.8 km) from the summit, lowering a 13 km-radius cone by
	// up to 4%, plus noise (tolerance common practice, no source).
	b := basin(t)
	res := residual(t, b, true)
	for _, s := range Seamounts() {
		t.Run(s.Name, func(t *testing.T) {
			best := math.Inf(-1)
			for r := 0; r < res.NY; r++ {
				for c := 0; c < res.NX; c++ {
					if math.Abs(res.Lon(c)-s.Lon) <= 0.1 && math.Abs(res.Lat(r)-s.Lat) <= 0.1 {
						best = math.Max(best, float64(res.At(c, r)))
					}
				}
			}
			if math.Abs(best-s.HeightM) > 0.1*s.HeightM {
				t.Fatalf("peak residual %.0f m, want %g ± 10%%", best, s.HeightM)
			}
		})
	}
}

// TestSedimentSignalRemoved: before the sediment correction the residual follows the sediment
// (loading raises the seafloor, so the correlation is POSITIVE under the convention positive =
// shallower; want r > 0.8); after it the correlation is near zero (|r| < 0.05). Cells near the
// swell (3 radii), seamounts and fracture zones are left out, so the residual holds the
// sediment effect and noise only (thresholds common practice, no source).
func TestSedimentSignalRemoved(t *testing.T) {
	b := basin(t)
	before := residual(t, b, false)
	after := residual(t, b, true)
	corr := func(g *geo.Grid) float64 {
		var sx, sy, sxx, syy, sxy, n float64
		for r := 0; r < g.NY; r++ {
			for c := 0; c < g.NX; c++ {
				lon, lat := g.Lon(c), g.Lat(r)
				if !awayFromFeatures(lon, lat) || DistanceKm(lon, lat, SwellCentreLon, SwellCentreLat) < 3*SwellRadiusKm {
					continue
				}
				x, y := float64(b.Sediment.At(c, r)), float64(g.At(c, r))
				sx += x
				sy += y
				sxx += x * x
				syy += y * y
				sxy += x * y
				n++
			}
		}
		cov := sxy/n - sx/n*sy/n
		return cov / math.Sqrt((sxx/n-sx/n*sx/n)*(syy/n-sy/n*sy/n))
	}
	rb, ra := corr(before), corr(after)
	t.Logf("correlation of sediment thickness with residual: before correction %.3f, after %.3f", rb, ra)
	if !(rb > 0.8) {
		t.Errorf("before correction r = %.3f, want > 0.8", rb)
	}
	if !(math.Abs(ra) < 0.05) {
		t.Errorf("after correction r = %.3f, want |r| < 0.05", ra)
	}
}

func TestOptionsErrors(t *testing.T) {
	cases := []struct {
		name string
		opt  Options
	}{
		{"too fine", Options{CellDeg: 0.001}},
		{"too coarse", Options{CellDeg: 1}},
		{"not dividing the footprint", Options{CellDeg: 0.07}},
		{"too much noise", Options{NoiseStdM: 5000}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := Generate(tc.opt); err == nil {
				t.Fatal("no error")
			}
		})
	}
}

func BenchmarkGenerate(b *testing.B) {
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Generate(Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

func ExampleGenerate() {
	b, err := Generate(Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%s: %d × %d cells of %g°, elevation stored as %s\n", Title, b.Age.NX, b.Age.NY, b.CellDeg, ElevationSense)
	// Output: Quillon Basin (SYNTHETIC): 600 × 500 cells of 0.05°, elevation stored as elevation
}

// TestAgeSigma: the invented age uncertainty follows its documented rule (AgeSigmaBaseMa +
// AgeSigmaFraction·age away from fracture zones) and is largest across a fracture zone, so the
// demo shows uncertainty bands that widen where the age picks are least certain.
func TestAgeSigma(t *testing.T) {
	b := basin(t)
	g, a := b.AgeSigma, b.Age
	tl := TransformLats()
	var onFZ, offFZ float64
	for r := 0; r < g.NY; r++ {
		lat := g.Lat(r)
		near := math.Inf(1)
		for _, l := range tl {
			near = math.Min(near, math.Abs(lat-l)*math.Pi/180*EarthRadiusKm)
		}
		for c := 0; c < g.NX; c += 7 {
			i := r*g.NX + c
			age, sig := float64(a.Data[i]), float64(g.Data[i])
			if math.IsNaN(age) != math.IsNaN(sig) {
				t.Fatalf("cell %d: age %g but sigma %g: both or neither must be missing", i, age, sig)
			}
			if math.IsNaN(age) {
				continue
			}
			if near > 6*FractureZoneWidthKm {
				want := AgeSigmaBaseMa + AgeSigmaFraction*age
				if math.Abs(sig-want) > 1e-3 { // float32 storage; the fracture-zone term is < 1e-15 Ma here
					t.Fatalf("lat %g age %g: sigma %g, want %g", lat, age, sig, want)
				}
				offFZ = math.Max(offFZ, sig-AgeSigmaFraction*age)
			}
			if near < FractureZoneWidthKm/4 {
				onFZ = math.Max(onFZ, sig-AgeSigmaFraction*age)
			}
		}
	}
	if !(onFZ > offFZ+0.8*AgeSigmaFractureZoneMa) {
		t.Errorf("sigma beyond the age term: %g on a fracture zone, %g away; want the zone %g Ma higher", onFZ, offFZ, AgeSigmaFractureZoneMa)
	}
}
