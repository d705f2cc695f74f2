package geo

import (
	"errors"
	"math"
	"strings"
	"testing"

	"github.com/paulmach/orb"
)

func TestParseRegionErrors(t *testing.T) {
	// Each input breaks one rule of RFC 7946 §3.1.6 / §3.1.1 or one of our documented limits.
	cases := []struct {
		name, json, want string
		max              int
	}{
		{"not json", `{"type":`, "not valid GeoJSON", 0},
		{"wrong type", `{"type":"LineString","coordinates":[[0,0],[1,1]]}`, `got "LineString"`, 0},
		{"unclosed ring", `{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,1]]]}`, "not closed", 0},
		{"too few positions", `{"type":"Polygon","coordinates":[[[0,0],[1,0],[0,0]]]}`, "at least 4", 0},
		{"latitude beyond 90", `{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,91],[0,0]]]}`, "latitude 91", 0},
		{"longitude beyond 360", `{"type":"Polygon","coordinates":[[[0,0],[400,0],[1,1],[0,0]]]}`, "longitude 400", 0},
		{"longitude below -180", `{"type":"Polygon","coordinates":[[[0,0],[-181,0],[1,1],[0,0]]]}`, "longitude -181", 0},
		{"one-number position", `{"type":"Polygon","coordinates":[[[0,0],[1],[1,1],[0,0]]]}`, "position 1 has 1 number", 0},
		{"bow tie", `{"type":"Polygon","coordinates":[[[0,0],[1,1],[1,0],[0,1],[0,0]]]}`, "crosses or touches itself", 0},
		{"spike", `{"type":"Polygon","coordinates":[[[0,0],[2,0],[2,2],[2,3],[2,1],[0,2],[0,0]]]}`, "itself", 0},
		{"touching vertex", `{"type":"Polygon","coordinates":[[[0,0],[4,0],[2,2],[4,4],[0,4],[2,2],[0,0]]]}`, "crosses or touches itself", 0},
		{"zero area", `{"type":"Polygon","coordinates":[[[0,0],[1,1],[2,2],[3,3],[0,0]]]}`, "itself", 0},
		{"vertex limit", `{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,1],[0,0]]]}`, "more than the limit of 4", 4},
		{"two features", `{"type":"FeatureCollection","features":[{"type":"Feature","geometry":null,"properties":{}},{"type":"Feature","geometry":null,"properties":{}}]}`, "exactly one feature", 0},
		{"null geometry", `{"type":"Feature","geometry":null,"properties":{}}`, "no geometry", 0},
		{"empty polygon", `{"type":"Polygon","coordinates":[]}`, "no rings", 0},
		{"ring round a pole with mean latitude 0", `{"type":"Polygon","coordinates":[[[0,10],[90,-10],[180,10],[270,-10],[0,10]]]}`, "ambiguous", 0},
		{"twice round the pole", `{"type":"Polygon","coordinates":[[[0,60],[120,61],[240,62],[0,63],[120,64],[240,65],[0,60]]]}`, "2 times", 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseRegion([]byte(c.json), c.max)
			if err == nil {
				t.Fatalf("no error, want one containing %q", c.want)
			}
			if !errors.Is(err, ErrInvalidRegion) {
				t.Errorf("error %v does not wrap ErrInvalidRegion", err)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %q does not contain %q", err, c.want)
			}
		})
	}
}

func TestNormalizeRegionRejectsNaN(t *testing.T) {
	mp := orb.MultiPolygon{{{{0, 0}, {1, 0}, {math.NaN(), 1}, {0, 0}}}}
	if _, err := NormalizeRegion(mp, 0); err == nil || !strings.Contains(err.Error(), "finite") {
		t.Fatalf("err = %v, want a not-finite error", err)
	}
}

// ringIsCCW reports the winding from the shoelace sum (positive = counter-clockwise).
func ringIsCCW(r orb.Ring) bool { return ringArea2(r) > 0 }

func TestParseRegionWindingRightHandRule(t *testing.T) {
	// RFC 7946 §3.1.6: exterior counter-clockwise, holes clockwise. Input has the opposite.
	in := `{"type":"Feature","properties":{"name":"SYNTHETIC Quillon Basin box"},"geometry":
	 {"type":"Polygon","coordinates":[
	  [[10,10],[10,20],[20,20],[20,10],[10,10]],
	  [[12,12],[14,12],[14,14],[12,14],[12,12]]]}}`
	mp, err := ParseRegion([]byte(in), 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(mp) != 1 || len(mp[0]) != 2 {
		t.Fatalf("got %d polygons / %v", len(mp), mp)
	}
	if !ringIsCCW(mp[0][0]) {
		t.Error("exterior is not counter-clockwise")
	}
	if ringIsCCW(mp[0][1]) {
		t.Error("hole is not clockwise")
	}
}

func TestParseRegionFeatureCollectionAndAltitude(t *testing.T) {
	in := `{"type":"FeatureCollection","features":[{"type":"Feature","properties":null,
	  "geometry":{"type":"MultiPolygon","coordinates":[[[[0,0,-4000],[1,0,-4000],[1,1,-4000],[0,1,-4000],[0,0,-4000]]]]}}]}`
	mp, err := ParseRegion([]byte(in), 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(mp) != 1 || len(mp[0][0]) != 5 || mp[0][0][2] != (orb.Point{1, 1}) {
		t.Fatalf("unexpected result %v", mp)
	}
}

// boxAreaKm2 is the area of a longitude/latitude box on a sphere: R²·Δλ·(sinφ2 − sinφ1), the
// integral of R²cosφ dφ dλ (standard spherical-zone result, e.g. Snyder 1987 USGS PP 1395).
func boxAreaKm2(rKm, lon1, lon2, lat1, lat2 float64) float64 {
	return rKm * rKm * (lon2 - lon1) * math.Pi / 180 * (math.Sin(lat2*math.Pi/180) - math.Sin(lat1*math.Pi/180))
}

// capAreaKm2 is the area of the spherical cap poleward of latitude lat: 2πR²(1 − sin|lat|)
// (Archimedes' hat-box theorem).
func capAreaKm2(rKm, lat float64) float64 {
	return 2 * math.Pi * rKm * rKm * (1 - math.Sin(math.Abs(lat)*math.Pi/180))
}

func box(lon1, lat1, lon2, lat2 float64) orb.Ring {
	return orb.Ring{{lon1, lat1}, {lon2, lat1}, {lon2, lat2}, {lon1, lat2}, {lon1, lat1}}
}

func TestSphericalAreaKnownValues(t *testing.T) {
	const r = 6371.0088 // mean Earth radius R1 in km (Moritz 2000)
	rA := AuthalicEarthRadiusM / 1000
	cases := []struct {
		name   string
		mp     orb.MultiPolygon
		radius float64
		want   float64
		tolRel float64
	}{
		// 1°×1° at the equator: R²·Δλ·sin 1° ≈ 12,364 km² on the 6371.0088 km sphere.
		{"1x1 degree cell at equator", orb.MultiPolygon{{box(0, 0, 1, 1)}}, r, boxAreaKm2(r, 0, 1, 0, 1), 1e-12},
		{"1x1 degree cell at 60N, clockwise", orb.MultiPolygon{{reversed(box(30, 60, 31, 61))}}, r, boxAreaKm2(r, 30, 31, 60, 61), 1e-12},
		{"box with hole", orb.MultiPolygon{{box(0, -10, 10, 10), box(2, -2, 4, 2)}}, r,
			boxAreaKm2(r, 0, 10, -10, 10) - boxAreaKm2(r, 2, 4, -2, 2), 1e-12},
		{"north polar cap north of 60", orb.MultiPolygon{{box(-180, 60, 180, 90)}}, r, capAreaKm2(r, 60), 1e-12},
		{"south polar cap south of -75", orb.MultiPolygon{{box(-180, -90, 180, -75)}}, r, capAreaKm2(r, -75), 1e-12},
		{"whole sphere (4πR²)", orb.MultiPolygon{{box(-180, -90, 180, 90)}}, r, 4 * math.Pi * r * r, 1e-12},
		{"default radius is authalic", orb.MultiPolygon{{box(0, 0, 1, 1)}}, 0, boxAreaKm2(rA, 0, 1, 0, 1), 1e-12},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var got float64
			if c.radius == 0 {
				got = SphericalAreaKm2(c.mp)
			} else {
				got = SphericalAreaKm2Radius(c.mp, c.radius)
			}
			if math.Abs(got-c.want) > c.tolRel*c.want {
				t.Errorf("area = %.6f km², want %.6f km² (rel tol %g)", got, c.want, c.tolRel)
			}
		})
	}
	t.Run("equatorial cell is 12363.7 km2", func(t *testing.T) {
		// worked by hand for R = 6371.0088 km: R²·(π/180)·sin 1° = 40589753.1 km² ·
		// 0.01745329 · 0.01745241 = 12363.7 km² (zone area 2πR²·Δ(sinφ), Archimedes);
		// tolerance 0.1 km² (the rounding of the hand value)
		got := SphericalAreaKm2Radius(orb.MultiPolygon{{box(0, 0, 1, 1)}}, r)
		if math.Abs(got-12363.7) > 0.1 {
			t.Errorf("area = %.2f km², want 12363.7 ± 0.1", got)
		}
	})
}

func TestSphericalAreaSlopedEdgeAgainstQuadrature(t *testing.T) {
	// A quadrilateral whose top edge is a straight line in lon/lat from (0°,10°) to (40°,50°).
	// Reference: composite Simpson quadrature of ∫(sinφtop(λ) − sinφbottom) dλ · R², the area
	// integral ∬R²cosφ dφ dλ evaluated numerically (independent of the closed form used).
	const r = 6371.0
	ring := orb.Ring{{0, 0}, {40, 0}, {40, 50}, {0, 10}, {0, 0}}
	f := func(lonDeg float64) float64 {
		top := 10 + lonDeg
		return math.Sin(top * math.Pi / 180)
	}
	n := 2000
	h := 40.0 / float64(n)
	s := f(0) + f(40)
	for i := 1; i < n; i++ {
		w := 2.0
		if i%2 == 1 {
			w = 4
		}
		s += w * f(float64(i)*h)
	}
	want := r * r * s * h / 3 * math.Pi / 180
	got := SphericalAreaKm2Radius(orb.MultiPolygon{{ring}}, r)
	if math.Abs(got-want) > 1e-9*want {
		t.Errorf("area = %.6f, quadrature %.6f", got, want)
	}
}

func polygonsTotalArea(mp orb.MultiPolygon) float64 { return SphericalAreaKm2Radius(mp, 6371) }

func TestParseRegionAntimeridian(t *testing.T) {
	const r = 6371.0
	cases := []struct {
		name      string
		json      string
		wantParts int
		wantArea  float64 // km² on a 6371 km sphere
	}{
		{"longitudes beyond 180", `{"type":"Polygon","coordinates":[[[170,0],[190,0],[190,10],[170,10],[170,0]]]}`,
			2, boxAreaKm2(r, 170, 190, 0, 10)},
		{"jumps larger than 180", `{"type":"Polygon","coordinates":[[[170,0],[-170,0],[-170,10],[170,10],[170,0]]]}`,
			2, boxAreaKm2(r, 170, 190, 0, 10)},
		{"clockwise jumps", `{"type":"Polygon","coordinates":[[[170,0],[170,10],[-170,10],[-170,0],[170,0]]]}`,
			2, boxAreaKm2(r, 170, 190, 0, 10)},
		{"already split (RFC 7946 §3.1.9)", `{"type":"MultiPolygon","coordinates":[
			[[[170,0],[180,0],[180,10],[170,10],[170,0]]],[[[-180,0],[-170,0],[-170,10],[-180,10],[-180,0]]]]}`,
			2, boxAreaKm2(r, 170, 190, 0, 10)},
		{"entirely in 180..360", `{"type":"Polygon","coordinates":[[[190,0],[200,0],[200,10],[190,10],[190,0]]]}`,
			1, boxAreaKm2(r, 190, 200, 0, 10)},
		{"hole crossing the antimeridian", `{"type":"Polygon","coordinates":[
			[[160,-10],[200,-10],[200,10],[160,10],[160,-10]],[[175,-5],[185,-5],[185,5],[175,5],[175,-5]]]}`,
			2, boxAreaKm2(r, 160, 200, -10, 10) - boxAreaKm2(r, 175, 185, -5, 5)},
		{"holes on both sides", `{"type":"Polygon","coordinates":[
			[[160,-10],[200,-10],[200,10],[160,10],[160,-10]],[[165,-5],[170,-5],[170,5],[165,5],[165,-5]],
			[[-165,-5],[-160,-5],[-160,5],[-165,5],[-165,-5]]]}`,
			2, boxAreaKm2(r, 160, 200, -10, 10) - 2*boxAreaKm2(r, 165, 170, -5, 5)},
		{"C shape split into three", `{"type":"Polygon","coordinates":[[[170,0],[190,0],[190,10],[175,10],[175,20],[190,20],[190,30],[170,30],[170,0]]]}`,
			3, boxAreaKm2(r, 170, 190, 0, 30) - boxAreaKm2(r, 175, 190, 10, 20)},
		{"north cap with jumps", `{"type":"Polygon","coordinates":[[[0,60],[90,60],[180,60],[-90,60],[0,60]]]}`,
			1, capAreaKm2(r, 60)},
		{"south cap in 0..360, clockwise", `{"type":"Polygon","coordinates":[[[0,-70],[270,-70],[180,-70],[90,-70],[0,-70]]]}`,
			1, capAreaKm2(r, -70)},
		{"north cap with a hole across the antimeridian", `{"type":"Polygon","coordinates":[[[0,60],[90,60],[180,60],[-90,60],[0,60]],
			[[175,70],[185,70],[185,75],[175,75],[175,70]]]}`,
			2, capAreaKm2(r, 60) - boxAreaKm2(r, 175, 185, 70, 75)},
		{"north cap written as a box", `{"type":"Polygon","coordinates":[[[-180,60],[180,60],[180,90],[-180,90],[-180,60]]]}`,
			1, capAreaKm2(r, 60)},
		{"north cap box in 0..360", `{"type":"Polygon","coordinates":[[[0,60],[360,60],[360,90],[0,90],[0,60]]]}`,
			2, capAreaKm2(r, 60)},
		{"band between two caps", `{"type":"Polygon","coordinates":[[[-150,50],[-30,50],[90,50],[-150,50]],[[10,70],[130,70],[-110,70],[10,70]]]}`,
			1, capAreaKm2(r, 50) - capAreaKm2(r, 70)},
		{"southern band, hole across the cut", `{"type":"Polygon","coordinates":[[[-150,-50],[-30,-50],[90,-50],[-150,-50]],[[10,-70],[130,-70],[-110,-70],[10,-70]],
			[[170,-60],[190,-60],[190,-55],[170,-55],[170,-60]]]}`,
			2, capAreaKm2(r, -50) - capAreaKm2(r, -70) - boxAreaKm2(r, 170, 190, -60, -55)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			mp, err := ParseRegion([]byte(c.json), 0)
			if err != nil {
				t.Fatal(err)
			}
			if len(mp) != c.wantParts {
				t.Errorf("%d polygons, want %d: %v", len(mp), c.wantParts, mp)
			}
			for pi, p := range mp {
				for ri, ring := range p {
					if ringIsCCW(ring) != (ri == 0) {
						t.Errorf("polygon %d ring %d has the wrong winding", pi, ri)
					}
					if ring[0] != ring[len(ring)-1] {
						t.Errorf("polygon %d ring %d not closed", pi, ri)
					}
					for _, pt := range ring {
						if pt[0] < -180 || pt[0] > 180 {
							t.Fatalf("polygon %d ring %d has longitude %g outside −180..180", pi, ri, pt[0])
						}
					}
					if err := checkRingSimple(ring); err != nil {
						t.Errorf("polygon %d ring %d: %v", pi, ri, err)
					}
				}
			}
			if got := polygonsTotalArea(mp); math.Abs(got-c.wantArea) > 1e-9*c.wantArea {
				t.Errorf("area %.3f km², want %.3f km²", got, c.wantArea)
			}
		})
	}
}

func TestSelfIntersectionCheckOnLargeRing(t *testing.T) {
	// A 20,000-vertex star-shaped ring is simple by construction; swapping two vertices on
	// opposite sides makes it cross itself.
	ring := starRing(newTestRand(7), 20000, 0, 0, 5, 30, 0.9)
	if err := checkRingSimple(ring); err != nil {
		t.Fatalf("simple ring reported: %v", err)
	}
	bad := append(orb.Ring(nil), ring...)
	bad[100], bad[10100] = bad[10100], bad[100]
	if err := checkRingSimple(bad); err == nil {
		t.Fatal("crossing not detected")
	}
}

// BenchmarkNormalizeRegion100kVertices validates (including the self-intersection sweep) and
// normalises a 100,000-vertex coastline-like ring straddling the antimeridian.
func BenchmarkNormalizeRegion100kVertices(b *testing.B) {
	ring := walkRing(newTestRand(4), 99_999, 180, -20, 20, 50, 0.05) // + closing position = limit
	mp := orb.MultiPolygon{{ring}}
	b.ReportAllocs()
	for b.Loop() {
		out, err := NormalizeRegion(mp, 0)
		if err != nil || len(out) < 2 {
			b.Fatal(err, len(out))
		}
	}
}
