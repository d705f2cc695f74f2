package geo

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
)

// DefaultMaxRegionVertices is the vertex limit ParseRegion and NormalizeRegion apply when given
// maxVertices <= 0. It counts every position of every ring, closing positions included.
const DefaultMaxRegionVertices = 100_000

// ErrInvalidRegion is wrapped by every region validation error.
var ErrInvalidRegion = errors.New("invalid region")

// RegionField is the field name region faults carry.
const RegionField = "geometry"

// regionErr returns a fault.InvalidRegion error whose cause is ErrInvalidRegion.
func regionErr(format string, args ...any) error {
	return fault.New(fault.InvalidRegion, RegionField, "%w: "+format, append([]any{ErrInvalidRegion}, args...)...)
}

// regionOver returns a fault.Over("max_vertices", ...) error whose cause is ErrInvalidRegion.
func regionOver(limit, asked int, format string, args ...any) error {
	return fault.Over("max_vertices", int64(limit), int64(asked), RegionField, "%w: "+format, append([]any{ErrInvalidRegion}, args...)...)
}

// geoJSONObject is the part of a GeoJSON object (RFC 7946 §3) that regions and tracks read.
type geoJSONObject struct {
	Type        string            `json:"type"`
	Coordinates json.RawMessage   `json:"coordinates"`
	Geometry    json.RawMessage   `json:"geometry"`
	Features    []json.RawMessage `json:"features"`
	Properties  map[string]any    `json:"properties"`
}

// ParseRegion decodes a GeoJSON (RFC 7946) Polygon or MultiPolygon — a bare geometry, a Feature,
// or a FeatureCollection with exactly one feature — and returns it validated and normalised by
// NormalizeRegion: right-hand rule winding, longitudes in −180..180, split at the antimeridian.
//
// Positions may carry a third (altitude) number, which is ignored; a position with fewer than
// two numbers is an error. maxVertices <= 0 means DefaultMaxRegionVertices. Errors are
// *fault.Error wrapping ErrInvalidRegion (kind fault.InvalidRegion, field "geometry", or
// fault.LimitExceeded with limit "max_vertices") and name the polygon, ring and position
// (0-based) at fault. Callers should bound the size of data before calling (the decoder holds
// it all in memory). The repairs NormalizeRegion makes are not reported; PrepareRegion reports
// them.
func ParseRegion(data []byte, maxVertices int) (orb.MultiPolygon, error) {
	if maxVertices <= 0 {
		maxVertices = DefaultMaxRegionVertices
	}
	mp, err := decodeRegion(data, maxVertices)
	if err != nil {
		return nil, err
	}
	return NormalizeRegion(mp, maxVertices)
}

// PrepareRegionGeoJSON reads a region as ParseRegion does and returns it prepared by
// PrepareRegion, with the repairs made, its window and its area. Errors are as ParseRegion's.
func PrepareRegionGeoJSON(data []byte, maxVertices int) (PreparedRegion, error) {
	if maxVertices <= 0 {
		maxVertices = DefaultMaxRegionVertices
	}
	mp, err := decodeRegion(data, maxVertices)
	if err != nil {
		return PreparedRegion{}, err
	}
	return PrepareRegion(mp, maxVertices)
}

// decodeRegion decodes a GeoJSON region into a multipolygon as written (not yet normalised).
func decodeRegion(data []byte, maxVertices int) (orb.MultiPolygon, error) {
	g, err := decodeRegionGeometry(data)
	if err != nil {
		return nil, err
	}
	// Cheap early limit: a valid region has at most 1 + 1.5·V opening brackets (every ring has
	// at least four positions), so anything beyond 2·V + 2 is over the limit or malformed.
	if n := bytes.Count(g.Coordinates, []byte{'['}); n > 2*maxVertices+2 {
		return nil, regionOver(maxVertices, 0, "more than %d vertices (the limit)", maxVertices)
	}
	var mp orb.MultiPolygon
	switch g.Type {
	case "Polygon":
		var c [][][]float64
		if err := json.Unmarshal(g.Coordinates, &c); err != nil {
			return nil, regionErr("Polygon coordinates: %v", err)
		}
		p, err := toPolygon(c, 0)
		if err != nil {
			return nil, err
		}
		mp = orb.MultiPolygon{p}
	case "MultiPolygon":
		var c [][][][]float64
		if err := json.Unmarshal(g.Coordinates, &c); err != nil {
			return nil, regionErr("MultiPolygon coordinates: %v", err)
		}
		for i, pc := range c {
			p, err := toPolygon(pc, i)
			if err != nil {
				return nil, err
			}
			mp = append(mp, p)
		}
	default:
		return nil, regionErr("a region must be a GeoJSON Polygon or MultiPolygon, got %q", g.Type)
	}
	return mp, nil
}

func decodeRegionGeometry(data []byte) (geoJSONObject, error) {
	var obj geoJSONObject
	if err := json.Unmarshal(data, &obj); err != nil {
		return obj, regionErr("not valid GeoJSON: %v", err)
	}
	if obj.Type == "FeatureCollection" {
		if len(obj.Features) != 1 {
			return obj, regionErr("a FeatureCollection must hold exactly one feature, found %d", len(obj.Features))
		}
		var f geoJSONObject
		if err := json.Unmarshal(obj.Features[0], &f); err != nil {
			return obj, regionErr("feature: %v", err)
		}
		if f.Type != "Feature" {
			return obj, regionErr("FeatureCollection member has type %q, want Feature", f.Type)
		}
		obj = f
	}
	if obj.Type == "Feature" {
		if len(obj.Geometry) == 0 || string(bytes.TrimSpace(obj.Geometry)) == "null" {
			return obj, regionErr("the Feature has no geometry")
		}
		var g geoJSONObject
		if err := json.Unmarshal(obj.Geometry, &g); err != nil {
			return obj, regionErr("feature geometry: %v", err)
		}
		obj = g
	}
	if len(obj.Coordinates) == 0 || string(bytes.TrimSpace(obj.Coordinates)) == "null" {
		if obj.Type == "Polygon" || obj.Type == "MultiPolygon" {
			return obj, regionErr("%s has no coordinates", obj.Type)
		}
	}
	return obj, nil
}

func toPolygon(c [][][]float64, pi int) (orb.Polygon, error) {
	if len(c) == 0 {
		return nil, regionErr("polygon %d has no rings", pi)
	}
	p := make(orb.Polygon, len(c))
	for ri, rc := range c {
		r := make(orb.Ring, len(rc))
		for k, pos := range rc {
			if len(pos) < 2 {
				return nil, regionErr("polygon %d ring %d position %d has %d number(s); a GeoJSON position needs at least longitude and latitude", pi, ri, k, len(pos))
			}
			r[k] = orb.Point{pos[0], pos[1]}
		}
		p[ri] = r
	}
	return p, nil
}

// NormalizeRegion validates a multipolygon given in longitude/latitude degrees and returns it in
// a consistent form (a new value; the input is not modified):
//
//   - Validation (errors are *fault.Error of kind fault.InvalidRegion, field "geometry",
//     wrapping ErrInvalidRegion; too many positions gives fault.LimitExceeded with limit
//     "max_vertices"): at most maxVertices positions in total
//     (<= 0 means DefaultMaxRegionVertices); every polygon has an exterior ring; every ring has
//     at least 4 positions and is closed (first position equal to the last, RFC 7946 §3.1.6);
//     no NaN or infinite coordinate; latitudes within ±90; longitudes within −180..360; no ring
//     of zero area; no ring that crosses or touches itself (see below).
//   - Repeated consecutive positions are dropped.
//   - Winding: any input winding is accepted; the output follows the right-hand rule of
//     RFC 7946 §3.1.6 (exterior rings counter-clockwise, holes clockwise, in lon/lat).
//   - Antimeridian: a polygon whose longitudes lie in −180..180 with no step larger than 180°
//     is taken literally (so input already split at ±180 per RFC 7946 §3.1.9, including edges
//     that run along the ±180 meridian or from −180 to 180 along a parallel, stays as it is).
//     Likewise a polygon written in 0..360 with no step larger than 180° (except along 0/360) is
//     taken literally in that frame. Any other polygon (steps larger than 180°) is read as
//     taking the shorter way round at each step and unwrapped. Polygons not in −180..180 are
//     then split at the antimeridian into separate polygons of the MultiPolygon, so the output
//     always has longitudes in −180..180.
//   - Poles: an unwrapped ring whose longitudes advance by a net ±360° encircles a pole. It is
//     closed through that pole, choosing the pole on the side of the equator where the ring's
//     mean vertex latitude lies (the smaller cap); a ring with mean latitude exactly 0 is
//     rejected as ambiguous, as is a ring winding round a pole more than once.
//
// Edges are straight lines in longitude/latitude, the reading RFC 7946 §3.1 gives them (a
// straight Cartesian line in the coordinate reference system); area and masks use the same
// reading.
//
// Self-intersection is checked exactly (orientation tests) on each ring with a sort-and-sweep
// over longitude, which costs O(n log n + k) for k pairs of edges whose longitude ranges overlap.
// Pathological rings where k exceeds SelfIntersectionPairBudget are accepted without the check.
//
// Topology (OGC 06-103r4 Simple Feature Access §6.1.11.1 and §6.1.14), checked with the same
// sweep: a hole lying entirely outside its exterior ring is dropped (a repair); a hole crossing
// its exterior's boundary, containing its exterior or equal to it is an error naming polygon and
// ring; holes of one polygon overlapping each other are an error. After the split at the
// antimeridian, a polygon that exactly repeats an earlier one once normalised is dropped (a
// repair); polygons whose interiors overlap otherwise are an error naming both. Rings and
// polygons touching at points or along edges (within TouchToleranceDeg) are accepted.
// PrepareRegion reports the repairs.
// Cost: the sweep finds the k pairs of meeting edges in O(n log n + k); each pair of rings whose
// bounds overlap then needs a point-in-ring test, O(size of the ring), per piece between
// meeting points (one when the rings do not meet).
func NormalizeRegion(mp orb.MultiPolygon, maxVertices int) (orb.MultiPolygon, error) {
	out, _, err := normalizeRegion(mp, maxVertices)
	return out, err
}

// normalizeRegion is NormalizeRegion, also returning the repairs made, in words.
func normalizeRegion(mp orb.MultiPolygon, maxVertices int) (orb.MultiPolygon, []string, error) {
	if maxVertices <= 0 {
		maxVertices = DefaultMaxRegionVertices
	}
	if len(mp) == 0 {
		return nil, nil, regionErr("no polygons")
	}
	total := 0
	for _, p := range mp {
		for _, r := range p {
			total += len(r)
		}
	}
	if total > maxVertices {
		return nil, nil, regionOver(maxVertices, total, "%d vertices, more than the limit of %d", total, maxVertices)
	}
	var out orb.MultiPolygon
	var src []int // the input polygon of each output polygon
	var repairs []string
	for pi, p := range mp {
		if len(p) == 0 {
			return nil, nil, regionErr("polygon %d has no rings", pi)
		}
		rings := make([]orb.Ring, len(p))
		for ri, r := range p {
			c, err := cleanRing(r, pi, ri)
			if err != nil {
				return nil, nil, err
			}
			rings[ri] = c
		}
		pieces, notes, err := normalizePolygon(rings, pi)
		if err != nil {
			return nil, nil, err
		}
		repairs = append(repairs, notes...)
		for range pieces {
			src = append(src, pi)
		}
		out = append(out, pieces...)
	}
	if len(out) == 0 {
		return nil, nil, regionErr("no polygon of non-zero area")
	}
	out, notes, err := checkParts(out, src)
	if err != nil {
		return nil, nil, err
	}
	return out, append(repairs, notes...), nil
}

// cleanRing checks positions and closure and drops repeated consecutive positions.
func cleanRing(r orb.Ring, pi, ri int) (orb.Ring, error) {
	if len(r) < 4 {
		return nil, regionErr("polygon %d ring %d has %d positions; a linear ring needs at least 4 (RFC 7946 §3.1.6)", pi, ri, len(r))
	}
	for k, pt := range r {
		lon, lat := pt[0], pt[1]
		if math.IsNaN(lon) || math.IsNaN(lat) || math.IsInf(lon, 0) || math.IsInf(lat, 0) {
			return nil, regionErr("polygon %d ring %d position %d is not a finite number (%g, %g)", pi, ri, k, lon, lat)
		}
		if lat < -90 || lat > 90 {
			return nil, regionErr("polygon %d ring %d position %d: latitude %g is outside −90..90 (GeoJSON positions are [longitude, latitude])", pi, ri, k, lat)
		}
		if lon < -180 || lon > 360 {
			return nil, regionErr("polygon %d ring %d position %d: longitude %g is outside −180..360", pi, ri, k, lon)
		}
	}
	if r[0] != r[len(r)-1] {
		return nil, regionErr("polygon %d ring %d is not closed: first position %v differs from last %v (RFC 7946 §3.1.6)", pi, ri, [2]float64(r[0]), [2]float64(r[len(r)-1]))
	}
	c := make(orb.Ring, 0, len(r))
	for _, pt := range r {
		if len(c) > 0 && c[len(c)-1] == pt {
			continue
		}
		c = append(c, pt)
	}
	if len(c) < 4 {
		return nil, regionErr("polygon %d ring %d has fewer than 3 distinct positions", pi, ri)
	}
	return c, nil
}

// ringArea2 returns twice the signed planar (shoelace) area of a closed ring in degrees²;
// positive for counter-clockwise rings.
func ringArea2(r orb.Ring) float64 {
	s := 0.0
	for i := 0; i+1 < len(r); i++ {
		s += r[i][0]*r[i+1][1] - r[i+1][0]*r[i][1]
	}
	return s
}

func reverseRing(r orb.Ring) {
	for i, j := 0, len(r)-1; i < j; i, j = i+1, j-1 {
		r[i], r[j] = r[j], r[i]
	}
}

// orientRing makes r counter-clockwise when ccw, clockwise otherwise (in place).
func orientRing(r orb.Ring, ccw bool) {
	if (ringArea2(r) > 0) != ccw {
		reverseRing(r)
	}
}

// isLiteralRing reports whether a ring can be taken as written in the longitude frame
// [west, west+360]: all longitudes in that range and no step larger than 180° except steps
// between two points on the frame's edge meridians (west or west+360).
func isLiteralRing(r orb.Ring, west float64) bool {
	east := west + 360
	onEdge := func(x float64) bool { return x == west || x == east }
	for i, pt := range r {
		if pt[0] < west || pt[0] > east {
			return false
		}
		if i > 0 {
			a, b := r[i-1][0], pt[0]
			if math.Abs(b-a) > 180 && !(onEdge(a) && onEdge(b)) {
				return false
			}
		}
	}
	return true
}

// unwrapRing rewrites longitudes as lon + 360·k so that no step exceeds 180°, and returns the
// net number of turns round the pole (0 for an ordinary ring).
func unwrapRing(r orb.Ring) (orb.Ring, int) {
	u := make(orb.Ring, len(r))
	k := 0.0
	u[0] = r[0]
	for i := 1; i < len(r); i++ {
		x := r[i][0] + 360*k
		for x-u[i-1][0] > 180 {
			k--
			x = r[i][0] + 360*k
		}
		for x-u[i-1][0] < -180 {
			k++
			x = r[i][0] + 360*k
		}
		u[i] = orb.Point{x, r[i][1]}
	}
	return u, int(k)
}

func ringXRange(r orb.Ring) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, pt := range r {
		lo = math.Min(lo, pt[0])
		hi = math.Max(hi, pt[0])
	}
	return lo, hi
}

func shiftRing(r orb.Ring, dx float64) {
	if dx == 0 {
		return
	}
	for i := range r {
		r[i][0] += dx
	}
}

// normalizePolygon orients, checks and (if needed) splits one polygon.
func normalizePolygon(rings []orb.Ring, pi int) ([]orb.Polygon, []string, error) {
	// literal180: usable as written in −180..180; literal360: usable as written in 0..360
	// (then split at 180); otherwise unwrap.
	literal180, literal360 := true, true
	for _, r := range rings {
		literal180 = literal180 && isLiteralRing(r, -180)
		literal360 = literal360 && isLiteralRing(r, 0)
	}
	var work []orb.Ring
	if literal180 || literal360 {
		for _, r := range rings {
			work = append(work, append(orb.Ring(nil), r...))
		}
	} else {
		var err error
		if work, err = unwrapPolygon(rings, pi); err != nil {
			return nil, nil, err
		}
	}
	for ri, r := range work {
		if err := checkRingSimple(r); err != nil {
			return nil, nil, regionErr("polygon %d ring %d %v", pi, ri, err)
		}
		if ringArea2(r) == 0 {
			return nil, nil, regionErr("polygon %d ring %d has zero area", pi, ri)
		}
		orientRing(r, ri == 0)
	}
	ringIdx := make([]int, len(work))
	for i := range ringIdx {
		ringIdx[i] = i
	}
	if literal180 {
		work, _, repairs, err := checkHoles(work, pi, ringIdx)
		if err != nil {
			return nil, nil, err
		}
		return []orb.Polygon{orb.Polygon(work)}, repairs, nil
	}
	// Put the exterior's western end in [−180, 180) and each hole's middle within 180° of the
	// exterior's middle.
	lo, hi := ringXRange(work[0])
	if hi-lo >= 720 {
		return nil, nil, regionErr("polygon %d exterior ring spans %g° of longitude", pi, hi-lo)
	}
	k := -math.Floor((lo + 180) / 360)
	shiftRing(work[0], 360*k)
	lo, hi = lo+360*k, hi+360*k
	mid := (lo + hi) / 2
	for _, h := range work[1:] {
		hlo, hhi := ringXRange(h)
		shiftRing(h, -360*math.Round(((hlo+hhi)/2-mid)/360))
	}
	work, _, repairs, err := checkHoles(work, pi, ringIdx)
	if err != nil {
		return nil, nil, err
	}
	pieces, err := splitIntoRange(work, pi)
	return pieces, repairs, err
}

// hasSeamStep reports whether a ring has a step of 360° or more (an edge written along a
// parallel from one side of the antimeridian to the other, as in a literally written polar box).
func hasSeamStep(r orb.Ring) bool {
	for i := 1; i < len(r); i++ {
		if math.Abs(r[i][0]-r[i-1][0]) >= 360 {
			return true
		}
	}
	return false
}

// unwrapPolygon unwraps every ring and turns rings that encircle a pole into ordinary rings in
// the lon/lat plane: an exterior round a pole is cut at a meridian L clear of the holes and
// closed through the pole; a hole round the same pole is joined to it, making a band.
func unwrapPolygon(rings []orb.Ring, pi int) ([]orb.Ring, error) {
	us := make([]orb.Ring, len(rings))
	turns := make([]int, len(rings))
	var poleHoles []int
	for ri, r := range rings {
		if hasSeamStep(r) {
			return nil, regionErr("polygon %d ring %d has an edge spanning 360° of longitude while other rings cross the antimeridian by steps of more than 180°; write all rings of a polygon the same way", pi, ri)
		}
		u, t := unwrapRing(r)
		if t > 1 || t < -1 {
			return nil, regionErr("polygon %d ring %d winds round a pole %d times", pi, ri, abs(t))
		}
		us[ri], turns[ri] = u, t
		if ri > 0 && t != 0 {
			poleHoles = append(poleHoles, ri)
		}
	}
	if turns[0] == 0 {
		if len(poleHoles) > 0 {
			return nil, regionErr("polygon %d hole %d encircles a pole but the exterior ring does not", pi, poleHoles[0])
		}
		return us, nil
	}
	if len(poleHoles) > 1 {
		return nil, regionErr("polygon %d has %d holes encircling a pole; at most one is possible", pi, len(poleHoles))
	}
	var plain []orb.Ring
	for ri := 1; ri < len(us); ri++ {
		if turns[ri] == 0 {
			plain = append(plain, us[ri])
		}
	}
	cut, ok := chooseCut(plain)
	if !ok {
		return nil, regionErr("polygon %d encircles a pole but its holes leave no meridian free to cut it along", pi)
	}
	extMean := meanLat(us[0])
	var ring orb.Ring
	if len(poleHoles) == 1 {
		h := poleHoles[0]
		north := meanLat(us[h]) > extMean // band whose pole side is north
		ext := periodChain(us[0], turns[0], cut, north)
		hole := periodChain(us[h], turns[h], cut, !north)
		reverseRing(hole)
		ring = append(ext, hole...)
		ring = appendDistinct(ring, ext[0])
	} else {
		var pole float64
		switch {
		case extMean > 0:
			pole = 90
		case extMean < 0:
			pole = -90
		default:
			return nil, regionErr("polygon %d ring 0 encircles a pole but its mean latitude is 0, so which pole it encloses is ambiguous", pi)
		}
		ring = periodChain(us[0], turns[0], cut, pole > 0)
		last := ring[len(ring)-1]
		ring = appendDistinct(ring, orb.Point{last[0], pole})
		ring = appendDistinct(ring, orb.Point{ring[0][0], pole})
		ring = appendDistinct(ring, ring[0])
	}
	return append([]orb.Ring{ring}, plain...), nil
}

// reversed returns a reversed copy of r.
func reversed(r orb.Ring) orb.Ring {
	c := append(orb.Ring(nil), r...)
	reverseRing(c)
	return c
}

func meanLat(r orb.Ring) float64 {
	s := 0.0
	for _, p := range r[:len(r)-1] {
		s += p[1]
	}
	return s / float64(len(r)-1)
}

// chooseCut returns a meridian in [−180, 180) that no hole reaches (holes must not touch the
// cut, or they would touch the exterior's new edges along it): −180 if possible, otherwise the
// middle of a gap between holes.
func chooseCut(holes []orb.Ring) (float64, bool) {
	type span struct{ lo, hi float64 }
	spans := make([]span, len(holes))
	for i, h := range holes {
		lo, hi := ringXRange(h)
		spans[i] = span{lo, hi}
	}
	clear := func(c float64) bool {
		for _, s := range spans {
			if x := c + 360*math.Ceil((s.lo-c)/360); x <= s.hi {
				return false
			}
		}
		return true
	}
	if clear(-180) {
		return -180, true
	}
	for _, si := range spans {
		gap := 360.0
		for _, sj := range spans {
			d := math.Mod(sj.lo-si.hi, 360)
			if d < 0 {
				d += 360
			}
			if d > 0 && d < gap {
				gap = d
			}
		}
		if c := LonTo180(si.hi + gap/2); clear(c) {
			return c, true
		}
	}
	return 0, false
}

// periodChain cuts an unwrapped ring that advances by ±360° of longitude at the meridian cut
// (mod 360) and returns one eastward period as an open chain from (cut, y) to (cut+360, y). Where
// the ring crosses that meridian more than once, the crossing nearest the north pole (poleward
// true) or the south pole is used, so the closing edges along the meridian meet nothing else.
func periodChain(u orb.Ring, turns int, cut float64, north bool) orb.Ring {
	if turns < 0 {
		u = reversed(u)
	}
	m := len(u) - 1
	e := make(orb.Ring, 2*m+1)
	for i := range e {
		p := u[i%m]
		e[i] = orb.Point{p[0] + 360*float64(i/m), p[1]}
	}
	best, bestI, bestX := orb.Point{}, -1, 0.0
	for i := 0; i < m; i++ {
		a, b := e[i], e[i+1]
		lo, hi := math.Min(a[0], b[0]), math.Max(a[0], b[0])
		// meridians cut + 360j within the edge's span; the half-open test below counts a
		// vertex lying on such a meridian once
		for x := cut + 360*math.Ceil((lo-cut)/360); x <= hi; x += 360 {
			if (a[0] < x) == (b[0] < x) {
				continue
			}
			p := seamCross(a, b, x)
			if bestI < 0 || (north && p[1] > best[1]) || (!north && p[1] < best[1]) {
				best, bestI, bestX = p, i, x
			}
		}
	}
	chain := orb.Ring{best}
	for k := bestI + 1; k <= bestI+m; k++ {
		chain = appendDistinct(chain, e[k])
	}
	chain = appendDistinct(chain, orb.Point{best[0] + 360, best[1]})
	shiftRing(chain, cut-bestX)
	return chain
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}
