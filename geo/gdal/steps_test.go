package gdal

import (
	"math"
	"testing"

	"ridgeflank/geo"
)

// DirectSteps reaches the end points of Karney's GeodTest rows (geodTestRows): n equal steps of
// s12/n from (lat1, lon1) at azi1 end at (lat2, lon2), tolerance 1e-9°; and every intermediate
// point is Direct's answer at that distance (the same line arithmetic, tolerance 1e-12°).
func TestDirectStepsGeodTest(t *testing.T) {
	g := Geodesic{}
	const n = 1000
	buf := make([]float64, 2*n)
	for _, r := range geodTestRows {
		t.Run(r.name, func(t *testing.T) {
			step := r.s12 / n
			// in two calls, as geo.Densify asks in chunks
			g.DirectSteps(r.lat1, r.lon1, r.azi1, step, 1, 600, buf)
			g.DirectSteps(r.lat1, r.lon1, r.azi1, step, 601, n-600, buf[1200:])
			lat, lon := buf[2*(n-1)], buf[2*(n-1)+1]
			if math.Abs(lat-r.lat2) > 1e-9 || angleDiff(lon, r.lon2) > 1e-9 {
				t.Errorf("end %.12f, %.12f; GeodTest %.12f, %.12f", lat, lon, r.lat2, r.lon2)
			}
			for _, k := range []int{1, 17, 600, 601, 999} {
				wl, wo := g.Direct(r.lat1, r.lon1, r.azi1, step*float64(k))
				gl, gol := buf[2*(k-1)], buf[2*(k-1)+1]
				if math.Abs(gl-wl) > 1e-12 || angleDiff(gol, wo) > 1e-12 || gol < -180 || gol > 180 {
					t.Errorf("point %d: %.14f, %.14f; Direct %.14f, %.14f", k, gl, gol, wl, wo)
				}
			}
		})
	}
}

// directOnly is the WGS84 solver without DirectSteps, so geo.Densify places every point with
// Direct.
type directOnly struct{ g Geodesic }

func (d directOnly) Inverse(lat1, lon1, lat2, lon2 float64) (float64, float64, float64) {
	return d.g.Inverse(lat1, lon1, lat2, lon2)
}

func (d directOnly) Direct(lat1, lon1, azi1Deg, distM float64) (float64, float64) {
	return d.g.Direct(lat1, lon1, azi1Deg, distM)
}

// geo.Densify gives the same samples through DirectSteps (in chunks) as through one Direct call
// per point: GeodTest row 1 (8935 km) at 500 m, about 17,900 samples, several chunks.
func TestDensifyStepsEqualDirect(t *testing.T) {
	r := geodTestRows[0]
	wps := []geo.Waypoint{{Lat: r.lat1, Lon: r.lon1}, {Lat: r.lat2, Lon: r.lon2}, {Lat: 0, Lon: -60}}
	fast, err := geo.Densify(WGS84(), wps, 500, 0)
	if err != nil {
		t.Fatal(err)
	}
	slow, err := geo.Densify(directOnly{}, wps, 500, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(fast) != len(slow) || len(fast) < 17000 {
		t.Fatalf("%d and %d samples", len(fast), len(slow))
	}
	for i := range fast {
		f, s := fast[i], slow[i]
		if math.Abs(f.Lat-s.Lat) > 1e-12 || angleDiff(f.Lon, s.Lon) > 1e-12 || f.DistanceKm != s.DistanceKm || f.Leg != s.Leg || f.Waypoint != s.Waypoint {
			t.Fatalf("sample %d: %v, Direct %v", i, f, s)
		}
	}
}
