package geo

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
)

// TestPrepareRegionTopology checks OGC simple-features validity (OGC 06-103r4 §6.1.11.1: holes
// inside their exterior and not overlapping; §6.1.14: polygons of a multipolygon with disjoint
// interiors) and the repairs, including the reproductions of issue 9 item 6. Areas come from the
// spherical-zone formula (zoneKm2, relative tolerance 1e-12: the edges are parallels and
// meridians, for which the area is exact).
func TestPrepareRegionTopology(t *testing.T) {
	cases := []struct {
		name    string
		wkt     string
		err     string   // part of the error message; "" when the region is accepted
		area    float64  // km², when accepted
		repairs []string // a part of each repair message, in order
	}{
		// issue 9 item 6: stored with a negative area before
		{"hole outside its shell", "POLYGON((0 0,10 0,10 10,0 10,0 0),(20 20,21 20,21 21,20 21,20 20))",
			"", zoneKm2(10, 0, 10), []string{"polygon 0 ring 1 (a hole) lies outside its exterior ring and was dropped"}},
		{"shell inside its hole", "POLYGON((2 2,3 2,3 3,2 3,2 2),(0 0,10 0,10 10,0 10,0 0))",
			"polygon 0 ring 1 (a hole) contains its exterior ring", 0, nil},
		// issue 9 item 6: counted twice before
		{"the same square twice", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0)),((0 0,10 0,10 10,0 10,0 0)))",
			"", zoneKm2(10, 0, 10), []string{"polygon 1 repeats polygon 0 and was dropped"}},
		{"the same square twice, other winding and start", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0)),((10 10,10 0,0 0,0 10,10 10)))",
			"", zoneKm2(10, 0, 10), []string{"polygon 1 repeats polygon 0"}},
		// issue 9 item 6: a wrong area before
		{"hole crossing the shell's edge", "POLYGON((0 0,10 0,10 10,0 10,0 0),(5 5,15 5,15 6,5 6,5 5))",
			"polygon 0 ring 1 (a hole) crosses the boundary of its exterior ring", 0, nil},
		{"hole with a vertex outside, crossing at a shell vertex", "POLYGON((0 0,10 0,10 10,0 10,0 0),(5 5,10 10,12 5,5 5))",
			"polygon 0 ring 1 (a hole) crosses", 0, nil},
		{"hole leaving and re-entering through shell corners only", "POLYGON((0 0,10 0,10 10,0 10,0 0),(5 5,10 10,12 5,10 0,5 5))",
			"polygon 0 ring 1 (a hole) crosses", 0, nil},
		{"hole the same as its shell", "POLYGON((0 0,10 0,10 10,0 10,0 0),(0 0,0 10,10 10,10 0,0 0))",
			"is the same ring as its exterior ring", 0, nil},
		{"holes overlapping", "POLYGON((0 0,10 0,10 10,0 10,0 0),(2 2,5 2,5 5,2 5,2 2),(4 4,7 4,7 7,4 7,4 4))",
			"polygon 0 rings 1 and 2 (holes) overlap", 0, nil},
		{"hole inside a hole", "POLYGON((0 0,10 0,10 10,0 10,0 0),(2 2,8 2,8 8,2 8,2 2),(3 3,4 3,4 4,3 4,3 3))",
			"polygon 0 rings 1 and 2 (holes) overlap", 0, nil},
		{"holes touching along an edge", "POLYGON((0 0,10 0,10 10,0 10,0 0),(2 2,5 2,5 5,2 5,2 2),(5 2,8 2,8 5,5 5,5 2))",
			"", zoneKm2(10, 0, 10) - zoneKm2(6, 2, 5), nil},
		{"hole touching the shell along an edge", "POLYGON((0 0,10 0,10 10,0 10,0 0),(0 2,3 2,3 4,0 4,0 2))",
			"", zoneKm2(10, 0, 10) - zoneKm2(3, 2, 4), nil},
		{"parts touching along an edge", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0)),((10 0,20 0,20 10,10 10,10 0)))",
			"", zoneKm2(20, 0, 10), nil},
		{"parts touching along part of an edge", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0)),((10 2,20 2,20 8,10 8,10 2)))",
			"", zoneKm2(10, 0, 10) + zoneKm2(10, 2, 8), nil},
		{"parts touching at a corner", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0)),((10 10,20 10,20 20,10 20,10 10)))",
			"", zoneKm2(10, 0, 10) + zoneKm2(10, 10, 20), nil},
		{"parts overlapping", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0)),((5 5,15 5,15 15,5 15,5 5)))",
			"polygons 0 and 1 overlap", 0, nil},
		{"a part inside another", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0)),((2 2,3 2,3 3,2 3,2 2)))",
			"polygons 0 and 1 overlap", 0, nil},
		{"a part round another", "MULTIPOLYGON(((2 2,3 2,3 3,2 3,2 2)),((0 0,10 0,10 10,0 10,0 0)))",
			"polygons 0 and 1 overlap", 0, nil},
		{"same shell, different holes", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0),(2 2,3 2,3 3,2 3,2 2)),((0 0,10 0,10 10,0 10,0 0)))",
			"polygons 0 and 1 overlap", 0, nil},
		{"an island in a hole", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0),(2 2,8 2,8 8,2 8,2 2)),((4 4,6 4,6 6,4 6,4 4)))",
			"", zoneKm2(10, 0, 10) - zoneKm2(6, 2, 8) + zoneKm2(2, 4, 6), nil},
		{"an island filling its hole", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0),(2 2,8 2,8 8,2 8,2 2)),((2 2,8 2,8 8,2 8,2 2)))",
			"", zoneKm2(10, 0, 10), nil},
		{"an island larger than its hole", "MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0),(2 2,8 2,8 8,2 8,2 2)),((1 1,9 1,9 9,1 9,1 1)))",
			"polygons 0 and 1 overlap", 0, nil},

		// the same, across the antimeridian
		{"across the antimeridian: hole outside its shell", "POLYGON((170 -10,-170 -10,-170 10,170 10,170 -10),(-165 0,-160 0,-160 5,-165 5,-165 0))",
			"", zoneKm2(20, -10, 10), []string{"polygon 0 ring 1 (a hole) lies outside its exterior ring and was dropped"}},
		{"across the antimeridian: the same square twice", "MULTIPOLYGON(((179 -31,-179 -31,-179 -41,179 -41,179 -31)),((179 -31,181 -31,181 -41,179 -41,179 -31)))",
			"", zoneKm2(2, -41, -31), []string{"polygon 1 repeats polygon 0 and was dropped"}},
		{"across the antimeridian: the same pre-split square twice", "MULTIPOLYGON(((179 -41,180 -41,180 -31,179 -31,179 -41)),((-180 -41,-179 -41,-179 -31,-180 -31,-180 -41)),((179 -41,180 -41,180 -31,179 -31,179 -41)),((-180 -41,-179 -41,-179 -31,-180 -31,-180 -41)))",
			"", zoneKm2(2, -41, -31), []string{"polygon 2 repeats polygon 0", "polygon 3 repeats polygon 1"}},
		{"across the antimeridian: a part repeating one side of another", "MULTIPOLYGON(((175 0,-175 0,-175 10,175 10,175 0)),((175 0,180 0,180 10,175 10,175 0)))",
			"polygons 0 and 1 overlap", 0, nil},
		{"across the antimeridian: written both ways", "MULTIPOLYGON(((175 0,185 0,185 10,175 10,175 0)),((175 0,-175 0,-175 10,175 10,175 0)))",
			"", zoneKm2(10, 0, 10), []string{"polygon 1 repeats polygon 0 and was dropped"}},
		{"across the antimeridian: a hole filling the east side", "POLYGON((175 0,185 0,185 10,175 10,175 0),(180 0,185 0,185 10,180 10,180 0))",
			"", zoneKm2(5, 0, 10), nil},
		{"across the antimeridian: hole crossing the shell's edge", "POLYGON((170 -10,-170 -10,-170 10,170 10,170 -10),(-175 0,-165 0,-165 5,-175 5,-175 0))",
			"polygon 0 ring 1 (a hole) crosses the boundary of its exterior ring", 0, nil},
		{"across the antimeridian: holes overlapping", "POLYGON((160 -10,-160 -10,-160 10,160 10,160 -10),(175 0,-175 0,-175 5,175 5,175 0),(-178 2,-170 2,-170 8,-178 8,-178 2))",
			"polygon 0 rings 1 and 2 (holes) overlap", 0, nil},
		{"across the antimeridian: parts touching along an edge", "MULTIPOLYGON(((175 0,-175 0,-175 10,175 10,175 0)),((-175 0,-165 0,-165 10,-175 10,-175 0)))",
			"", zoneKm2(20, 0, 10), nil},
		{"across the antimeridian: parts overlapping", "MULTIPOLYGON(((175 0,-175 0,-175 10,175 10,175 0)),((179 5,-170 5,-170 15,179 15,179 5)))",
			"polygons 0 and 1 overlap", 0, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			pr, err := PrepareRegion(mustWKT(t, c.wkt), 0)
			if c.err != "" {
				if err == nil {
					t.Fatalf("accepted (area %.1f km², repairs %q), want an error containing %q", pr.AreaKm2, pr.Repairs, c.err)
				}
				if !strings.Contains(err.Error(), c.err) {
					t.Errorf("error %q does not contain %q", err, c.err)
				}
				if fault.KindOf(err) != fault.InvalidRegion || !errors.Is(err, ErrInvalidRegion) {
					t.Errorf("error %v: kind %q, want %q wrapping ErrInvalidRegion", err, fault.KindOf(err), fault.InvalidRegion)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if pr.AreaKm2 <= 0 || math.Abs(pr.AreaKm2-c.area) > 1e-12*c.area {
				t.Errorf("area %.6f km², want %.6f km²", pr.AreaKm2, c.area)
			}
			if len(pr.Repairs) != len(c.repairs) {
				t.Fatalf("repairs %q, want %d containing %q", pr.Repairs, len(c.repairs), c.repairs)
			}
			for i, want := range c.repairs {
				if !strings.Contains(pr.Repairs[i], want) {
					t.Errorf("repair %q does not contain %q", pr.Repairs[i], want)
				}
			}
		})
	}
}

func TestPrepareRegionHoleTouchingShellAtAPoint(t *testing.T) {
	// OGC 06-103r4 §6.1.11.1 lets a hole touch its exterior at a single point: accepted, and
	// the area lies strictly between zero and the shell's (zoneKm2).
	pr, err := PrepareRegion(mustWKT(t, "POLYGON((0 0,10 0,10 10,0 10,0 0),(5 0,6 1,5 2,4 1,5 0))"), 0)
	if err != nil {
		t.Fatal(err)
	}
	if shell := zoneKm2(10, 0, 10); !(pr.AreaKm2 > 0 && pr.AreaKm2 < shell) || len(pr.Repairs) != 0 {
		t.Errorf("area %.1f km² (shell %.1f), repairs %q", pr.AreaKm2, shell, pr.Repairs)
	}
}

// TestPrepareRegionRandomBoxes checks the topology rules on random longitude/latitude boxes
// against plain interval arithmetic (two boxes overlap when both their longitude and latitude
// intervals overlap with positive length), and areas against the spherical-zone formula.
func TestPrepareRegionRandomBoxes(t *testing.T) {
	type bx struct{ x1, y1, x2, y2 float64 }
	rnd := rand.New(rand.NewPCG(9, 6))
	randBox := func(lo, hi int) bx {
		x1, x2 := rnd.IntN(hi-lo)+lo, rnd.IntN(hi-lo)+lo
		y1, y2 := rnd.IntN(hi-lo)+lo, rnd.IntN(hi-lo)+lo
		for x1 == x2 {
			x2 = rnd.IntN(hi-lo) + lo
		}
		for y1 == y2 {
			y2 = rnd.IntN(hi-lo) + lo
		}
		return bx{float64(min(x1, x2)), float64(min(y1, y2)), float64(max(x1, x2)), float64(max(y1, y2))}
	}
	overlap := func(a, b bx) bool {
		return min(a.x2, b.x2)-max(a.x1, b.x1) > 0 && min(a.y2, b.y2)-max(a.y1, b.y1) > 0
	}
	within := func(in, out bx) bool {
		return in.x1 >= out.x1 && in.x2 <= out.x2 && in.y1 >= out.y1 && in.y2 <= out.y2
	}
	area := func(b bx) float64 { return zoneKm2(b.x2-b.x1, b.y1, b.y2) }
	check := func(t *testing.T, mp orb.MultiPolygon, wantErr bool, wantArea float64) {
		t.Helper()
		pr, err := PrepareRegion(mp, 0)
		if wantErr {
			if err == nil {
				t.Fatalf("%v accepted (repairs %q), want an error", mp, pr.Repairs)
			}
			return
		}
		if err != nil {
			t.Fatalf("%v: %v", mp, err)
		}
		if math.Abs(pr.AreaKm2-wantArea) > 1e-9*wantArea {
			t.Fatalf("%v: area %.3f km², want %.3f", mp, pr.AreaKm2, wantArea)
		}
	}
	// offset 176 puts the boxes across the antimeridian, written with longitudes up to 184
	for _, off := range []float64{0, 176} {
		t.Run(fmt.Sprintf("parts offset %g", off), func(t *testing.T) {
			for range 3000 {
				n := 2 + rnd.IntN(3)
				var boxes, uniq []bx
				var mp orb.MultiPolygon
				for range n {
					b := randBox(0, 8)
					if len(boxes) > 0 && rnd.IntN(4) == 0 {
						b = boxes[rnd.IntN(len(boxes))] // an exact repeat
					}
					boxes = append(boxes, b)
					if !slices.Contains(uniq, b) {
						uniq = append(uniq, b)
					}
					mp = append(mp, orb.Polygon{box(b.x1+off, b.y1, b.x2+off, b.y2)})
				}
				bad, sum := false, 0.0
				for i, a := range uniq {
					sum += area(a)
					for _, b := range uniq[i+1:] {
						bad = bad || overlap(a, b)
					}
				}
				check(t, mp, bad, sum)
			}
		})
	}
	t.Run("holes", func(t *testing.T) {
		shell := bx{0, 0, 10, 10}
		for range 3000 {
			p := orb.Polygon{box(shell.x1, shell.y1, shell.x2, shell.y2)}
			bad, sum := false, area(shell)
			var kept []bx
			for range 1 + rnd.IntN(3) {
				h := randBox(-3, 13)
				p = append(p, box(h.x1, h.y1, h.x2, h.y2))
				switch {
				case h == shell || (overlap(h, shell) && !within(h, shell)): // crossing, or containing the shell
					bad = true
				case within(h, shell):
					for _, k := range kept {
						bad = bad || overlap(h, k)
					}
					kept = append(kept, h)
					sum -= area(h)
				}
			}
			check(t, orb.MultiPolygon{p}, bad, sum)
		}
	})
}

func TestPrepareRegionGeoJSONReportsRepairs(t *testing.T) {
	// The stored-region path (GeoJSON) gets the same checks and repairs as PrepareRegion: the
	// hole outside its shell of issue 9 item 6 is dropped and reported, and the area is the
	// shell's (zoneKm2, relative tolerance 1e-12).
	in := `{"type":"Feature","properties":{"name":"SYNTHETIC Quillon Basin box"},"geometry":{"type":"Polygon","coordinates":[
		[[0,0],[10,0],[10,10],[0,10],[0,0]],[[20,20],[21,20],[21,21],[20,21],[20,20]]]}}`
	pr, err := PrepareRegionGeoJSON([]byte(in), 0)
	if err != nil {
		t.Fatal(err)
	}
	if want := zoneKm2(10, 0, 10); math.Abs(pr.AreaKm2-want) > 1e-12*want || len(pr.Repairs) != 1 || len(pr.Parts) != 1 || len(pr.Parts[0]) != 1 {
		t.Errorf("area %.3f km² (want %.3f), repairs %q, parts %v", pr.AreaKm2, want, pr.Repairs, pr.Parts)
	}
	if _, err := PrepareRegionGeoJSON([]byte(`{"type":"Point","coordinates":[0,0]}`), 0); fault.KindOf(err) != fault.InvalidRegion {
		t.Errorf("a Point: %v, want an invalid-region fault", err)
	}
}

// clipConvex returns the part of polygon subject inside the convex counter-clockwise polygon
// clip (both closed rings), by Sutherland–Hodgman clipping (Sutherland & Hodgman 1974,
// "Reentrant polygon clipping", Communications of the ACM 17(1), 32–42).
func clipConvex(subject, clip orb.Ring) orb.Ring {
	out := append(orb.Ring(nil), subject[:len(subject)-1]...)
	for i := 0; i+1 < len(clip) && len(out) > 0; i++ {
		a, b := clip[i], clip[i+1]
		inside := func(p orb.Point) bool { return (b[0]-a[0])*(p[1]-a[1])-(b[1]-a[1])*(p[0]-a[0]) >= 0 }
		cross := func(p, q orb.Point) orb.Point {
			d1 := (b[0]-a[0])*(p[1]-a[1]) - (b[1]-a[1])*(p[0]-a[0])
			d2 := (b[0]-a[0])*(q[1]-a[1]) - (b[1]-a[1])*(q[0]-a[0])
			t := d1 / (d1 - d2)
			return orb.Point{p[0] + t*(q[0]-p[0]), p[1] + t*(q[1]-p[1])}
		}
		in := out
		out = nil
		for k := range in {
			p, q := in[k], in[(k+1)%len(in)]
			switch {
			case inside(p) && inside(q):
				out = append(out, q)
			case inside(p):
				out = append(out, cross(p, q))
			case inside(q):
				out = append(out, cross(p, q), q)
			}
		}
	}
	if len(out) < 3 {
		return nil
	}
	return append(out, out[0])
}

// planarArea is the shoelace area of a closed ring (degrees², absolute).
func planarArea(r orb.Ring) float64 {
	s := 0.0
	for i := 0; i+1 < len(r); i++ {
		s += r[i][0]*r[i+1][1] - r[i+1][0]*r[i][1]
	}
	return math.Abs(s) / 2
}

// TestPrepareRegionRandomTriangles checks the topology rules on random triangles with small
// whole-number vertices (so many touch along edges and at corners) against an independent
// exact reference: the area of their intersection from Sutherland–Hodgman clipping (clipConvex).
// Two parts overlap when the intersection has area (tolerance 1e-9 deg², the rounding of the
// clipped vertices); a hole lies inside its shell when its intersection with the shell is the
// whole hole, outside when it is empty, and crosses the shell's boundary otherwise.
func TestPrepareRegionRandomTriangles(t *testing.T) {
	rnd := rand.New(rand.NewPCG(9, 7))
	tri := func() orb.Ring {
		for {
			r := orb.Ring{}
			for range 3 {
				r = append(r, orb.Point{float64(rnd.IntN(7)), float64(rnd.IntN(7))})
			}
			r = append(r, r[0])
			if ringArea2(r) != 0 {
				orientRing(r, true)
				return r
			}
		}
	}
	shift := func(r orb.Ring, dx float64) orb.Ring {
		c := append(orb.Ring(nil), r...)
		shiftRing(c, dx)
		return c
	}
	// 177: across the antimeridian, written up to 183; 178.5 and 176.3 also put the vertices on
	// longitudes that binary floating point does not hold exactly, so that touching is decided
	// within TouchToleranceDeg
	for _, off := range []float64{0, 177, 178.5, 176.3} {
		t.Run(fmt.Sprintf("parts offset %g", off), func(t *testing.T) {
			testRandomTriangleParts(t, tri, func(r orb.Ring) orb.Ring { return shift(r, off) })
		})
	}
	for _, off := range []float64{0, 177, 178.5, 176.3} {
		t.Run(fmt.Sprintf("holes offset %g", off), func(t *testing.T) {
			testRandomTriangleHoles(t, tri, func(r orb.Ring) orb.Ring { return shift(r, off) })
		})
	}
}

// testRandomTriangleHoles is the holes half of TestPrepareRegionRandomTriangles.
func testRandomTriangleHoles(t *testing.T, tri func() orb.Ring, shift func(orb.Ring) orb.Ring) {
	const tol = 1e-9
	{
		for range 3000 {
			shell, hole := tri(), tri()
			pr, err := PrepareRegion(orb.MultiPolygon{{shift(shell), shift(reversed(hole))}}, 0)
			// the area the result must have, from the unshifted rings (the area on the sphere
			// does not depend on longitude; SphericalAreaKm2 is checked against the zone formula
			// elsewhere): a split may turn a hole touching its shell into a notch, so the area,
			// not the number of rings, is compared
			aShell, aHole := SphericalAreaKm2(orb.MultiPolygon{{shell}}), SphericalAreaKm2(orb.MultiPolygon{{hole}})
			areaIs := func(want float64) bool { return math.Abs(pr.AreaKm2-want) <= 1e-9*aShell }
			inter := planarArea(clipConvex(hole, shell))
			switch {
			case math.Abs(inter-planarArea(hole)) < tol && math.Abs(inter-planarArea(shell)) < tol:
				if err == nil {
					t.Fatalf("hole %v is its shell %v but was accepted", hole, shell)
				}
			case math.Abs(inter-planarArea(hole)) < tol:
				if err != nil || len(pr.Repairs) != 0 || !areaIs(aShell-aHole) {
					t.Fatalf("hole %v inside shell %v: err %v, repairs %q", hole, shell, err, pr.Repairs)
				}
			case inter < tol:
				if err != nil || len(pr.Repairs) != 1 || !areaIs(aShell) {
					t.Fatalf("hole %v outside shell %v: err %v, repairs %q", hole, shell, err, pr.Repairs)
				}
			default:
				if err == nil {
					t.Fatalf("hole %v crosses shell %v (%g of %g deg² inside) but was accepted (repairs %q)", hole, shell, inter, planarArea(hole), pr.Repairs)
				}
			}
		}
	}
}

// testRandomTriangleParts is the parts half of TestPrepareRegionRandomTriangles; shift moves
// the triangles before they are prepared (the reference uses them unshifted).
func testRandomTriangleParts(t *testing.T, tri func() orb.Ring, shift func(orb.Ring) orb.Ring) {
	const tol = 1e-9
	for range 3000 {
		a, b := tri(), tri()
		pr, err := PrepareRegion(orb.MultiPolygon{{shift(a)}, {shift(b)}}, 0)
		inter := planarArea(clipConvex(a, b))
		same := math.Abs(inter-planarArea(a)) < tol && math.Abs(inter-planarArea(b)) < tol
		switch {
		case same:
			if err != nil || len(pr.Repairs) != 1 {
				t.Fatalf("%v and %v are the same triangle: err %v, repairs %q", a, b, err, pr.Repairs)
			}
		case inter > tol:
			if err == nil || !strings.Contains(err.Error(), "polygons 0 and 1 overlap") {
				t.Fatalf("%v and %v overlap by %g deg² but: err %v", a, b, inter, err)
			}
		default:
			if err != nil || len(pr.Repairs) != 0 {
				t.Fatalf("%v and %v do not overlap but: err %v, repairs %q", a, b, err, pr.Repairs)
			}
		}
	}
}
