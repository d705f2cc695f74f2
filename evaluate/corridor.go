package evaluate

import (
	"context"
	"math"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
)

// MaxCorridorWidthKm is the widest corridor answered (km): 1000 km, common practice, no source
// (well beyond a survey corridor or a ridge-flank transect; wider, the across-track lines of
// neighbouring samples cross on a curved track).
const MaxCorridorWidthKm = 1000.0

// CorridorResult are the values over a corridor: samples along its centre line times samples
// across it. Sample i·Across + k is centre-line sample i at across-track offset OffsetKm[k].
type CorridorResult struct {
	PointsResult
	Along, Across int
	// DistanceKm is, for every sample, the distance along the centre line of its centre-line
	// sample (km); OffsetKm its across-track offset (km, positive to the right of the direction
	// of travel, negative to the left; 0 on the centre line).
	DistanceKm, OffsetKm []float64
	WidthKm              float64
	Waypoints            []WaypointAt // the centre line's waypoints, names kept
}

// Corridor samples the corridor of total width widthKm around the track through waypoints (OGC
// API–EDR corridor query, 2-D) and evaluates o's parameters at every sample. The centre line is
// sampled every spacingKm along WGS84 geodesics exactly as Track samples it (geo.Densify with
// gdal.WGS84(); spacingKm ≤ 0 means the age grid's row spacing at 111.32 km per degree). At
// every centre-line sample, n = ⌈(widthKm/2)/spacingKm⌉ samples on each side are placed along
// the geodesic leaving at right angles to the direction of travel, at geodesic distances
// k·(widthKm/2)/n, k = 1..n, so the across-track spacing is at most spacingKm and the edges are
// sampled. The direction of travel is the tangent of the leg's geodesic; at a waypoint where the
// track turns, the bisector of the two legs' directions.
//
// Limits: more waypoints than Limits.MaxVertices is fault.Over("max_vertices"); a width that is
// not a number in (0, MaxCorridorWidthKm] is a fault.InvalidParameter about "corridor-width";
// more samples in all (along × across) than Limits.MaxTrackSamples is
// fault.Over("max_track_samples").
func (s *Service) Corridor(ctx context.Context, datasetID string, o Options, waypoints []geo.Waypoint, widthKm, spacingKm float64) (*CorridorResult, error) {
	wps, err := s.trackLine(waypoints, "the corridor's centre line", spacingKm)
	if err != nil {
		return nil, err
	}
	if !(widthKm > 0) || widthKm > MaxCorridorWidthKm {
		return nil, fault.New(fault.InvalidParameter, "corridor-width", "the corridor width must be a positive number of at most %g km, not %g km", MaxCorridorWidthKm, widthKm)
	}
	q, err := s.load(ctx, datasetID, o)
	if err != nil {
		return nil, err
	}
	spacingKm = sampleSpacingKm(q.Dataset, spacingKm)
	cg, err := corridorSamples(gdal.WGS84(), wps, spacingKm*1000, widthKm*500, s.limits.MaxTrackSamples)
	if err != nil {
		return nil, trackFault(err)
	}
	res := &CorridorResult{Along: len(cg.centre), Across: len(cg.offsetsM), WidthKm: widthKm,
		DistanceKm: make([]float64, len(cg.lons)), OffsetKm: make([]float64, len(cg.lons)), Waypoints: make([]WaypointAt, len(wps))}
	for i, w := range wps {
		res.Waypoints[i] = WaypointAt{Name: w.Name, Lon: w.Lon, Lat: w.Lat}
	}
	for i, c := range cg.centre {
		if c.Waypoint >= 0 && c.Waypoint < len(res.Waypoints) {
			res.Waypoints[c.Waypoint].DistanceKm = c.DistanceKm
		}
		for k, d := range cg.offsetsM {
			res.DistanceKm[i*res.Across+k] = c.DistanceKm
			res.OffsetKm[i*res.Across+k] = d / 1000
		}
	}
	pr, err := s.points(ctx, q, cg.lons, cg.lats)
	if err != nil {
		return nil, err
	}
	res.PointsResult = *pr
	return res, nil
}

// corridorGrid is a corridor's samples: centre-line samples times across-track offsets.
type corridorGrid struct {
	centre     []geo.TrackSample
	offsetsM   []float64 // ascending, from −half width to +half width; the middle one is 0
	lons, lats []float64 // sample i·len(offsetsM) + k; longitudes in −180..180
}

// corridorSamples places the samples Corridor describes, solving geodesic problems with g.
func corridorSamples(g geo.Geodesic, wps []geo.Waypoint, spacingM, halfWidthM float64, maxSamples int) (*corridorGrid, error) {
	n := int(math.Ceil(halfWidthM / spacingM))
	across := 2*n + 1
	centre, err := geo.Densify(g, wps, spacingM, maxSamples)
	if err != nil {
		return nil, err
	}
	if total := int64(len(centre)) * int64(across); total > int64(maxSamples) {
		return nil, fault.Over("max_track_samples", int64(maxSamples), total, "corridor-width",
			"the corridor needs %d samples (%d along × %d across at %g m spacing), more than %d samples (the limit): widen spacing-km or narrow the corridor",
			total, len(centre), across, spacingM, maxSamples)
	}
	legs, err := geo.Legs(g, wps)
	if err != nil {
		return nil, err
	}
	wps, _ = geo.ValidateWaypoints(wps, geo.DefaultMaxWaypoints) // as Densify saw them
	cg := &corridorGrid{centre: centre, offsetsM: make([]float64, across),
		lons: make([]float64, len(centre)*across), lats: make([]float64, len(centre)*across)}
	for k := range cg.offsetsM {
		if n > 0 {
			cg.offsetsM[k] = halfWidthM * float64(k-n) / float64(n)
		}
	}
	for i, c := range centre {
		az := travelAzimuth(g, c, legs, wps)
		for k, d := range cg.offsetsM {
			lat, lon := c.Lat, c.Lon
			switch {
			case d > 0:
				lat, lon = g.Direct(c.Lat, c.Lon, az+90, d)
			case d < 0:
				lat, lon = g.Direct(c.Lat, c.Lon, az-90, -d)
			}
			cg.lons[i*across+k], cg.lats[i*across+k] = geo.LonTo180(lon), lat
		}
		if c.Lon == 180 { // keep the centre line exactly as Densify answers it
			cg.lons[i*across+n] = 180
		}
	}
	return cg, nil
}

// travelAzimuth is the direction of travel (degrees clockwise from north) at centre-line sample
// c: the tangent of its leg's geodesic between waypoints (the initial azimuth of the geodesic
// from c to the leg's end), the first leg's initial and the last leg's final azimuth at the ends,
// and the bisector of the incoming and outgoing legs at a waypoint in between.
func travelAzimuth(g geo.Geodesic, c geo.TrackSample, legs []geo.Leg, wps []geo.Waypoint) float64 {
	switch {
	case c.Waypoint < 0:
		end := wps[c.Leg+1]
		_, az, _ := g.Inverse(c.Lat, c.Lon, end.Lat, end.Lon)
		return az
	case c.Waypoint == 0:
		return legs[0].InitialAzimuthDeg
	case c.Waypoint >= len(legs):
		return legs[len(legs)-1].FinalAzimuthDeg
	}
	in, out := legs[c.Waypoint-1].FinalAzimuthDeg, legs[c.Waypoint].InitialAzimuthDeg
	return in + geo.LonTo180(out-in)/2
}
