package evaluate

import (
	"math"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/geo"
)

// Region is a polygon or multipolygon made ready for evaluation: normalised into −180..180
// parts, valid, with the window to read and its area.
type Region struct {
	Parts   orb.MultiPolygon // normalised parts
	Repairs []string         // what was repaired to make it valid, in plain words
	Bound   orb.Bound        // the window to read (may run past 180 when it crosses the antimeridian)
	AreaKm2 float64
}

// PrepareRegion checks and normalises mp: more than Limits.MaxVertices vertices is
// fault.Over("max_vertices"); a geometry that cannot be a region is a fault about field
// (fault.InvalidCoords for "coords", else fault.InvalidGeoJSON).
func (s *Service) PrepareRegion(mp orb.MultiPolygon, field string) (Region, error) {
	n := 0
	for _, pg := range mp {
		for _, r := range pg {
			n += len(r)
		}
	}
	if n > s.limits.MaxVertices {
		return Region{}, fault.Over("max_vertices", int64(s.limits.MaxVertices), int64(n), field,
			"the geometry has %d vertices; the limit is %d", n, s.limits.MaxVertices)
	}
	norm, err := geo.NormalizeRegion(mp, s.limits.MaxVertices)
	if err != nil {
		if _, ok := fault.As(err); ok {
			return Region{}, err
		}
		// A geometry that cannot be a region: the form it came in is at fault (WKT coords or a
		// GeoJSON body).
		k := fault.InvalidGeoJSON
		if field == "coords" {
			k = fault.InvalidCoords
		}
		return Region{}, fault.New(k, field, "%v", err)
	}
	return Region{Parts: norm, Bound: regionBound(norm), AreaKm2: geo.SphericalAreaKm2(norm)}, nil
}

// regionBound is the bounding box of normalised parts, taken across the antimeridian
// (longitudes shifted to 0..360, so Max.X may exceed 180) when that is narrower.
func regionBound(mp orb.MultiPolygon) orb.Bound {
	b := mp.Bound()
	if b.Max[0]-b.Min[0] <= 180 {
		return b
	}
	for _, pg := range mp {
		if pb := pg.Bound(); pb.Max[0]-pb.Min[0] > 180 {
			return b
		}
	}
	shifted := orb.Bound{Min: orb.Point{math.Inf(1), b.Min[1]}, Max: orb.Point{math.Inf(-1), b.Max[1]}}
	for _, pg := range mp {
		for _, r := range pg {
			for _, p := range r {
				x := p[0]
				if x < 0 {
					x += 360
				}
				shifted.Min[0] = math.Min(shifted.Min[0], x)
				shifted.Max[0] = math.Max(shifted.Max[0], x)
			}
		}
	}
	if shifted.Max[0]-shifted.Min[0] < b.Max[0]-b.Min[0] {
		return shifted
	}
	return b
}
