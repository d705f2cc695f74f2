package geo

import (
	"math"
	"strings"
	"testing"
)

// haversineM is the great-circle distance on a sphere of radius r (haversine formula, Sinnott
// 1984, "Virtues of the haversine", Sky & Telescope 68(2):159), written out independently of
// Sphere for the checks below.
func haversineM(r, lat1, lon1, lat2, lon2 float64) float64 {
	p1, p2 := lat1*math.Pi/180, lat2*math.Pi/180
	dp, dl := p2-p1, (lon2-lon1)*math.Pi/180
	h := math.Pow(math.Sin(dp/2), 2) + math.Cos(p1)*math.Cos(p2)*math.Pow(math.Sin(dl/2), 2)
	return 2 * r * math.Asin(math.Sqrt(h))
}

func TestSphereAgainstHaversineAndKnownArcs(t *testing.T) {
	s := Sphere{RadiusM: 6371000}
	cases := []struct {
		name                   string
		lat1, lon1, lat2, lon2 float64
		want, wantAzi1         float64 // want <0: use haversine
	}{
		// quarter meridian: πR/2, heading north (exact geometry of the sphere)
		{"equator to pole", 0, 10, 90, 10, math.Pi * 6371000 / 2, 0},
		// 90° of equator: πR/2, heading east
		{"quarter equator", 0, 0, 0, 90, math.Pi * 6371000 / 2, 90},
		{"across antimeridian", 0, 179, 0, -179, 2 * math.Pi / 180 * 6371000, 90},
		{"generic", -33.9, 18.4, 51.5, -0.1, -1, math.NaN()},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			d, az, _ := s.Inverse(c.lat1, c.lon1, c.lat2, c.lon2)
			want := c.want
			if want < 0 {
				want = haversineM(6371000, c.lat1, c.lon1, c.lat2, c.lon2)
			}
			if math.Abs(d-want) > 1e-6 {
				t.Errorf("distance %.6f m, want %.6f", d, want)
			}
			if !math.IsNaN(c.wantAzi1) && math.Abs(az-c.wantAzi1) > 1e-9 {
				t.Errorf("azimuth %.12f, want %.12f", az, c.wantAzi1)
			}
			// Direct must land back on point 2
			lat, lon := s.Direct(c.lat1, c.lon1, az, d)
			if haversineM(6371000, lat, lon, c.lat2, c.lon2) > 1e-6 {
				t.Errorf("Direct lands at (%g, %g), want (%g, %g)", lat, lon, c.lat2, c.lon2)
			}
		})
	}
}

func checkDensified(t *testing.T, g Geodesic, wps []Waypoint, spacingM float64, out []TrackSample) {
	t.Helper()
	legs, err := Legs(g, wps)
	if err != nil {
		t.Fatal(err)
	}
	wi := 0
	for i, s := range out {
		if s.Lon < -180 || s.Lon > 180 || s.Lat < -90 || s.Lat > 90 {
			t.Fatalf("sample %d out of range: %v", i, s)
		}
		if i > 0 {
			step := (s.DistanceKm - out[i-1].DistanceKm) * 1000
			if step < 0 || step > spacingM*(1+1e-9) {
				t.Fatalf("sample %d: step %.6f m outside 0..%g", i, step, spacingM)
			}
		}
		if s.Waypoint >= 0 {
			if s.Waypoint != wi {
				t.Fatalf("sample %d is waypoint %d, want %d", i, s.Waypoint, wi)
			}
			w := wps[wi]
			if s.Lat != w.Lat || s.Lon != lonAnswer(w.Lon) {
				t.Fatalf("waypoint %d not kept exactly: %v vs %+v", wi, s, w)
			}
			wi++
		} else {
			// an intermediate sample lies on its leg's geodesic at its distance
			l := legs[s.Leg]
			a := wps[s.Leg]
			d, az, _ := g.Inverse(a.Lat, a.Lon, s.Lat, s.Lon)
			if math.Abs(d-(s.DistanceKm-l.StartDistanceKm)*1000) > 1e-3 {
				t.Fatalf("sample %d: %.6f m from its leg start, want %.6f", i, d, (s.DistanceKm-l.StartDistanceKm)*1000)
			}
			if d > 1 && math.Abs(math.Remainder(azimuth360(az)-l.InitialAzimuthDeg, 360)) > 1e-6 {
				t.Fatalf("sample %d: azimuth %.9f from leg start, want %.9f", i, azimuth360(az), l.InitialAzimuthDeg)
			}
		}
	}
	if wi != len(wps) {
		t.Fatalf("%d waypoints in output, want %d", wi, len(wps))
	}
	total := 0.0
	for _, l := range legs {
		total += l.LengthKm
	}
	if last := out[len(out)-1].DistanceKm; math.Abs(last-total) > 1e-9 {
		t.Fatalf("final distance %.9f km, sum of legs %.9f km", last, total)
	}
}

func TestDensifySphere(t *testing.T) {
	s := Sphere{RadiusM: 6371000}
	cases := []struct {
		name     string
		wps      []Waypoint
		spacingM float64
		wantN    int
	}{
		// 2° of equator = 222.39 km → ⌈222.39/10⌉ = 23 steps → 24 samples
		{"across the antimeridian on the equator", []Waypoint{{Lon: 179, Lat: 0}, {Lon: -179, Lat: 0}}, 10000, 24},
		// meridian arc 80°N→pole→80°N on the opposite meridian: 20° = 2223.9 km → 223 steps
		{"over the north pole", []Waypoint{{Lon: 10, Lat: 80}, {Lon: -170, Lat: 80}}, 10000, 224},
		{"three legs with a repeated waypoint", []Waypoint{{Lon: -20, Lat: -40}, {Lon: -19, Lat: -40.5}, {Lon: -19, Lat: -40.5}, {Lon: 350, Lat: -41}}, 5000, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			out, err := Densify(s, c.wps, c.spacingM, 0)
			if err != nil {
				t.Fatal(err)
			}
			if c.wantN > 0 && len(out) != c.wantN {
				t.Errorf("%d samples, want %d", len(out), c.wantN)
			}
			checkDensified(t, s, c.wps, c.spacingM, out)
		})
	}
	t.Run("pole leg passes the pole", func(t *testing.T) {
		out, _ := Densify(s, []Waypoint{{Lon: 10, Lat: 80}, {Lon: -170, Lat: 80}}, 1000, 0)
		maxLat := -90.0
		for _, p := range out {
			maxLat = math.Max(maxLat, p.Lat)
			if p.Lat < 89.99 && math.Abs(p.Lon-10) > 1e-6 && math.Abs(p.Lon+170) > 1e-6 {
				t.Fatalf("sample %v left the meridian plane", p)
			}
		}
		if maxLat < 90-1e-6 {
			t.Errorf("max latitude %.9f, want 90", maxLat)
		}
	})
}

func TestDensifyErrors(t *testing.T) {
	s := Sphere{}
	two := []Waypoint{{Lon: 0, Lat: 0}, {Lon: 1, Lat: 0}}
	cases := []struct {
		name     string
		g        Geodesic
		wps      []Waypoint
		spacingM float64
		max      int
		want     string
	}{
		{"zero spacing", s, two, 0, 0, "positive"},
		{"NaN spacing", s, two, math.NaN(), 0, "positive"},
		{"one waypoint", s, two[:1], 100, 0, "at least 2"},
		{"NaN waypoint", s, []Waypoint{{Lon: 0, Lat: math.NaN()}, {Lon: 1, Lat: 0}}, 100, 0, "not finite"},
		{"too many samples", s, two, 100, 1000, "more than 1000 samples"},
		{"nil solver", nil, two, 100, 0, "no geodesic"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Densify(c.g, c.wps, c.spacingM, c.max)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("err = %v, want one containing %q", err, c.want)
			}
		})
	}
}

// BenchmarkDensify10000kmSphere densifies a 10,000 km track at 100 m with the pure-Go sphere.
func BenchmarkDensify10000kmSphere(b *testing.B) {
	s := Sphere{}
	lat, lon := s.Direct(-30, -40, 60, 5e6)
	lat2, lon2 := s.Direct(lat, lon, 80, 5e6)
	wps := []Waypoint{{Lon: -40, Lat: -30}, {Lon: lon, Lat: lat}, {Lon: lon2, Lat: lat2}}
	b.ReportAllocs()
	n := 0
	for b.Loop() {
		out, err := Densify(s, wps, 100, 0)
		if err != nil {
			b.Fatal(err)
		}
		n = len(out)
	}
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
}
