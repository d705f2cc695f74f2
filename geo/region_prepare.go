package geo

import "github.com/paulmach/orb"

// PreparedRegion is a region checked for validity and normalised: parts in −180..180 split at the antimeridian, rings oriented, with the window to read.
type PreparedRegion struct {
	Parts   orb.MultiPolygon // normalised (as NormalizeRegion returns them)
	Repairs []string         // what was repaired, in words, e.g. "polygon 1 repeats polygon 0 and was dropped"
	Bound   orb.Bound        // RegionBound(Parts)
	AreaKm2 float64          // SphericalAreaKm2(Parts)
}

// PrepareRegion validates and normalises a region given in longitude/latitude degrees (see
// NormalizeRegion for the rules) and returns it with the repairs made, the window to read
// (RegionBound) and its area on the authalic sphere (SphericalAreaKm2). It is the one way stored
// regions and ad-hoc area geometries are checked.
//
// maxVertices <= 0 means DefaultMaxRegionVertices. Errors are *fault.Error wrapping
// ErrInvalidRegion: kind fault.InvalidRegion (field "geometry") for an invalid region, and
// fault.LimitExceeded with limit "max_vertices" for too many vertices.
func PrepareRegion(mp orb.MultiPolygon, maxVertices int) (PreparedRegion, error) {
	parts, repairs, err := normalizeRegion(mp, maxVertices)
	if err != nil {
		return PreparedRegion{}, err
	}
	return PreparedRegion{
		Parts:   parts,
		Repairs: repairs,
		Bound:   RegionBound(parts),
		AreaKm2: SphericalAreaKm2(parts),
	}, nil
}
