package geo_test

import (
	"fmt"
	"math"
	"testing"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
)

// geodTestCases are lines of Karney's GeodTest.dat WGS84 test set (GeographicLib, "Test data
// for geodesics", doi:10.5281/zenodo.32156), as reproduced in the test suite geodtest.c that
// ships with GeographicLib's C library and PROJ: lat1, lon1, azi1, lat2, lon2, azi2, s12 (m).
var geodTestCases = [][7]float64{
	{35.60777, -139.44815, 111.098748429560326, -11.17491, -69.95921, 129.289270889708762, 8935244.5604818305},
	{55.52454, 106.05087, 22.020059880982801, 77.03196, 197.18234, 109.112041110671519, 4105086.1713924406},
	{-21.97856, 142.59065, -32.44456876433189, 41.84138, 98.56635, -41.84359951440466, 8394328.894657671},
	{-66.99028, 112.2363, 173.73491240878403, -12.70631, 285.90344, 2.512956620913668, 11150344.2312080241},
	{-17.42761, 173.34268, -159.033557661192928, -15.84784, 5.93557, -20.787484651536988, 16076603.1631180673},
	{32.84994, 48.28919, 150.492927788121982, -56.28556, 202.29132, 48.113449399816759, 16727068.9438164461},
	{-87.85331, 85.66836, -65.120313040242748, 66.48646, 16.09921, -4.888658719272296, 17286615.3147144645},
	{-19.79938, -174.47484, 71.167275780171533, -11.99349, -154.35109, 65.589099775199228, 2319004.8601169389},
	{-25.72959, -144.90758, -153.647468693117198, -57.70581, -269.17879, -48.343983158876487, 9413446.7452453107},
}

func az360(a float64) float64 { return math.Mod(math.Mod(a, 360)+360, 360) }

func TestLegsWGS84GeodTest(t *testing.T) {
	g := gdal.WGS84()
	for i, c := range geodTestCases {
		t.Run(fmt.Sprintf("GeodTest_%d", i), func(t *testing.T) {
			// GeodTest longitudes run from −540 to 540; our inputs accept −180..360, so wrap them
			// (a shift by 360° does not change the geodesic)
			legs, err := geo.Legs(g, []geo.Waypoint{{Lat: c[0], Lon: geo.LonTo180(c[1])}, {Lat: c[3], Lon: geo.LonTo180(c[4])}})
			if err != nil {
				t.Fatal(err)
			}
			l := legs[0]
			// tolerances: GeodTest values are exact to ~1e-9 m; we allow 1 µm and 1e-9° for the
			// km conversion and the 0..360 azimuth wrap
			if math.Abs(l.LengthKm*1000-c[6]) > 1e-6 {
				t.Errorf("length %.9f m, GeodTest %.9f m", l.LengthKm*1000, c[6])
			}
			if d := math.Abs(math.Remainder(l.InitialAzimuthDeg-az360(c[2]), 360)); d > 1e-9 {
				t.Errorf("initial azimuth %.12f, GeodTest %.12f", l.InitialAzimuthDeg, az360(c[2]))
			}
			if d := math.Abs(math.Remainder(l.FinalAzimuthDeg-az360(c[5]), 360)); d > 1e-9 {
				t.Errorf("final azimuth %.12f, GeodTest %.12f", l.FinalAzimuthDeg, az360(c[5]))
			}
		})
	}
}

// TestWGS84DirectGeodSolve checks the Direct problem used by Densify against the GeodSolve1 case
// of the same test suite: from (40.63972222, −73.77888889) at azimuth 53.5° for 5850 km the
// geodesic reaches (49.01467, 2.56106), tolerance 0.5e-5°.
func TestWGS84DirectGeodSolve(t *testing.T) {
	lat, lon := gdal.WGS84().Direct(40.63972222, -73.77888889, 53.5, 5850e3)
	if math.Abs(lat-49.01467) > 0.5e-5 || math.Abs(lon-2.56106) > 0.5e-5 {
		t.Errorf("Direct = (%.7f, %.7f), want (49.01467, 2.56106)", lat, lon)
	}
}

// meridianArcM integrates the meridian radius of curvature M(φ) = a(1−e²)/(1−e²sin²φ)^{3/2}
// (standard ellipsoid geometry, e.g. Torge & Müller 2012, "Geodesy", 4th ed., §4.1; from memory)
// from lat1 to lat2 with composite Simpson's rule (WGS84: a = 6378137 m, f = 1/298.257223563).
func meridianArcM(lat1, lat2 float64) float64 {
	const a, f = 6378137.0, 1 / 298.257223563
	e2 := f * (2 - f)
	m := func(p float64) float64 { s := math.Sin(p); return a * (1 - e2) / math.Pow(1-e2*s*s, 1.5) }
	p1, p2 := lat1*math.Pi/180, lat2*math.Pi/180
	n := 2000
	h := (p2 - p1) / float64(n)
	sum := m(p1) + m(p2)
	for i := 1; i < n; i++ {
		w := 2.0
		if i%2 == 1 {
			w = 4
		}
		sum += w * m(p1+float64(i)*h)
	}
	return sum * h / 3
}

func TestDensifyWGS84(t *testing.T) {
	g := gdal.WGS84()
	const a = 6378137.0
	cases := []struct {
		name     string
		wps      []geo.Waypoint
		spacingM float64
		wantM    float64 // total geodesic length
		source   string
	}{
		{"GeodTest line 0", []geo.Waypoint{{Lat: 35.60777, Lon: -139.44815}, {Lat: -11.17491, Lon: -69.95921}}, 50e3, 8935244.5604818305,
			"GeodTest.dat (Karney)"},
		{"equator across the antimeridian", []geo.Waypoint{{Lat: 0, Lon: 170}, {Lat: 0, Lon: -170}}, 10e3, a * 20 * math.Pi / 180,
			"the equator is a geodesic for |Δλ| ≤ (1−f)·180° (Karney 2013, from memory): length a·Δλ"},
		{"over the north pole", []geo.Waypoint{{Lat: 80, Lon: 10}, {Lat: 80, Lon: -170}}, 10e3, 2 * meridianArcM(80, 90),
			"twice the meridian arc 80°→90° (Simpson quadrature of M(φ))"},
		{"over the south pole, 0..360 input", []geo.Waypoint{{Lat: -85, Lon: 300}, {Lat: -75, Lon: 120}}, 10e3, meridianArcM(-90, -85) + meridianArcM(-90, -75),
			"sum of meridian arcs to the pole (Simpson quadrature of M(φ))"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			out, err := geo.Densify(g, c.wps, c.spacingM, 0)
			if err != nil {
				t.Fatal(err)
			}
			total := out[len(out)-1].DistanceKm * 1000
			if math.Abs(total-c.wantM) > 1e-3 {
				t.Errorf("length %.6f m, want %.6f m (%s; tolerance 1 mm)", total, c.wantM, c.source)
			}
			for i, s := range out {
				if s.Lon < -180 || s.Lon > 180 {
					t.Fatalf("sample %d longitude %g outside −180..180", i, s.Lon)
				}
				if i > 0 && (s.DistanceKm-out[i-1].DistanceKm)*1000 > c.spacingM*(1+1e-12) {
					t.Fatalf("sample %d: spacing exceeds %g m", i, c.spacingM)
				}
				if s.Waypoint < 0 {
					a := c.wps[s.Leg]
					d, _, _ := g.Inverse(a.Lat, a.Lon, s.Lat, s.Lon)
					if math.Abs(d-s.DistanceKm*1000) > 1e-3 {
						t.Fatalf("sample %d is %.6f m from the start, labelled %.6f m", i, d, s.DistanceKm*1000)
					}
				}
			}
			if first, last := out[0], out[len(out)-1]; first.Waypoint != 0 || last.Waypoint != 1 ||
				first.Lat != c.wps[0].Lat || last.Lat != c.wps[1].Lat {
				t.Errorf("waypoints not kept: first %v last %v", first, last)
			}
		})
	}
	t.Run("equator samples stay on the equator and cross 180", func(t *testing.T) {
		out, _ := geo.Densify(g, []geo.Waypoint{{Lat: 0, Lon: 170}, {Lat: 0, Lon: -170}}, 10e3, 0)
		east, west := 0, 0
		for _, s := range out {
			if math.Abs(s.Lat) > 1e-9 {
				t.Fatalf("sample %v left the equator", s)
			}
			if s.Lon >= 170 {
				east++
			} else if s.Lon <= -170 {
				west++
			} else {
				t.Fatalf("sample %v went the long way round", s)
			}
		}
		if east == 0 || west == 0 {
			t.Errorf("samples east %d west %d of the antimeridian", east, west)
		}
	})
}

func TestWGS84AgainstHaversine(t *testing.T) {
	// Pure-Go sanity check: great-circle distance on a 6371 km sphere (haversine, Sinnott 1984)
	// agrees with the WGS84 geodesic within 0.5 % (the ellipsoid's flattening is 0.34 %;
	// common practice, no source for the bound).
	g := gdal.WGS84()
	s := geo.Sphere{RadiusM: 6371000}
	for i, c := range geodTestCases {
		t.Run(fmt.Sprintf("GeodTest_%d", i), func(t *testing.T) {
			d, _, _ := g.Inverse(c[0], c[1], c[3], c[4])
			h, _, _ := s.Inverse(c[0], c[1], c[3], c[4])
			if math.Abs(h-d) > 0.005*d {
				t.Errorf("haversine %.0f m vs WGS84 %.0f m: %.3f %%", h, d, 100*(h-d)/d)
			}
		})
	}
}

// BenchmarkDensify10000kmWGS84 densifies a 10,000 km, three-waypoint track at 100 m spacing along
// WGS84 geodesics (PROJ through cgo): 100,001 samples per run.
func BenchmarkDensify10000kmWGS84(b *testing.B) {
	g := gdal.WGS84()
	lat, lon := g.Direct(-30, -40, 60, 5e6)
	lat2, lon2 := g.Direct(lat, lon, 80, 5e6)
	wps := []geo.Waypoint{{Lon: -40, Lat: -30}, {Lon: lon, Lat: lat}, {Lon: lon2, Lat: lat2}}
	b.ReportAllocs()
	n := 0
	for b.Loop() {
		out, err := geo.Densify(g, wps, 100, 0)
		if err != nil {
			b.Fatal(err)
		}
		n = len(out)
	}
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
}
