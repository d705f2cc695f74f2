package gdal

/*
#include "rfgdal.h"
*/
import "C"

import (
	"fmt"
	"math"
	"unsafe"

	"ridgeflank/geo"
)

// Geodesic solves geodesic problems on the WGS84 ellipsoid (a = 6378137 m,
// f = 1/298.257223563) with PROJ's implementation of Karney, C. F. F. (2013), "Algorithms for
// geodesics", J. Geodesy 87, 43–55 (doi:10.1007/s00190-012-0578-z): accurate to about 15 nm
// for any pair of points, including nearly antipodal ones. It is safe for concurrent use.
type Geodesic struct{}

// WGS84 returns the WGS84 geodesic solver. The concrete type also offers Waypoints.
func WGS84() geo.Geodesic {
	ensureInit()
	return Geodesic{}
}

// Inverse returns the geodesic distance in metres between two points (degrees) and the forward
// azimuths in degrees clockwise from north at each end (azi2 is the direction of travel on
// arrival). Longitudes in either convention are accepted.
func (Geodesic) Inverse(lat1, lon1, lat2, lon2 float64) (distM, azi1Deg, azi2Deg float64) {
	ensureInit()
	r := C.rf_geod_inverse(C.double(lat1), C.double(lon1), C.double(lat2), C.double(lon2))
	return float64(r.v[0]), float64(r.v[1]), float64(r.v[2])
}

// Direct returns the point (degrees, longitude in [−180, 180]) reached after distM metres along
// the geodesic leaving (lat1, lon1) at azimuth azi1Deg (clockwise from north).
func (Geodesic) Direct(lat1, lon1, azi1Deg, distM float64) (lat2, lon2 float64) {
	ensureInit()
	r := C.rf_geod_direct(C.double(lat1), C.double(lon1), C.double(azi1Deg), C.double(distM))
	return float64(r.v[0]), float64(r.v[1])
}

// DirectSteps writes the points at distances k0·stepM, (k0+1)·stepM, …, (k0+n−1)·stepM along
// the geodesic leaving (lat1, lon1) at azimuth azi1Deg to dst as lat, lon pairs (degrees,
// longitude in [−180, 180]; len(dst) ≥ 2n): Direct's answers, with the geodesic line set up
// once (geod_lineinit, geod_position; Karney 2013) instead of once per point. It implements
// geo.StepSolver, which geo.Densify uses.
func (Geodesic) DirectSteps(lat1, lon1, azi1Deg, stepM float64, k0, n int, dst []float64) {
	if n <= 0 {
		return
	}
	if len(dst) < 2*n {
		panic("gdal: DirectSteps: dst too short")
	}
	ensureInit()
	C.rf_geod_steps(C.double(lat1), C.double(lon1), C.double(azi1Deg), C.double(stepM), C.int(k0), C.int(n),
		(*C.double)(unsafe.Pointer(&dst[0])))
}

// MaxWaypoints bounds the points Waypoints returns for one leg (10⁷, i.e. 1000 km at 0.1 m).
const MaxWaypoints = 10_000_000

// Waypoints returns points along the WGS84 geodesic from (lat1, lon1) to (lat2, lon2) as
// [lat, lon] pairs in degrees (longitudes in [−180, 180)): the start, then one every spacingM
// metres of geodesic distance from the start, then the end point (the last step may be
// shorter). A zero-length leg gives the start only. It computes the line once
// (geod_inverseline) and places points with geod_position (Karney 2013), far faster than one
// Direct call per point. The distance of point i < last is i·spacingM; the last is the leg
// length, which is also returned.
func (Geodesic) Waypoints(lat1, lon1, lat2, lon2, spacingM float64) ([][2]float64, float64, error) {
	ensureInit()
	for _, v := range []float64{lat1, lon1, lat2, lon2} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, 0, fmt.Errorf("waypoints: coordinate %v is not finite", v)
		}
	}
	if math.Abs(lat1) > 90 || math.Abs(lat2) > 90 {
		return nil, 0, fmt.Errorf("waypoints: latitude outside ±90° (%g, %g)", lat1, lat2)
	}
	if !(spacingM > 0) || math.IsInf(spacingM, 0) {
		return nil, 0, fmt.Errorf("waypoints: spacing %g m must be positive", spacingM)
	}
	dist, _, _ := Geodesic{}.Inverse(lat1, lon1, lat2, lon2)
	need := math.Floor(dist/spacingM) + 2
	if need > MaxWaypoints {
		return nil, 0, fmt.Errorf("waypoints: a %.0f m leg at %g m spacing needs %.0f points, more than the limit of %d", dist, spacingM, need, MaxWaypoints)
	}
	buf := make([]float64, 2*int(need))
	var total C.double
	n := int(C.rf_geod_line(C.double(lat1), C.double(lon1), C.double(lat2), C.double(lon2), C.double(spacingM),
		(*C.double)(unsafe.Pointer(&buf[0])), C.int(need), &total))
	if n < 0 {
		return nil, 0, fmt.Errorf("waypoints: internal size mismatch (%d > %.0f)", -n, need)
	}
	out := make([][2]float64, n)
	for i := range out {
		out[i] = [2]float64{buf[2*i], geo.LonTo180(buf[2*i+1])}
	}
	return out, float64(total), nil
}
