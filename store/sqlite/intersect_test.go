package sqlite

import (
	"math"
	"testing"

	"github.com/paulmach/orb"
)

func sq(w, s, e, n float64) orb.Ring { return orb.Ring{{w, s}, {e, s}, {e, n}, {w, n}, {w, s}} }

// TestIntersects checks the planar predicate against the OGC Simple Features definition
// (OGC 06-103r4 §6.1.15.3: a.Intersects(b) ⇔ ¬a.Disjoint(b), boundaries included). Each
// expected value follows by construction from the coordinates; no tolerance is involved.
func TestIntersects(t *testing.T) {
	donut := orb.MultiPolygon{{sq(0, 0, 10, 10), orb.Ring{{3, 3}, {3, 7}, {7, 7}, {7, 3}, {3, 3}}}}
	cases := []struct {
		name string
		q    orb.Geometry
		want bool
	}{
		{"point inside", orb.Point{1, 1}, true},
		{"point outside", orb.Point{11, 1}, false},
		{"point on outer edge", orb.Point{10, 5}, true},
		{"point on outer vertex", orb.Point{0, 0}, true},
		{"point in hole", orb.Point{5, 5}, false},
		{"point on hole edge", orb.Point{3, 5}, true},
		{"multipoint one inside", orb.MultiPoint{{20, 20}, {1, 9}}, true},
		{"segment crossing with both ends outside", orb.LineString{{-1, 5}, {11, 5}}, true},
		{"segment along an edge", orb.LineString{{2, 0}, {8, 0}}, true},
		{"segment collinear beyond the edge", orb.LineString{{11, 0}, {12, 0}}, false},
		{"segment parallel outside", orb.LineString{{-1, -1}, {11, -1}}, false},
		{"segment touching a vertex", orb.LineString{{-1, 11}, {0, 10}}, true},
		{"segment inside hole", orb.LineString{{4, 4}, {6, 6}}, false},
		{"segment from hole into ring", orb.LineString{{5, 5}, {5, 8}}, true},
		{"polygon containing", orb.Polygon{sq(-5, -5, 15, 15)}, true},
		{"polygon inside ring part", orb.Polygon{sq(0.5, 0.5, 2, 2)}, true},
		{"polygon inside hole", orb.Polygon{sq(4, 4, 6, 6)}, false},
		{"polygon covering hole only", orb.Polygon{sq(2.5, 2.5, 7.5, 7.5)}, true},
		{"polygon disjoint", orb.Polygon{sq(20, 20, 30, 30)}, false},
		{"polygon sharing an edge", orb.Polygon{sq(10, 0, 20, 10)}, true},
		{"polygon touching a corner", orb.Polygon{sq(10, 10, 20, 20)}, true},
		{"bound overlapping", orb.Bound{Min: orb.Point{9, 9}, Max: orb.Point{12, 12}}, true},
		{"multipolygon second part hits", orb.MultiPolygon{{sq(20, 20, 30, 30)}, {sq(8, 8, 9, 9)}}, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := intersects(donut, c.q); got != c.want {
				t.Fatalf("intersects = %v, want %v", got, c.want)
			}
		})
	}
}

// TestIntersectsShifted: longitudes that differ by 360° name the same place.
func TestIntersectsShifted(t *testing.T) {
	split := orb.MultiPolygon{{sq(170, -10, 180, 10)}, {sq(-180, -10, -170, 10)}}
	continuous := orb.MultiPolygon{{sq(175, 20, 185, 30)}}
	cases := []struct {
		name string
		a    orb.MultiPolygon
		q    orb.Geometry
		want bool
	}{
		{"split region, point beyond 180", split, orb.Point{182, 0}, true},
		{"split region, point below -180", split, orb.Point{-185, 0}, true},
		{"split region, far point", split, orb.Point{0, 0}, false},
		{"continuous region, point west of -180", continuous, orb.Point{-178, 25}, true},
		{"continuous region, point at 176", continuous, orb.Point{176, 25}, true},
		{"continuous region, wrong latitude", continuous, orb.Point{-178, 0}, false},
		{"polar cap, point near pole", orb.MultiPolygon{{sq(-180, 80, 180, 90)}}, orb.Point{123, 89.9}, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := intersectsShifted(c.a, c.q); got != c.want {
				t.Fatalf("intersectsShifted = %v, want %v", got, c.want)
			}
		})
	}
}

// circle returns a polygon of n vertices approximating a circle (for benchmarks).
func circle(cx, cy, r float64, n int) orb.Polygon {
	ring := make(orb.Ring, 0, n+1)
	for i := 0; i < n; i++ {
		a := 2 * math.Pi * float64(i) / float64(n)
		ring = append(ring, orb.Point{cx + r*math.Cos(a), cy + r*math.Sin(a)})
	}
	return orb.Polygon{append(ring, ring[0])}
}

func BenchmarkIntersects1000Vertices(b *testing.B) {
	a := orb.MultiPolygon{circle(0, 0, 10, 1000)}
	q := circle(9, 0, 2, 100) // overlaps the rim: needs the edge test
	b.ReportAllocs()
	for b.Loop() {
		if !intersectsShifted(a, q) {
			b.Fatal("should intersect")
		}
	}
}
