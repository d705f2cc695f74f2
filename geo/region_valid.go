package geo

import (
	"cmp"
	"fmt"
	"maps"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/paulmach/orb"
)

// Region topology (OGC 06-103r4, Simple Feature Access part 1, §6.1.11.1 for polygons and
// §6.1.14 for multipolygons; section numbers from memory): holes lie inside their exterior
// ring, holes of one polygon do not overlap, and the polygons of a multipolygon have disjoint
// interiors. Rings may touch at points; touching along edges is accepted too (it leaves areas
// and masks correct). The checks use the sort-and-sweep of sweepEdges to find the pairs of edges
// of different rings that meet, then decide each relation from a few probe points.

// ringRel is how ring b lies with respect to ring a.
type ringRel int

const (
	relOutside ringRel = iota // b's interior is outside a's (b may touch a's boundary)
	relInside                 // b lies inside a (it may touch a's boundary)
	relSame                   // b runs along a's boundary all the way: the same ring as a set
	relCross                  // b has points both inside and outside a
)

// edgePair is a pair of meeting edges: edge a of one ring and edge b of another.
type edgePair struct{ a, b int }

// ringMeets records, for pairs of rings (lower index first), which of their edges meet.
type ringMeets map[[2]int][]edgePair

// findMeets sweeps the rings once and records every pair of edges of different rings that
// share a point; same(i, j) reports ring pairs to skip. It returns false when the pair budget
// ran out (see sweepEdges), in which case the record is incomplete.
func findMeets(rings []orb.Ring, skip func(i, j int) bool) (ringMeets, bool) {
	m := ringMeets{}
	done := sweepEdges(rings, func(ea, eb edgeRef) bool {
		if ea.ring == eb.ring || (skip != nil && skip(ea.ring, eb.ring)) {
			return true
		}
		if ea.ring > eb.ring {
			ea, eb = eb, ea
		}
		ra, rb := rings[ea.ring], rings[eb.ring]
		if segmentsMeet(ra[ea.i], ra[ea.i+1], rb[eb.i], rb[eb.i+1]) {
			k := [2]int{ea.ring, eb.ring}
			m[k] = append(m[k], edgePair{ea.i, eb.i})
		}
		return true
	})
	return m, done
}

// pairs returns the meeting edges of rings i and j as (edge of i, edge of j).
func (m ringMeets) pairs(i, j int) []edgePair {
	if i < j {
		return m[[2]int{i, j}]
	}
	ps := m[[2]int{j, i}]
	out := make([]edgePair, len(ps))
	for k, p := range ps {
		out[k] = edgePair{p.b, p.a}
	}
	return out
}

// TouchToleranceDeg is the distance in degrees (about 0.1 mm) within which the topology checks
// count a point as lying on an edge, so that a vertex placed on another ring's edge by software
// working in decimal degrees touches that edge rather than crossing it by a rounding error.
const TouchToleranceDeg = 1e-9

// nearLine reports whether orientation d (orient2 against a segment of length l) puts the point
// within TouchToleranceDeg of the segment's line.
func nearLine(d, l float64) bool { return math.Abs(d) <= TouchToleranceDeg*l }

// nearSegment reports whether p, within tolerance of the line through a–b, lies within the
// segment's bounding box widened by TouchToleranceDeg.
func nearSegment(a, b, p orb.Point) bool {
	const e = TouchToleranceDeg
	return math.Min(a[0], b[0])-e <= p[0] && p[0] <= math.Max(a[0], b[0])+e &&
		math.Min(a[1], b[1])-e <= p[1] && p[1] <= math.Max(a[1], b[1])+e
}

func segLen(a, b orb.Point) float64 { return math.Hypot(b[0]-a[0], b[1]-a[1]) }

// locateInRing returns +1 if p lies inside ring r, −1 outside, 0 on its boundary (within
// TouchToleranceDeg).
func locateInRing(r orb.Ring, p orb.Point) int {
	for i := 0; i+1 < len(r); i++ {
		if nearLine(orient2(r[i], r[i+1], p), segLen(r[i], r[i+1])) && nearSegment(r[i], r[i+1], p) {
			return 0
		}
	}
	if ringContainsPoint(r, p) {
		return 1
	}
	return -1
}

// segParam returns the parameter of p's projection on segment a→b (0 at a, 1 at b).
func segParam(a, b, p orb.Point) float64 {
	dx, dy := b[0]-a[0], b[1]-a[1]
	return ((p[0]-a[0])*dx + (p[1]-a[1])*dy) / (dx*dx + dy*dy)
}

func lerp(a, b orb.Point, t float64) orb.Point {
	return orb.Point{a[0] + t*(b[0]-a[0]), a[1] + t*(b[1]-a[1])}
}

// relateRings says how ring b lies with respect to ring a, both simple and closed, given the
// pairs of their edges that meet (edge of a, edge of b). When b crosses a it also returns a
// point near the crossing.
//
// Where b does not meet a's boundary, its inside/outside status cannot change; so it suffices
// to locate one vertex when the rings do not meet, and otherwise the midpoints of the pieces
// into which the meeting points cut b's edges that meet a. The cost is O(|a|) per probe.
func relateRings(a, b orb.Ring, meets []edgePair) (ringRel, orb.Point) {
	if len(meets) == 0 {
		if locateInRing(a, b[0]) > 0 {
			return relInside, orb.Point{}
		}
		return relOutside, orb.Point{}
	}
	type contacts struct {
		ts []float64    // parameters along b's edge where it meets a's boundary
		on [][2]float64 // parameter intervals along b's edge lying on a's boundary
	}
	byEdge := map[int]*contacts{}
	for _, m := range meets {
		p1, p2 := b[m.b], b[m.b+1]
		q1, q2 := a[m.a], a[m.a+1]
		d1, d2 := orient2(q1, q2, p1), orient2(q1, q2, p2)
		d3, d4 := orient2(p1, p2, q1), orient2(p1, p2, q2)
		lq, lp := segLen(q1, q2), segLen(p1, p2)
		z1, z2, z3, z4 := nearLine(d1, lq), nearLine(d2, lq), nearLine(d3, lp), nearLine(d4, lp)
		if !z1 && !z2 && !z3 && !z4 && d1*d2 < 0 && d3*d4 < 0 {
			t := d1 / (d1 - d2)
			return relCross, lerp(p1, p2, t)
		}
		c := byEdge[m.b]
		if c == nil {
			c = &contacts{}
			byEdge[m.b] = c
		}
		if z1 && z2 {
			t1, t2 := segParam(p1, p2, q1), segParam(p1, p2, q2)
			lo, hi := math.Max(0, math.Min(t1, t2)), math.Min(1, math.Max(t1, t2))
			if hi > lo {
				c.on = append(c.on, [2]float64{lo, hi})
			}
			c.ts = append(c.ts, lo, hi)
			continue
		}
		if z1 && nearSegment(q1, q2, p1) {
			c.ts = append(c.ts, 0)
		}
		if z2 && nearSegment(q1, q2, p2) {
			c.ts = append(c.ts, 1)
		}
		if z3 && nearSegment(p1, p2, q1) {
			c.ts = append(c.ts, min(1, max(0, segParam(p1, p2, q1))))
		}
		if z4 && nearSegment(p1, p2, q2) {
			c.ts = append(c.ts, min(1, max(0, segParam(p1, p2, q2))))
		}
	}
	in, out := false, false
	for _, e := range slices.Sorted(maps.Keys(byEdge)) {
		c := byEdge[e]
		p1, p2 := b[e], b[e+1]
		ts := append(c.ts, 0, 1)
		slices.Sort(ts)
		for k := 0; k+1 < len(ts); k++ {
			t0, t1 := ts[k], ts[k+1]
			if t1-t0 < 1e-12 {
				continue
			}
			mid := (t0 + t1) / 2
			if slices.ContainsFunc(c.on, func(iv [2]float64) bool { return iv[0] <= mid && mid <= iv[1] }) {
				continue
			}
			switch locateInRing(a, lerp(p1, p2, mid)) {
			case 1:
				in = true
			case -1:
				out = true
			}
			if in && out {
				return relCross, lerp(p1, p2, t0)
			}
		}
	}
	switch {
	case in:
		return relInside, orb.Point{}
	case out:
		return relOutside, orb.Point{}
	}
	return relSame, orb.Point{}
}

// boundPairs returns the pairs (i, j), i < j, of bounds that overlap (closed), by a sort and
// sweep over their western edges.
func boundPairs(bs []orb.Bound) [][2]int {
	idx := make([]int, len(bs))
	for i := range idx {
		idx[i] = i
	}
	slices.SortFunc(idx, func(a, b int) int { return cmp.Compare(bs[a].Min[0], bs[b].Min[0]) })
	var out [][2]int
	for ii, i := range idx {
		for _, j := range idx[ii+1:] {
			if bs[j].Min[0] > bs[i].Max[0] {
				break
			}
			if bs[j].Min[1] > bs[i].Max[1] || bs[j].Max[1] < bs[i].Min[1] {
				continue
			}
			out = append(out, [2]int{min(i, j), max(i, j)})
		}
	}
	return out
}

// checkHoles checks the holes of one polygon (rings[0] the exterior, all simple, in one
// longitude frame): a hole entirely outside the exterior is dropped (reported in the repairs);
// a hole crossing the exterior's boundary, a hole that is the exterior itself, and holes that
// overlap each other are errors. ringIdx gives the input ring numbers used in messages.
func checkHoles(rings []orb.Ring, pi int, ringIdx []int) ([]orb.Ring, []int, []string, error) {
	if len(rings) < 2 {
		return rings, ringIdx, nil, nil
	}
	meets, complete := findMeets(rings, nil)
	if !complete {
		return rings, ringIdx, nil, nil // too many edge pairs to check (see SelfIntersectionPairBudget)
	}
	var repairs []string
	keep := []int{0}
	for h := 1; h < len(rings); h++ {
		rel, at := relateRings(rings[0], rings[h], meets.pairs(0, h))
		switch rel {
		case relCross:
			return nil, nil, nil, regionErr("polygon %d ring %d (a hole) crosses the boundary of its exterior ring near (%g, %g); a hole must lie inside its exterior ring", pi, ringIdx[h], LonTo180(at[0]), at[1])
		case relSame:
			return nil, nil, nil, regionErr("polygon %d ring %d (a hole) is the same ring as its exterior ring", pi, ringIdx[h])
		case relOutside:
			if rev, _ := relateRings(rings[h], rings[0], meets.pairs(h, 0)); rev != relOutside {
				return nil, nil, nil, regionErr("polygon %d ring %d (a hole) contains its exterior ring, which leaves nothing of the polygon", pi, ringIdx[h])
			}
			repairs = append(repairs, fmt.Sprintf("polygon %d ring %d (a hole) lies outside its exterior ring and was dropped", pi, ringIdx[h]))
			continue
		}
		keep = append(keep, h)
	}
	// holes must not overlap each other
	bs := make([]orb.Bound, len(keep)-1)
	for k, h := range keep[1:] {
		bs[k] = rings[h].Bound()
	}
	for _, pr := range boundPairs(bs) {
		h1, h2 := keep[1+pr[0]], keep[1+pr[1]]
		r12, at := relateRings(rings[h1], rings[h2], meets.pairs(h1, h2))
		r21 := relOutside
		if r12 == relOutside {
			r21, at = relateRings(rings[h2], rings[h1], meets.pairs(h2, h1))
		}
		if r12 != relOutside || r21 != relOutside {
			where := ""
			if r12 == relCross || r21 == relCross {
				where = fmt.Sprintf(" near (%g, %g)", LonTo180(at[0]), at[1])
			}
			return nil, nil, nil, regionErr("polygon %d rings %d and %d (holes) overlap%s; holes of a polygon must not overlap", pi, ringIdx[h1], ringIdx[h2], where)
		}
	}
	if len(keep) == len(rings) {
		return rings, ringIdx, nil, nil
	}
	outR, outI := make([]orb.Ring, len(keep)), make([]int, len(keep))
	for k, h := range keep {
		outR[k], outI[k] = rings[h], ringIdx[h]
	}
	return outR, outI, repairs, nil
}

// polygonKey is a canonical text of a normalised polygon: each ring started at its smallest
// vertex, holes sorted. Two polygons with the same key are the same polygon.
func polygonKey(p orb.Polygon) string {
	rk := make([]string, len(p))
	for ri, r := range p {
		n := len(r) - 1
		s := 0
		for i := 1; i < n; i++ {
			if r[i][0] < r[s][0] || (r[i][0] == r[s][0] && r[i][1] < r[s][1]) {
				s = i
			}
		}
		var b strings.Builder
		for k := 0; k < n; k++ {
			pt := r[(s+k)%n]
			b.WriteString(strconv.FormatFloat(pt[0], 'g', -1, 64))
			b.WriteByte(' ')
			b.WriteString(strconv.FormatFloat(pt[1], 'g', -1, 64))
			b.WriteByte(',')
		}
		rk[ri] = b.String()
	}
	slices.Sort(rk[1:])
	return strings.Join(rk, "|")
}

// checkParts checks that the normalised polygons of a multipolygon have disjoint interiors.
// src[i] is the input polygon parts[i] came from (pieces of one input polygon split at the
// antimeridian are disjoint by construction and not compared). An input polygon that exactly
// repeats an earlier one (the same pieces once normalised, whatever the winding, starting
// position or way of crossing the antimeridian) is dropped and reported in the repairs; polygons
// that overlap otherwise are an error naming both input polygons; polygons touching at points or
// along edges are accepted.
func checkParts(parts []orb.Polygon, src []int) ([]orb.Polygon, []string, error) {
	if len(parts) < 2 {
		return parts, nil, nil
	}
	// the key of each input polygon: the sorted keys of its pieces
	pieceKeys := map[int][]string{}
	var order []int
	for i, p := range parts {
		if _, ok := pieceKeys[src[i]]; !ok {
			order = append(order, src[i])
		}
		pieceKeys[src[i]] = append(pieceKeys[src[i]], polygonKey(p))
	}
	firstOf := map[string]int{}
	dropped := map[int]bool{}
	var repairs []string
	for _, s := range order {
		ks := pieceKeys[s]
		slices.Sort(ks)
		k := strings.Join(ks, "||")
		if f, ok := firstOf[k]; ok {
			dropped[s] = true
			repairs = append(repairs, fmt.Sprintf("polygon %d repeats polygon %d and was dropped", s, f))
			continue
		}
		firstOf[k] = s
	}
	var kept []orb.Polygon
	var keptSrc []int
	for i, p := range parts {
		if !dropped[src[i]] {
			kept = append(kept, p)
			keptSrc = append(keptSrc, src[i])
		}
	}
	if err := checkPartsDisjoint(kept, keptSrc); err != nil {
		return nil, nil, err
	}
	return kept, repairs, nil
}

// checkPartsDisjoint returns an error if two polygons from different input polygons overlap.
func checkPartsDisjoint(parts []orb.Polygon, src []int) error {
	bs := make([]orb.Bound, len(parts))
	for i, p := range parts {
		bs[i] = p[0].Bound()
	}
	cands := boundPairs(bs)
	cands = slices.DeleteFunc(cands, func(pr [2]int) bool { return src[pr[0]] == src[pr[1]] })
	if len(cands) == 0 {
		return nil
	}
	// every ring of every polygon, with its polygon
	var rings []orb.Ring
	first := make([]int, len(parts)) // index in rings of each polygon's exterior
	owner := []int{}
	for i, p := range parts {
		first[i] = len(rings)
		for _, r := range p {
			rings = append(rings, r)
			owner = append(owner, i)
		}
	}
	meets, complete := findMeets(rings, func(a, b int) bool { return src[owner[a]] == src[owner[b]] })
	if !complete {
		return nil // too many edge pairs to check (see SelfIntersectionPairBudget)
	}
	overlap := func(i, j int, at *orb.Point) error {
		where := ""
		if at != nil {
			where = fmt.Sprintf(" near (%g, %g)", at[0], at[1])
		}
		a, b := min(src[i], src[j]), max(src[i], src[j])
		return regionErr("polygons %d and %d overlap%s; the polygons of a MultiPolygon must not overlap", a, b, where)
	}
	// inHole reports whether polygon q (its exterior) lies in a hole of polygon p.
	inHole := func(p, q int) bool {
		qb := bs[q]
		for h := 1; h < len(parts[p]); h++ {
			hr := first[p] + h
			if !rings[hr].Bound().Contains(qb.Min) || !rings[hr].Bound().Contains(qb.Max) {
				continue
			}
			if rel, _ := relateRings(rings[hr], rings[first[q]], meets.pairs(hr, first[q])); rel == relInside || rel == relSame {
				return true
			}
		}
		return false
	}
	for _, pr := range cands {
		i, j := pr[0], pr[1]
		ei, ej := first[i], first[j]
		rj, at := relateRings(rings[ei], rings[ej], meets.pairs(ei, ej))
		if rj == relCross {
			return overlap(i, j, &at)
		}
		ri, at := relateRings(rings[ej], rings[ei], meets.pairs(ej, ei))
		if ri == relCross {
			return overlap(i, j, &at)
		}
		switch {
		case rj == relSame:
			return overlap(i, j, nil)
		case rj == relInside:
			if !inHole(i, j) {
				return overlap(i, j, nil)
			}
		case ri == relInside:
			if !inHole(j, i) {
				return overlap(i, j, nil)
			}
		}
	}
	return nil
}
