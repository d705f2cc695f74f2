package sqlite

import (
	"github.com/paulmach/orb"
	"github.com/paulmach/orb/planar"

	"ridgeflank/store"
)

// intersectsShifted reports whether a shares a point with q or with q shifted by ±360° of
// longitude (store.QueryShifts), matching what the PostGIS backend asks of ST_Intersects.
func intersectsShifted(a orb.MultiPolygon, q orb.Geometry) bool {
	ab := a.Bound()
	for _, d := range store.QueryShifts {
		qs := store.ShiftLon(q, d)
		if !ab.Intersects(qs.Bound()) {
			continue
		}
		if intersects(a, qs) {
			return true
		}
	}
	return false
}

// intersects reports whether the multipolygon a and the geometry q share at least one point,
// treating longitude and latitude as planar coordinates (as PostGIS geometry does).
// Boundaries count: touching shapes intersect. The test is the classical one: two shapes
// intersect iff an edge of one crosses or touches an edge of the other, or one lies inside the
// other (tested with one vertex of each component, point-in-polygon by ray casting).
func intersects(a orb.MultiPolygon, q orb.Geometry) bool {
	var pts []orb.Point
	var lines []orb.LineString
	var polys orb.MultiPolygon
	switch v := q.(type) {
	case orb.Point:
		pts = []orb.Point{v}
	case orb.MultiPoint:
		pts = v
	case orb.LineString:
		lines = []orb.LineString{v}
	case orb.MultiLineString:
		lines = v
	case orb.Bound:
		polys = orb.MultiPolygon{v.ToPolygon()}
	case orb.Polygon:
		polys = orb.MultiPolygon{v}
	case orb.MultiPolygon:
		polys = v
	case orb.Ring:
		polys = orb.MultiPolygon{{v}}
	default:
		return false
	}
	for _, p := range polys {
		for _, r := range p {
			lines = append(lines, orb.LineString(r))
		}
	}
	// A vertex of q inside (or on) a.
	for _, p := range pts {
		if mpCovers(a, p) {
			return true
		}
	}
	for _, l := range lines {
		if len(l) > 0 && mpCovers(a, l[0]) {
			return true
		}
	}
	// Crossing or touching edges.
	for _, l := range lines {
		lb := l.Bound()
		for _, poly := range a {
			for _, ring := range poly {
				if !lb.Intersects(ring.Bound()) {
					continue
				}
				if pathsTouch(l, ring) {
					return true
				}
			}
		}
	}
	// a inside q (q polygonal).
	if len(polys) > 0 {
		for _, poly := range a {
			if len(poly) > 0 && len(poly[0]) > 0 && mpCovers(polys, poly[0][0]) {
				return true
			}
		}
	}
	return false
}

// mpCovers: p is in the interior or on the boundary of mp.
func mpCovers(mp orb.MultiPolygon, p orb.Point) bool {
	for _, poly := range mp {
		if len(poly) == 0 || !poly[0].Bound().Contains(p) {
			continue
		}
		for _, r := range poly {
			if onRing(r, p) {
				return true
			}
		}
		if planar.PolygonContains(poly, p) {
			return true
		}
	}
	return false
}

func onRing(r orb.Ring, p orb.Point) bool {
	for i := 0; i+1 < len(r); i++ {
		if orientation(r[i], r[i+1], p) == 0 && onSegment(r[i], r[i+1], p) {
			return true
		}
	}
	return false
}

// pathsTouch: some segment of l meets some segment of r.
func pathsTouch(l orb.LineString, r orb.Ring) bool {
	for i := 0; i+1 < len(l); i++ {
		p1, p2 := l[i], l[i+1]
		sb := orb.Bound{Min: orb.Point{min(p1[0], p2[0]), min(p1[1], p2[1])}, Max: orb.Point{max(p1[0], p2[0]), max(p1[1], p2[1])}}
		for j := 0; j+1 < len(r); j++ {
			q1, q2 := r[j], r[j+1]
			if max(q1[0], q2[0]) < sb.Min[0] || min(q1[0], q2[0]) > sb.Max[0] ||
				max(q1[1], q2[1]) < sb.Min[1] || min(q1[1], q2[1]) > sb.Max[1] {
				continue
			}
			if segmentsMeet(p1, p2, q1, q2) {
				return true
			}
		}
	}
	return false
}

// orientation of the triangle (a, b, c): +1 counter-clockwise, −1 clockwise, 0 collinear.
func orientation(a, b, c orb.Point) int {
	v := (b[0]-a[0])*(c[1]-a[1]) - (b[1]-a[1])*(c[0]-a[0])
	switch {
	case v > 0:
		return 1
	case v < 0:
		return -1
	}
	return 0
}

// onSegment: c, known to be collinear with a–b, lies within the segment's box.
func onSegment(a, b, c orb.Point) bool {
	return min(a[0], b[0]) <= c[0] && c[0] <= max(a[0], b[0]) &&
		min(a[1], b[1]) <= c[1] && c[1] <= max(a[1], b[1])
}

// segmentsMeet: closed segments p1–p2 and q1–q2 share a point (orientation test, including
// collinear overlap and touching end points).
func segmentsMeet(p1, p2, q1, q2 orb.Point) bool {
	o1 := orientation(p1, p2, q1)
	o2 := orientation(p1, p2, q2)
	o3 := orientation(q1, q2, p1)
	o4 := orientation(q1, q2, p2)
	if o1 != o2 && o3 != o4 {
		return true
	}
	return o1 == 0 && onSegment(p1, p2, q1) ||
		o2 == 0 && onSegment(p1, p2, q2) ||
		o3 == 0 && onSegment(q1, q2, p1) ||
		o4 == 0 && onSegment(q1, q2, p2)
}
