package geo

import (
	"math"

	"github.com/paulmach/orb"
)

// AuthalicEarthRadiusM is the radius in metres of the sphere with the same surface area as the
// WGS84/GRS80 ellipsoid (R2 in Moritz 2000, "Geodetic Reference System 1980", J. Geodesy 74,
// 128–133: R2 = 6371007.1810 m).
const AuthalicEarthRadiusM = 6371007.1810

// SphericalAreaKm2 returns the area in km² of a multipolygon on the authalic sphere
// (AuthalicEarthRadiusM), holes subtracted. See SphericalAreaKm2Radius for the method.
// Compared with the WGS84 ellipsoid the error is a few tenths of a percent at most.
func SphericalAreaKm2(mp orb.MultiPolygon) float64 {
	return SphericalAreaKm2Radius(mp, AuthalicEarthRadiusM/1000)
}

// SphericalAreaKm2Radius returns the area in km² of a multipolygon on a sphere of radius
// radiusKm, holes subtracted, treating longitude/latitude as spherical coordinates.
//
// Method: by Green's theorem the area element R²·cosφ·dφ·dλ integrates to the line integral
// A = −R²·∮ sinφ dλ round a counter-clockwise ring (the sum Chamberlain & Duquette 2007, "Some
// algorithms for polygons on a sphere", JPL Publication 07-03, give is a trapezoid rule for this
// integral; from memory). Here each edge is a straight line in longitude/latitude, as RFC 7946
// §3.1 reads edges and as GridMask does, and its integral is evaluated exactly: for φ linear in λ,
// ∫ sinφ dλ = Δλ·sin φm·sin(Δφ/2)/(Δφ/2), with φm the mean latitude of the edge. Edges along
// parallels are therefore exact (so a longitude/latitude box gets R²·Δλ·(sinφ2 − sinφ1)), and
// edges along meridians contribute nothing. Rings may be in either winding; each polygon counts
// |exterior| − Σ|holes|. Input should be normalised (NormalizeRegion), so that no ring crosses
// the antimeridian.
func SphericalAreaKm2Radius(mp orb.MultiPolygon, radiusKm float64) float64 {
	total := 0.0
	for _, p := range mp {
		if len(p) == 0 {
			continue
		}
		a := math.Abs(ringSinIntegral(p[0]))
		for _, h := range p[1:] {
			a -= math.Abs(ringSinIntegral(h))
		}
		total += a
	}
	return total * radiusKm * radiusKm
}

// ringSinIntegral returns ∮ sinφ dλ (radians) along a closed ring of lon/lat degrees.
func ringSinIntegral(r orb.Ring) float64 {
	s := 0.0
	for i := 0; i+1 < len(r); i++ {
		dl := (r[i+1][0] - r[i][0]) * degToRad
		if dl == 0 {
			continue
		}
		p1, p2 := r[i][1]*degToRad, r[i+1][1]*degToRad
		h := (p2 - p1) / 2
		f := 1.0
		if h != 0 {
			f = math.Sin(h) / h
		}
		s += dl * math.Sin((p1+p2)/2) * f
	}
	return s
}
