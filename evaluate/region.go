package evaluate

import (
	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/geo"
)

// PrepareRegion checks and normalises mp through geo.PrepareRegion (the one validity rule for
// stored regions and area queries; the window to read is its Bound, geo.RegionBound): more
// than Limits.MaxVertices vertices is fault.Over("max_vertices"), an invalid region
// fault.InvalidRegion; the fault names field.
func (s *Service) PrepareRegion(mp orb.MultiPolygon, field string) (geo.PreparedRegion, error) {
	n := 0
	for _, pg := range mp {
		for _, r := range pg {
			n += len(r)
		}
	}
	if n > s.limits.MaxVertices {
		return geo.PreparedRegion{}, fault.Over("max_vertices", int64(s.limits.MaxVertices), int64(n), field,
			"the geometry has %d vertices; the limit is %d", n, s.limits.MaxVertices)
	}
	r, err := geo.PrepareRegion(mp, s.limits.MaxVertices)
	if err != nil {
		if f, ok := fault.As(err); ok {
			g := *f
			g.Field = field
			return r, &g
		}
		return r, fault.New(fault.InvalidRegion, field, "%v", err)
	}
	return r, nil
}

// PrepareRegionGeoJSON reads a GeoJSON Polygon or MultiPolygon (bare, a Feature, or a
// FeatureCollection of one feature) and prepares it as PrepareRegion does
// (geo.PrepareRegionGeoJSON); the fault names field.
func (s *Service) PrepareRegionGeoJSON(data []byte, field string) (geo.PreparedRegion, error) {
	r, err := geo.PrepareRegionGeoJSON(data, s.limits.MaxVertices)
	if err != nil {
		if f, ok := fault.As(err); ok {
			g := *f
			g.Field = field
			return r, &g
		}
		return r, fault.New(fault.InvalidGeoJSON, field, "%v", err)
	}
	return r, nil
}
