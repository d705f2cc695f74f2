package geo

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"github.com/paulmach/orb"
)

// seamChain is a run of a ring's vertices lying on one side of a splitting meridian, starting
// and ending on that meridian (at latitudes y0 and y1).
type seamChain struct {
	pts    orb.Ring
	y0, y1 float64
	east   bool
}

// seamCross returns the point where edge a→b meets the meridian x = s. The result does not
// depend on the edge's direction, so that two polygons sharing an edge get the same point.
func seamCross(a, b orb.Point, s float64) orb.Point {
	if a[0] == s {
		return a
	}
	if b[0] == s {
		return b
	}
	if b[0] < a[0] || (b[0] == a[0] && b[1] < a[1]) {
		a, b = b, a
	}
	t := (s - a[0]) / (b[0] - a[0])
	return orb.Point{s, a[1] + t*(b[1]-a[1])}
}

func appendDistinct(r orb.Ring, p orb.Point) orb.Ring {
	if len(r) > 0 && r[len(r)-1] == p {
		return r
	}
	return append(r, p)
}

// ringChains cuts a closed ring that has vertices on both sides of x = s (a vertex exactly on s
// counts as east) into chains.
func ringChains(r orb.Ring, s float64) []seamChain {
	n := len(r) - 1
	east := func(i int) bool { return r[i%n][0] >= s }
	start := -1
	for i := 0; i < n; i++ {
		if east(i) != east(i+n-1) {
			start = i
			break
		}
	}
	if start < 0 {
		return nil
	}
	var out []seamChain
	cp := seamCross(r[(start+n-1)%n], r[start], s)
	cur := seamChain{pts: orb.Ring{cp}, y0: cp[1], east: east(start)}
	for j := 0; j < n; j++ {
		i := (start + j) % n
		ni := (i + 1) % n
		cur.pts = appendDistinct(cur.pts, r[i])
		if east(ni) != east(i) {
			cp := seamCross(r[i], r[ni], s)
			cur.pts = appendDistinct(cur.pts, cp)
			cur.y1 = cp[1]
			out = append(out, cur)
			cur = seamChain{pts: orb.Ring{cp}, y0: cp[1], east: east(ni)}
		}
	}
	return out
}

// joinChains links the chains of one side into closed rings by walking along the meridian:
// north on the west side, south on the east side, which keeps the region on the left when
// exteriors run counter-clockwise and holes clockwise.
func joinChains(cs []seamChain, eastSide bool) ([]orb.Ring, error) {
	used := make([]bool, len(cs))
	var rings []orb.Ring
	for first := range cs {
		if used[first] {
			continue
		}
		used[first] = true
		ring := append(orb.Ring(nil), cs[first].pts...)
		cur := first
		for steps := 0; ; steps++ {
			if steps > len(cs) {
				return nil, fmt.Errorf("cannot be split at the antimeridian (do its rings cross each other?)")
			}
			y1 := cs[cur].y1
			next := -1
			for j := range cs {
				if used[j] && j != first {
					continue
				}
				y0 := cs[j].y0
				if eastSide {
					if y0 <= y1 && (next < 0 || y0 > cs[next].y0 || (y0 == cs[next].y0 && j == first)) {
						next = j
					}
				} else if y0 >= y1 && (next < 0 || y0 < cs[next].y0 || (y0 == cs[next].y0 && j == first)) {
					next = j
				}
			}
			if next < 0 {
				return nil, fmt.Errorf("cannot be split at the antimeridian (do its rings cross each other?)")
			}
			if next == first {
				break
			}
			used[next] = true
			for _, p := range cs[next].pts {
				ring = appendDistinct(ring, p)
			}
			cur = next
		}
		if ring[0] != ring[len(ring)-1] {
			ring = append(ring, ring[0])
		}
		rings = append(rings, ring)
	}
	return rings, nil
}

// ringContainsPoint is the even-odd ray test in the lon/lat plane.
func ringContainsPoint(r orb.Ring, p orb.Point) bool {
	in := false
	for i := 0; i+1 < len(r); i++ {
		a, b := r[i], r[i+1]
		if (a[1] > p[1]) != (b[1] > p[1]) {
			x := a[0] + (p[1]-a[1])*(b[0]-a[0])/(b[1]-a[1])
			if p[0] < x {
				in = !in
			}
		}
	}
	return in
}

// minPieceArea2 is the smallest twice-area (degrees²) kept for a piece produced by splitting;
// smaller pieces are slivers of rounding error along the meridian.
const minPieceArea2 = 1e-12

// splitIntoRange splits a polygon (exterior counter-clockwise, holes clockwise, in unwrapped
// longitudes) at the meridians ±180 as often as needed, shifts each piece by a multiple of 360°
// into −180..180 and returns the pieces, oriented by the right-hand rule.
func splitIntoRange(rings []orb.Ring, pi int) ([]orb.Polygon, error) {
	var out []orb.Polygon
	var rec func(p orb.Polygon, depth int) error
	rec = func(p orb.Polygon, depth int) error {
		if depth > 8 {
			return regionErr("polygon %d cannot be brought into −180..180", pi)
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, r := range p {
			l, h := ringXRange(r)
			lo, hi = math.Min(lo, l), math.Max(hi, h)
		}
		var s float64
		switch {
		case hi > 180:
			s = 180
		case lo < -180:
			s = -180
		default:
			out = append(out, p)
			return nil
		}
		west, east, err := splitPolygonAt(p, s, pi)
		if err != nil {
			return err
		}
		for _, w := range west {
			if s < 0 {
				shiftPolygon(w, 360)
			}
			if err := rec(w, depth+1); err != nil {
				return err
			}
		}
		for _, e := range east {
			if s > 0 {
				shiftPolygon(e, -360)
			}
			if err := rec(e, depth+1); err != nil {
				return err
			}
		}
		return nil
	}
	if err := rec(orb.Polygon(rings), 0); err != nil {
		return nil, err
	}
	return out, nil
}

func shiftPolygon(p orb.Polygon, dx float64) {
	for _, r := range p {
		shiftRing(r, dx)
	}
}

// splitPolygonAt splits a polygon (exterior counter-clockwise, holes clockwise) at the meridian
// x = s into the pieces west and east of it, oriented by the right-hand rule. Pieces of
// negligible area (slivers along the meridian) are dropped.
func splitPolygonAt(rings orb.Polygon, s float64, pi int) (west, east []orb.Polygon, err error) {
	var chains [2][]seamChain // [0] west, [1] east
	var holes [2][]orb.Ring
	for ri, r := range rings {
		rlo, rhi := ringXRange(r)
		side := -1
		switch {
		case rhi <= s:
			side = 0
		case rlo >= s:
			side = 1
		}
		if side >= 0 {
			if ri == 0 {
				// the whole exterior lies on one side; so, for a valid polygon, do its holes
				if side == 0 {
					return []orb.Polygon{rings}, nil, nil
				}
				return nil, []orb.Polygon{rings}, nil
			}
			holes[side] = append(holes[side], r)
			continue
		}
		for _, c := range ringChains(r, s) {
			if c.east {
				chains[1] = append(chains[1], c)
			} else {
				chains[0] = append(chains[0], c)
			}
		}
	}
	var sides [2][]orb.Polygon
	for side := 0; side < 2; side++ {
		rs, err := joinChains(chains[side], side == 1)
		if err != nil {
			return nil, nil, regionErr("polygon %d %v", pi, err)
		}
		var pieces []orb.Polygon
		for _, r := range rs {
			if math.Abs(ringArea2(r)) <= minPieceArea2 || len(r) < 4 {
				continue
			}
			orientRing(r, true)
			pieces = append(pieces, orb.Polygon{r})
		}
		filled := make([]bool, len(pieces))
		for _, h := range holes[side] {
			k, fills := pieceOfHole(pieces, h)
			if k < 0 {
				return nil, nil, regionErr("polygon %d has a hole outside its exterior ring", pi)
			}
			if fills {
				filled[k] = true // the hole is the whole piece (it touched its exterior)
				continue
			}
			hc := append(orb.Ring(nil), h...)
			orientRing(hc, false)
			pieces[k] = append(pieces[k], hc)
		}
		for k, pc := range pieces {
			if !filled[k] {
				sides[side] = append(sides[side], pc)
			}
		}
	}
	return sides[0], sides[1], nil
}

// pieceOfHole returns the index of the piece whose exterior holds hole h (a hole lying on one
// side of a split), or −1. The hole may touch a piece's boundary (at the splitting meridian, or
// where it touched its exterior), so the probe is the first of its vertices, then of its edge
// midpoints, that lies strictly inside a piece. When none does but all lie on the boundary of
// one piece, the hole is that whole piece (fills is true).
func pieceOfHole(pieces []orb.Polygon, h orb.Ring) (k int, fills bool) {
	if k := pieceInside(pieces, h); k >= 0 {
		return k, false
	}
	for k, pc := range pieces {
		on := true
		for i := 0; i+1 < len(h) && on; i++ {
			on = locateInRing(pc[0], h[i]) == 0 && locateInRing(pc[0], lerp(h[i], h[i+1], 0.5)) == 0
		}
		if on {
			return k, true
		}
	}
	return -1, false
}

// pieceInside returns the piece holding a vertex or edge midpoint of h strictly inside, or −1.
func pieceInside(pieces []orb.Polygon, h orb.Ring) int {
	try := func(p orb.Point) int {
		for k, pc := range pieces {
			if locateInRing(pc[0], p) > 0 {
				return k
			}
		}
		return -1
	}
	for _, p := range h[:len(h)-1] {
		if k := try(p); k >= 0 {
			return k
		}
	}
	for i := 0; i+1 < len(h); i++ {
		if k := try(lerp(h[i], h[i+1], 0.5)); k >= 0 {
			return k
		}
	}
	return -1
}

// SelfIntersectionPairBudget bounds the work of the self-intersection and topology checks: rings
// in which more than this many pairs of edges overlap in longitude are accepted without the
// self-intersection check, and polygons (or multipolygons) with more than this many such pairs
// among all their rings without the topology checks of NormalizeRegion.
const SelfIntersectionPairBudget = 20_000_000

type ringSeg struct {
	minX, maxX, minY, maxY float64
	ring, i                int
}

// edgeRef names edge i (from position i to i+1) of ring ring.
type edgeRef struct{ ring, i int }

// sweepEdges calls visit for every pair of edges of the given closed rings whose bounding boxes
// overlap (closed boxes), using a sort-and-sweep over longitude: O(n log n + k) for n edges and k
// pairs of edges whose longitude ranges overlap. The pair is given with the edge that starts
// further west first. visit returns false to stop the sweep. sweepEdges returns false, having
// stopped, when more than SelfIntersectionPairBudget pairs would have to be looked at.
func sweepEdges(rings []orb.Ring, visit func(a, b edgeRef) bool) bool {
	var segs []ringSeg
	for ri, r := range rings {
		for i := 0; i+1 < len(r); i++ {
			a, b := r[i], r[i+1]
			segs = append(segs, ringSeg{math.Min(a[0], b[0]), math.Max(a[0], b[0]), math.Min(a[1], b[1]), math.Max(a[1], b[1]), ri, i})
		}
	}
	slices.SortFunc(segs, func(a, b ringSeg) int { return cmp.Compare(a.minX, b.minX) })
	budget := SelfIntersectionPairBudget
	for ii := range segs {
		si := segs[ii]
		for jj := ii + 1; jj < len(segs) && segs[jj].minX <= si.maxX; jj++ {
			budget--
			if budget < 0 {
				return false
			}
			sj := segs[jj]
			if sj.minY > si.maxY || sj.maxY < si.minY {
				continue
			}
			if !visit(edgeRef{si.ring, si.i}, edgeRef{sj.ring, sj.i}) {
				return true
			}
		}
	}
	return true
}

func orient2(a, b, c orb.Point) float64 {
	return (b[0]-a[0])*(c[1]-a[1]) - (b[1]-a[1])*(c[0]-a[0])
}

// onSegment reports whether p, known to be collinear with a–b, lies within its bounding box.
func onSegment(a, b, p orb.Point) bool {
	return math.Min(a[0], b[0]) <= p[0] && p[0] <= math.Max(a[0], b[0]) &&
		math.Min(a[1], b[1]) <= p[1] && p[1] <= math.Max(a[1], b[1])
}

// segmentsMeet reports whether closed segments p1–p2 and p3–p4 share any point.
func segmentsMeet(p1, p2, p3, p4 orb.Point) bool {
	d1 := orient2(p3, p4, p1)
	d2 := orient2(p3, p4, p2)
	d3 := orient2(p1, p2, p3)
	d4 := orient2(p1, p2, p4)
	if ((d1 > 0 && d2 < 0) || (d1 < 0 && d2 > 0)) && ((d3 > 0 && d4 < 0) || (d3 < 0 && d4 > 0)) {
		return true
	}
	return (d1 == 0 && onSegment(p3, p4, p1)) || (d2 == 0 && onSegment(p3, p4, p2)) ||
		(d3 == 0 && onSegment(p1, p2, p3)) || (d4 == 0 && onSegment(p1, p2, p4))
}

// checkRingSimple returns an error if a closed ring (no repeated consecutive positions) crosses
// or touches itself or doubles back on itself, using the sort-and-sweep of sweepEdges.
func checkRingSimple(r orb.Ring) error {
	n := len(r) - 1
	if n < 3 {
		return nil
	}
	var err error
	sweepEdges([]orb.Ring{r}, func(ea, eb edgeRef) bool {
		i, j := min(ea.i, eb.i), max(ea.i, eb.i)
		if j == i+1 || (i == 0 && j == n-1) {
			// adjacent edges share one vertex q; they must not double back along each other
			var p, q, w orb.Point
			if j == i+1 {
				p, q, w = r[i], r[i+1], r[j+1]
			} else {
				p, q, w = r[n-1], r[0], r[1]
			}
			if n > 3 || j == i+1 {
				if orient2(p, q, w) == 0 && (q[0]-p[0])*(w[0]-q[0])+(q[1]-p[1])*(w[1]-q[1]) < 0 {
					err = fmt.Errorf("doubles back on itself at (%g, %g)", q[0], q[1])
					return false
				}
			}
			return true
		}
		if segmentsMeet(r[i], r[i+1], r[j], r[j+1]) {
			err = fmt.Errorf("crosses or touches itself (edges %d and %d, near (%g, %g))", i, j, r[i][0], r[i][1])
			return false
		}
		return true
	})
	return err
}
