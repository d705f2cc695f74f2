package evaluate

import (
	"fmt"
	"math"
	"testing"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
)

// distanceToLine is the least geodesic distance (m) from (lat, lon) to a centre line densified
// every 20 m (PROJ's WGS84 inverse, Karney 2013): for an offset d of a few km the sampling of
// the line adds at most (10 m)²/(2d) < 0.1 m.
func distanceToLine(g geo.Geodesic, line []geo.TrackSample, lat, lon float64) float64 {
	best := math.Inf(1)
	for _, c := range line {
		if d, _, _ := g.Inverse(lat, lon, c.Lat, c.Lon); d < best {
			best = d
		}
	}
	return best
}

// The corridor's centre line is geo.Densify's track; every across-track sample at offset d lies
// at geodesic distance |d| from its centre-line sample and from the whole centre line, on the
// right of the direction of travel for d > 0. Checked with the WGS84 geodesic inverse (PROJ,
// Karney 2013, J. Geodesy 87, 43–55); tolerances 1 mm for the distance to the centre-line sample
// (the direct and inverse problems agree to nanometres per Karney), 0.5 m to the densified line.
func TestCorridorSamplesGeometry(t *testing.T) {
	g := gdal.WGS84()
	for _, tc := range []struct {
		name           string
		wps            []geo.Waypoint
		spacingM, half float64
	}{
		{"one leg, mid-latitude", []geo.Waypoint{{Lon: -150, Lat: -30}, {Lon: -149, Lat: -29.5}}, 5000, 20000},
		{"across the antimeridian", []geo.Waypoint{{Lon: 179.5, Lat: 10}, {Lon: -179.5, Lat: 10.2}}, 5000, 20000},
		{"high latitude, uneven width", []geo.Waypoint{{Lon: 10, Lat: 70}, {Lon: 12, Lat: 70.3}}, 7000, 15000},
	} {
		t.Run(tc.name, func(t *testing.T) {
			cg, err := corridorSamples(g, tc.wps, tc.spacingM, tc.half, 100000)
			if err != nil {
				t.Fatal(err)
			}
			track, _ := geo.Densify(g, tc.wps, tc.spacingM, 0)
			fine, _ := geo.Densify(g, tc.wps, 20, 0)
			across := len(cg.offsetsM)
			n := (across - 1) / 2
			if want := int(math.Ceil(tc.half / tc.spacingM)); n != want || cg.offsetsM[0] != -tc.half || cg.offsetsM[across-1] != tc.half || cg.offsetsM[n] != 0 {
				t.Fatalf("offsets %v: want %d per side from −%g to %g m", cg.offsetsM, want, tc.half, tc.half)
			}
			if len(cg.centre) != len(track) {
				t.Fatalf("%d centre samples, Densify gives %d", len(cg.centre), len(track))
			}
			for i, c := range track {
				j := i*across + n
				if cg.lons[j] != c.Lon || cg.lats[j] != c.Lat {
					t.Fatalf("centre sample %d (%g, %g), Densify (%g, %g)", i, cg.lons[j], cg.lats[j], c.Lon, c.Lat)
				}
				for k, d := range cg.offsetsM {
					lon, lat := cg.lons[i*across+k], cg.lats[i*across+k]
					if lon < -180 || lon > 180 {
						t.Fatalf("longitude %g outside −180..180", lon)
					}
					dist, az, _ := g.Inverse(c.Lat, c.Lon, lat, lon)
					if math.Abs(dist-math.Abs(d)) > 1e-3 {
						t.Errorf("sample %d, offset %g m: %g m from its centre sample", i, d, dist)
					}
					if d == 0 || i%3 != 0 {
						continue // the line check is slow: every third row
					}
					if line := distanceToLine(g, fine, lat, lon); math.Abs(line-math.Abs(d)) > 0.5 {
						t.Errorf("sample %d, offset %g m: %g m from the centre line", i, d, line)
					}
					// Right of travel: the azimuth to the sample is the travel azimuth + 90°.
					travel := travelAzimuth(g, c, mustLegs(t, g, tc.wps), tc.wps)
					side := geo.LonTo180(az - travel)
					if d > 0 && math.Abs(side-90) > 1e-6 || d < 0 && math.Abs(side+90) > 1e-6 {
						t.Errorf("sample %d offset %g: bearing %g° from the direction of travel", i, d, side)
					}
				}
			}
		})
	}
}

func mustLegs(t *testing.T, g geo.Geodesic, wps []geo.Waypoint) []geo.Leg {
	t.Helper()
	l, err := geo.Legs(g, wps)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

// At a turning waypoint the across-track line follows the bisector: a track east then north
// turns by 90°, so the across-track line there points 45° from each leg. On the sphere
// (geo.Sphere) at the equator the legs' azimuths are exactly 90° and 0° (spherical
// trigonometry), so the bisector is 45° and the right-hand offsets leave at 135°.
func TestCorridorTurnBisector(t *testing.T) {
	g := geo.Sphere{}
	wps := []geo.Waypoint{{Lon: 0, Lat: 0}, {Lon: 1, Lat: 0}, {Lon: 1, Lat: 1}}
	cg, err := corridorSamples(g, wps, 10000, 10000, 1000)
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range cg.centre {
		if c.Waypoint != 1 {
			continue
		}
		_, az, _ := g.Inverse(c.Lat, c.Lon, cg.lats[i*3+2], cg.lons[i*3+2])
		if math.Abs(az-135) > 1e-6 {
			t.Errorf("right-hand offset at the turn leaves at %g°, want 135°", az)
		}
		return
	}
	t.Fatal("no sample at the turning waypoint")
}

// Over the sample limit is a fault.Over("max_track_samples") naming the product along × across.
func TestCorridorSampleLimit(t *testing.T) {
	wps := []geo.Waypoint{{Lon: 0, Lat: 0}, {Lon: 1, Lat: 0}}
	for _, tc := range []struct {
		name      string
		half      float64
		max       int
		wantFault bool
	}{
		{"within", 5000, 1243, false},
		// 1° of the equator ≈ 111.3 km: 113 samples along at 1 km; 11 across = 1243 (the limit
		// exactly), 21 across = 2373.
		{"over", 10000, 2000, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := corridorSamples(gdal.WGS84(), wps, 1000, tc.half, tc.max)
			f, ok := fault.As(err)
			if tc.wantFault != (ok && f.Limit != nil && f.Limit.Name == "max_track_samples" && f.Field == "corridor-width") {
				t.Errorf("error %v (%s)", err, fmt.Sprint(f))
			}
		})
	}
}

// BenchmarkCorridorSamples places 101 × 41 samples (100 km of track at 1 km, 40 km wide): the
// geodesic cost of a corridor before any grid is read.
func BenchmarkCorridorSamples(b *testing.B) {
	g := gdal.WGS84()
	wps := []geo.Waypoint{{Lon: -146, Lat: -32}, {Lon: -145, Lat: -31.4}}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := corridorSamples(g, wps, 1000, 20000, 100000); err != nil {
			b.Fatal(err)
		}
	}
}
