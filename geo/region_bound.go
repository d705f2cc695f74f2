package geo

import (
	"cmp"
	"math"
	"slices"

	"github.com/paulmach/orb"
)

// RegionBound returns the window to read for a region: the narrowest longitude interval that
// covers every part, and the parts' latitude range (degrees).
//
// Each part's longitude interval is put on the circle, the largest gap between the intervals is
// found, and the bound is its complement. Min.X is in [−180, 180) and Max.X = Min.X + width, so
// Max.X exceeds 180 when the window crosses the antimeridian (a region 175..180 ∪ −180..−173
// gives 175..187, a box 179..−179 gives 179..181). A part 360° wide (a polar cap or a belt, as
// NormalizeRegion writes them) gives −180..180, as do parts covering the whole circle between
// them. Of two equally large gaps the one giving a window that does not cross the antimeridian
// is taken. (*Grid).Window accepts this form directly. An empty region gives the zero Bound.
//
// Parts are read as NormalizeRegion returns them (longitudes in −180..180, no part crossing
// the antimeridian); other longitudes are taken modulo 360.
func RegionBound(parts orb.MultiPolygon) orb.Bound {
	type span struct{ lo, hi float64 }
	var spans []span
	minY, maxY := math.Inf(1), math.Inf(-1)
	full := false
	for _, p := range parts {
		if len(p) == 0 || len(p[0]) == 0 {
			continue
		}
		b := p.Bound()
		minY, maxY = math.Min(minY, b.Min[1]), math.Max(maxY, b.Max[1])
		w := b.Max[0] - b.Min[0]
		if w >= 360 {
			full = true
			continue
		}
		lo := b.Min[0] - 360*math.Floor((b.Min[0]+180)/360)
		spans = append(spans, span{lo, lo + w})
	}
	if math.IsInf(minY, 1) {
		return orb.Bound{}
	}
	whole := orb.Bound{Min: orb.Point{-180, minY}, Max: orb.Point{180, maxY}}
	if full {
		return whole
	}
	slices.SortFunc(spans, func(a, b span) int { return cmp.Compare(a.lo, b.lo) })
	// merge overlapping or touching intervals along the line
	var cl []span
	for _, s := range spans {
		if n := len(cl); n > 0 && s.lo <= cl[n-1].hi {
			cl[n-1].hi = math.Max(cl[n-1].hi, s.hi)
			continue
		}
		cl = append(cl, s)
	}
	// merge round the circle: the last cluster may reach past 180 onto the first ones
	for len(cl) > 1 && cl[len(cl)-1].hi >= cl[0].lo+360 {
		last := &cl[len(cl)-1]
		last.hi = math.Max(last.hi, cl[0].hi+360)
		cl = cl[1:]
	}
	if cl[len(cl)-1].hi-cl[0].lo >= 360 && len(cl) == 1 {
		return whole
	}
	// the largest gap runs from the end of cluster k to the start of cluster k+1 (mod n)
	best, bestGap := -1, -1.0
	for k := range cl {
		next := cl[(k+1)%len(cl)].lo
		if k+1 == len(cl) {
			next += 360
		}
		gap := next - cl[k].hi
		start := cl[(k+1)%len(cl)].lo
		crosses := start+(360-gap) > 180
		if gap > bestGap+1e-9 || (gap > bestGap-1e-9 && !crosses) {
			best, bestGap = k, gap
		}
	}
	if bestGap <= 0 {
		return whole
	}
	start := cl[(best+1)%len(cl)].lo
	return orb.Bound{Min: orb.Point{start, minY}, Max: orb.Point{start + 360 - bestGap, maxY}}
}
