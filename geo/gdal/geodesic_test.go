package gdal

import (
	"fmt"
	"math"
	"testing"

	"ridgeflank/geo"
)

// Rows of Karney's geodesic test set "GeodTest" (C. F. F. Karney, Test data for geodesics,
// doi:10.5281/zenodo.32156), as reproduced in the test suite of GeographicLib's C library
// (geodtest.c): lat1, lon1, azi1, lat2, lon2, azi2, s12 on WGS84. The test set is exact to
// well below the tolerances used here (Karney 2013 gives ~15 nm accuracy).
var geodTestRows = []struct {
	name                               string
	lat1, lon1, azi1, lat2, lon2, azi2 float64
	s12                                float64
}{
	{"row 1", 35.60777, -139.44815, 111.098748429560326, -11.17491, -69.95921, 129.289270889708762, 8935244.5604818305},
	{"row 4, end longitude past 180", -66.99028, 112.2363, 173.73491240878403, -12.70631, 285.90344, 2.512956620913668, 11150344.2312080241},
	{"row 5, crosses the antimeridian", -17.42761, 173.34268, -159.033557661192928, -15.84784, 5.93557, -20.787484651536988, 16076603.1631180673},
	{"row 15, starts 2° from the south pole", -87.85331, 85.66836, -65.120313040242748, 66.48646, 16.09921, -4.888658719272296, 17286615.3147144645},
	{"row 17, end longitude below −180", -25.72959, -144.90758, -153.647468693117198, -57.70581, -269.17879, -48.343983158876487, 9413446.7452453107},
}

func angleDiff(a, b float64) float64 {
	d := math.Mod(a-b, 360)
	if d > 180 {
		d -= 360
	} else if d < -180 {
		d += 360
	}
	return math.Abs(d)
}

func TestGeodesicKarneyTestSet(t *testing.T) {
	g := WGS84()
	for _, r := range geodTestRows {
		t.Run("inverse "+r.name, func(t *testing.T) {
			s, a1, a2 := g.Inverse(r.lat1, r.lon1, r.lat2, r.lon2)
			// tolerance 1 µm and 1e-9° (the published values carry far more digits)
			if math.Abs(s-r.s12) > 1e-6 || angleDiff(a1, r.azi1) > 1e-9 || angleDiff(a2, r.azi2) > 1e-9 {
				t.Errorf("got s=%.7f azi1=%.12f azi2=%.12f; want %.7f %.12f %.12f", s, a1, a2, r.s12, r.azi1, r.azi2)
			}
		})
		t.Run("direct "+r.name, func(t *testing.T) {
			lat, lon := g.Direct(r.lat1, r.lon1, r.azi1, r.s12)
			if math.Abs(lat-r.lat2) > 1e-9 || angleDiff(lon, r.lon2) > 1e-9 || lon < -180 || lon > 180 {
				t.Errorf("got %.12f, %.12f; want %.12f, %.12f (mod 360)", lat, lon, r.lat2, r.lon2)
			}
		})
	}
}

func TestGeodesicNamedCases(t *testing.T) {
	g := WGS84()
	const quarterMeridian = 10001965.729 // WGS84 quarter meridian in m (GeographicLib documentation; from memory)
	tests := []struct {
		name                   string
		lat1, lon1, lat2, lon2 float64
		s12, tolS              float64
		azi1, azi2, tolAzi     float64 // NaN: not checked
	}{
		// GeographicLib C test GeodSolve0 (JFK to Paris CDG): azimuths to 0.5e-5°, distance to 0.5 m.
		{"GeodSolve0 JFK–CDG", 40.6, -73.8, 49.01666667, 2.55, 5853226, 0.5, 53.47022, 111.59367, 0.5e-5},
		// GeographicLib C test GeodSolve6: nearly antipodal points near the poles, to 0.5 mm.
		{"GeodSolve6 near-antipodal polar", 89.262080389218, 0, -89.262080389218, 179.992207982775375662, 20003925.854, 0.5e-3, math.NaN(), math.NaN(), 0},
		// The equator is a geodesic for short arcs: 1° of longitude is a·π/180 m (Karney 2013 §3).
		{"equator across the antimeridian", 0, 179.5, 0, -179.5, 6378137 * math.Pi / 180, 1e-6, 90, 90, 1e-9},
		{"equator across the antimeridian, 0..360 input", 0, 179.5, 0, 180.5, 6378137 * math.Pi / 180, 1e-6, 90, 90, 1e-9},
		{"equator to the north pole", 0, 30, 90, 0, quarterMeridian, 1e-3, 0, math.NaN(), 1e-9},
		{"pole to pole", -90, 0, 90, 0, 2 * quarterMeridian, 2e-3, math.NaN(), math.NaN(), 0},
		{"coincident points", 12, 34, 12, 34, 0, 0, math.NaN(), math.NaN(), 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s, a1, a2 := g.Inverse(tc.lat1, tc.lon1, tc.lat2, tc.lon2)
			if math.Abs(s-tc.s12) > tc.tolS {
				t.Errorf("distance %.4f m, want %.4f ± %g", s, tc.s12, tc.tolS)
			}
			if !math.IsNaN(tc.azi1) && angleDiff(a1, tc.azi1) > tc.tolAzi {
				t.Errorf("azi1 %.7f, want %.7f", a1, tc.azi1)
			}
			if !math.IsNaN(tc.azi2) && angleDiff(a2, tc.azi2) > tc.tolAzi {
				t.Errorf("azi2 %.7f, want %.7f", a2, tc.azi2)
			}
		})
	}
	t.Run("GeodSolve1 direct JFK towards CDG", func(t *testing.T) {
		// GeographicLib C test GeodSolve1: 49.01467, 2.56106 to 0.5e-5°.
		lat, lon := g.Direct(40.63972222, -73.77888889, 53.5, 5850e3)
		if math.Abs(lat-49.01467) > 0.5e-5 || math.Abs(lon-2.56106) > 0.5e-5 {
			t.Errorf("got %.6f, %.6f", lat, lon)
		}
	})
	t.Run("GeodSolve5 direct to the pole", func(t *testing.T) {
		// GeographicLib C test GeodSolve5: reaches lat 90 (to 0.5e-5°), no NaN.
		lat, lon := g.Direct(0.01777745589997, 30, 0, 10e6)
		if math.Abs(lat-90) > 0.5e-5 || math.IsNaN(lon) {
			t.Errorf("got %.7f, %.7f", lat, lon)
		}
	})
	t.Run("direct across the antimeridian answers in −180..180", func(t *testing.T) {
		lat, lon := g.Direct(0, 179.5, 90, 2*6378137*math.Pi/180) // 2° east along the equator
		if math.Abs(lat) > 1e-9 || math.Abs(lon-(-178.5)) > 1e-9 {
			t.Errorf("got %.10f, %.10f; want 0, −178.5", lat, lon)
		}
	})
}

func TestWaypoints(t *testing.T) {
	g := WGS84().(Geodesic)
	tests := []struct {
		name                   string
		lat1, lon1, lat2, lon2 float64
		spacing                float64
	}{
		// JFK to Singapore Changi: the waypoint example of PROJ's geodesic.h documentation.
		{"JFK to SIN every 100 km", 40.64, -73.78, 1.36, 103.99, 100e3},
		{"across the antimeridian", -20, 175, -22, -170, 10e3},
		{"over the north pole", 80, 0, 80, 180, 25e3},
		{"shorter than one step", 10, 10, 10, 10.001, 1000},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			pts, total, err := g.Waypoints(tc.lat1, tc.lon1, tc.lat2, tc.lon2, tc.spacing)
			if err != nil {
				t.Fatal(err)
			}
			d, _, _ := g.Inverse(tc.lat1, tc.lon1, tc.lat2, tc.lon2)
			if math.Abs(total-d) > 1e-6 {
				t.Errorf("total %.6f, inverse %.6f", total, d)
			}
			wantN := int(math.Floor(d/tc.spacing)) + 2
			if len(pts) != wantN {
				t.Errorf("%d points, want %d", len(pts), wantN)
			}
			last := pts[len(pts)-1]
			if last[0] != tc.lat2 || angleDiff(last[1], tc.lon2) > 1e-12 || pts[0][0] != tc.lat1 {
				t.Errorf("ends %v .. %v", pts[0], last)
			}
			for i, p := range pts {
				if p[1] < -180 || p[1] >= 180 || math.IsNaN(p[0]) {
					t.Fatalf("point %d = %v", i, p)
				}
				if i == 0 || i == len(pts)-1 {
					continue
				}
				// every interior point lies i·spacing from the start along the geodesic
				s, _, _ := g.Inverse(tc.lat1, tc.lon1, p[0], p[1])
				if math.Abs(s-float64(i)*tc.spacing) > 1e-5 {
					t.Fatalf("point %d at %.6f m, want %.6f", i, s, float64(i)*tc.spacing)
				}
				step, _, _ := g.Inverse(pts[i-1][0], pts[i-1][1], p[0], p[1])
				if math.Abs(step-tc.spacing) > 1e-5 {
					t.Fatalf("step %d = %.6f m, want %g", i, step, tc.spacing)
				}
			}
		})
	}
	t.Run("the polar route passes the pole", func(t *testing.T) {
		pts, _, _ := g.Waypoints(80, 0, 80, 180, 25e3)
		maxLat := -90.0
		for _, p := range pts {
			maxLat = math.Max(maxLat, p[0])
			if angleDiff(p[1], 0) > 1e-6 && angleDiff(p[1], 180) > 1e-6 {
				t.Fatalf("point %v off the meridian plane", p)
			}
		}
		// the pole lies between two samples: within one 25 km step (≈ 0.225° of latitude)
		if maxLat < 90-0.225 {
			t.Errorf("highest latitude %g", maxLat)
		}
	})
	t.Run("coincident points give one", func(t *testing.T) {
		pts, total, err := g.Waypoints(5, 5, 5, 5, 10)
		if err != nil || len(pts) != 1 || total != 0 {
			t.Errorf("%v %g %v", pts, total, err)
		}
	})
	t.Run("invalid input", func(t *testing.T) {
		for _, args := range [][5]float64{{0, 0, 1, 1, 0}, {91, 0, 0, 0, 10}, {0, math.NaN(), 0, 0, 10}, {0, 0, 0, 179, 0.001}} {
			if _, _, err := g.Waypoints(args[0], args[1], args[2], args[3], args[4]); err == nil {
				t.Errorf("%v accepted", args)
			}
		}
	})
}

func ExampleGeodesic_Waypoints() {
	g := WGS84().(Geodesic)
	// 1.5° east along the equator across the antimeridian, a point every 50 km. Along the
	// equator the geodesic distance is a·Δλ (a = 6378137 m), i.e. 111.3195 km per degree.
	pts, total, _ := g.Waypoints(0, 179.5, 0, -179, 50e3)
	fmt.Printf("%.3f km in %d points\n", total/1000, len(pts))
	for _, p := range pts {
		fmt.Printf("%.4f %.4f\n", p[0], p[1])
	}
	// Output:
	// 166.979 km in 5 points
	// 0.0000 179.5000
	// 0.0000 179.9492
	// 0.0000 -179.6017
	// 0.0000 -179.1525
	// 0.0000 -179.0000
}

var _ geo.Geodesic = Geodesic{}

func BenchmarkGeodesicInverse(b *testing.B) {
	g := WGS84()
	b.ReportAllocs()
	i := 0.0
	for b.Loop() {
		g.Inverse(10, 20+i, -30, 140)
		i += 1e-6
	}
}

func BenchmarkWaypoints10000kmAt100m(b *testing.B) {
	g := WGS84().(Geodesic)
	b.ReportAllocs()
	for b.Loop() {
		pts, _, err := g.Waypoints(0, 0, 0, 89.83152841, 100) // ≈ 10 000 km along the equator
		if err != nil || len(pts) < 100000 {
			b.Fatal(err, len(pts))
		}
	}
}

func BenchmarkGeodesicDirect(b *testing.B) {
	g := WGS84()
	b.ReportAllocs()
	d := 0.0
	for b.Loop() {
		g.Direct(10, 20, 45, 1e5+d)
		d += 0.1
	}
}
