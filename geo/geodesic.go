package geo

import "math"

// Geodesic solves geodesic problems on an ellipsoid (distances in metres, angles in degrees).
//
// Inverse returns the length distM of the shortest path from (lat1, lon1) to (lat2, lon2), the
// azimuth azi1Deg at the first point and the forward azimuth azi2Deg at the second point, both
// clockwise from north. Direct returns the point reached from (lat1, lon1) after distM along the
// geodesic that leaves with azimuth azi1Deg. Longitudes may be given in any convention.
//
// The production implementation is ridgeflank/geo/gdal.WGS84(): PROJ's geodesic routines
// (Karney 2013, "Algorithms for geodesics", J. Geodesy 87, 43–55) on the WGS84 ellipsoid.
// Sphere is a pure-Go spherical stand-in for tests and for builds without cgo.
type Geodesic interface {
	Inverse(lat1, lon1, lat2, lon2 float64) (distM, azi1Deg, azi2Deg float64)
	Direct(lat1, lon1, azi1Deg, distM float64) (lat2, lon2 float64)
}

// MeanEarthRadiusM is the mean radius R1 = (2a+b)/3 of the WGS84/GRS80 ellipsoid in metres
// (Moritz 2000, "Geodetic Reference System 1980", J. Geodesy 74, 128–133: R1 = 6371008.7714 m).
const MeanEarthRadiusM = 6371008.7714

// Sphere is a Geodesic on a sphere of radius RadiusM (great circles, spherical trigonometry:
// haversine distance and the spherical direct/azimuth formulas, e.g. Snyder 1987, "Map
// Projections — A Working Manual", USGS PP 1395, §5). On the mean-radius sphere distances
// differ from WGS84 geodesics by up to about 0.5 %; use it only where that is acceptable.
// A zero RadiusM means MeanEarthRadiusM.
type Sphere struct {
	RadiusM float64
}

func (s Sphere) radius() float64 {
	if s.RadiusM > 0 {
		return s.RadiusM
	}
	return MeanEarthRadiusM
}

const (
	degToRad = math.Pi / 180
	radToDeg = 180 / math.Pi
)

// Inverse returns the great-circle distance (haversine form) and the azimuths at both ends.
func (s Sphere) Inverse(lat1, lon1, lat2, lon2 float64) (distM, azi1Deg, azi2Deg float64) {
	p1, p2 := lat1*degToRad, lat2*degToRad
	dl := (lon2 - lon1) * degToRad
	sp := math.Sin((p2 - p1) / 2)
	sl := math.Sin(dl / 2)
	h := sp*sp + math.Cos(p1)*math.Cos(p2)*sl*sl
	h = math.Min(1, math.Max(0, h))
	c := 2 * math.Atan2(math.Sqrt(h), math.Sqrt(1-h))
	distM = s.radius() * c
	azi1Deg = math.Atan2(math.Sin(dl)*math.Cos(p2),
		math.Cos(p1)*math.Sin(p2)-math.Sin(p1)*math.Cos(p2)*math.Cos(dl)) * radToDeg
	// forward azimuth at point 2 = back azimuth from point 2 to point 1, reversed
	back := math.Atan2(-math.Sin(dl)*math.Cos(p1),
		math.Cos(p2)*math.Sin(p1)-math.Sin(p2)*math.Cos(p1)*math.Cos(dl)) * radToDeg
	azi2Deg = back + 180
	if azi2Deg > 180 {
		azi2Deg -= 360
	}
	return distM, azi1Deg, azi2Deg
}

// Direct returns the end point of the great circle leaving (lat1, lon1) with azimuth azi1Deg
// after distM metres; the longitude is in [−180, 180).
func (s Sphere) Direct(lat1, lon1, azi1Deg, distM float64) (lat2, lon2 float64) {
	p1 := lat1 * degToRad
	a := azi1Deg * degToRad
	d := distM / s.radius()
	sp2 := math.Sin(p1)*math.Cos(d) + math.Cos(p1)*math.Sin(d)*math.Cos(a)
	sp2 = math.Min(1, math.Max(-1, sp2))
	p2 := math.Asin(sp2)
	dl := math.Atan2(math.Sin(a)*math.Sin(d)*math.Cos(p1), math.Cos(d)-math.Sin(p1)*sp2)
	return p2 * radToDeg, LonTo180(lon1 + dl*radToDeg)
}
