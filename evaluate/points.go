package evaluate

import (
	"context"
	"errors"
	"math"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/raster"
)

// PointsResult are the values of a question's parameters at positions.
type PointsResult struct {
	Query      *Query
	Lons, Lats []float64   // degrees, longitudes in −180..180
	Values     [][]float64 // Values[parameter][position]; NaN where there is no answer
	Flags      []Flag      // values refused as physically impossible, by cause

	onAge int // positions with an age value
}

// Points evaluates the parameters of o at each position. A position count over
// Limits.MaxPositions is a fault.Over("max_positions"); positions that all lie off the
// dataset's age grid are a fault.NoData.
func (s *Service) Points(ctx context.Context, datasetID string, o Options, lons, lats []float64) (*PointsResult, error) {
	if len(lons) != len(lats) {
		return nil, errors.New("evaluate: lons and lats differ in length")
	}
	if len(lons) == 0 {
		return nil, fault.New(fault.InvalidCoords, "coords", "no position given")
	}
	if len(lons) > s.limits.MaxPositions {
		return nil, fault.Over("max_positions", int64(s.limits.MaxPositions), int64(len(lons)), "coords",
			"%d positions asked; the limit is %d", len(lons), s.limits.MaxPositions)
	}
	q, err := s.load(ctx, datasetID, o)
	if err != nil {
		return nil, err
	}
	res, err := s.points(ctx, q, lons, lats)
	if err != nil {
		return nil, err
	}
	if res.onAge > 0 {
		return res, nil
	}
	h := q.Dataset.AgeHeader()
	b := h.Bounds()
	return nil, fault.New(fault.NoData, "coords", "no position lies on dataset %q's age grid (longitude %g to %g, latitude %g to %g)",
		q.Dataset.Row.ID, b.Min[0], b.Max[0], b.Min[1], b.Max[1])
}

// points evaluates q's parameters at each position through geo.PointEvaluator (the arithmetic
// of geo.Evaluate) and refuses impossible values. Positions are taken in runs of neighbours
// (pointRuns); each run reads one small window of the grids at full resolution.
func (s *Service) points(ctx context.Context, q *Query, lons, lats []float64) (*PointsResult, error) {
	d := q.Dataset
	want := q.outputs()
	fl := newFlagger(q.Params)
	needCorr := fl.need&(inObs|inSed|inCrust|inCorr) != 0 && d.Files.Depth != nil
	if needCorr {
		want |= geo.OutCorrectedDepth
	}
	read := roleAge
	if needCorr || fl.need&inObs != 0 {
		read |= roleDepth
	}
	if needCorr || fl.need&inSed != 0 {
		read |= roleSed
	}
	if needCorr {
		read |= roleCrust
	}
	if q.usesAgeUncertaintyGrid() {
		read |= roleAgeUnc
	}
	res := &PointsResult{Query: q, Lons: make([]float64, len(lons)), Lats: append([]float64(nil), lats...),
		Values: make([][]float64, len(q.Params))}
	for i := range res.Values {
		res.Values[i] = make([]float64, len(lons))
	}
	for j := range lons {
		res.Lons[j] = geo.LonTo180(lons[j])
	}
	spacing, pad := s.pointSpacing(d)
	for _, run := range pointRuns(res.Lons, lats, 512*spacing, 4096) {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		b := pointBound(run.lons, lats[run.from:run.to], pad)
		v, err := s.window(ctx, d, b, 0, read)
		if err != nil && !isEmptyWindow(err) {
			return nil, err
		}
		var pe *geo.PointEvaluator
		if v != nil && want != 0 {
			in := geo.Inputs{Age: v.Age, Model: q.Model, Compaction: q.Sediment}
			q.ageSigma(&in, v)
			if needCorr && v.Depth != nil {
				in.Depth, in.DepthSense, in.Sediment, in.Crust = v.Depth, d.DepthSense, v.Sediment, v.Crust
			}
			w := want
			if in.Depth == nil {
				w &^= geo.OutCorrectedDepth | geo.OutResidualDepth | geo.OutResidualDepthSigma
			}
			if pe, err = geo.NewPointEvaluator(in, w); err != nil {
				return nil, err
			}
		}
		for j := run.from; j < run.to; j++ {
			lon, lat := res.Lons[j], lats[j]
			sv := geo.NaNSampleValues()
			if v != nil {
				if pe != nil {
					sv = pe.At(lon, lat)
				} else {
					sv.AgeMa = float64(v.Age.SampleBilinear(lon, lat))
				}
				if !needCorr || v.Depth == nil {
					if v.Depth != nil && fl.need&inObs != 0 {
						sv.ObservedDepthM = geo.ToDepthM(float64(v.Depth.SampleBilinear(lon, lat)), d.DepthSense)
					}
					if v.Sediment != nil && fl.need&inSed != 0 {
						sv.SedimentM = float64(v.Sediment.SampleBilinear(lon, lat))
					}
				}
			}
			if !math.IsNaN(sv.AgeMa) {
				res.onAge++
			}
			for i, p := range q.Params {
				res.Values[i][j] = pick(p.ID, sv)
			}
			fl.check(sample{age: sv.AgeMa, obs: sv.ObservedDepthM, sed: sv.SedimentM, crust: sv.CrustKm, corr: sv.CorrectedDepthM},
				func(i int) { res.Values[i][j] = nan })
		}
	}
	res.Flags = fl.flags()
	return res, nil
}

// pointSpacing is the dataset's coarsest full-resolution spacing (degrees) and the margin to
// read around positions so bilinear sampling has every neighbour: two of those cells.
func (s *Service) pointSpacing(d *Dataset) (spacing, pad float64) {
	for _, f := range []*raster.File{d.Files.Age, d.Files.Depth, d.Files.Sediment, d.Files.Crust} {
		if f != nil {
			h := f.Header()
			spacing = math.Max(spacing, math.Max(h.DX, h.DY))
		}
	}
	return spacing, 2 * spacing
}

// pointRun is positions from..to−1 with their longitudes unwrapped to one side of the first
// (so a run across the antimeridian has one contiguous longitude range).
type pointRun struct {
	from, to int
	lons     []float64
}

// pointRuns splits positions into runs of consecutive neighbours: at most maxN positions whose
// unwrapped longitudes and latitudes each span at most maxSpan degrees (a run holds at least one
// position).
func pointRuns(lons, lats []float64, maxSpan float64, maxN int) []pointRun {
	var runs []pointRun
	for i := 0; i < len(lons); {
		run := pointRun{from: i, lons: []float64{lons[i]}}
		loX, hiX, loY, hiY := lons[i], lons[i], lats[i], lats[i]
		j := i + 1
		for ; j < len(lons) && j-i < maxN; j++ {
			x := lons[i] + geo.LonTo180(lons[j]-lons[i])
			nloX, nhiX := math.Min(loX, x), math.Max(hiX, x)
			nloY, nhiY := math.Min(loY, lats[j]), math.Max(hiY, lats[j])
			if nhiX-nloX > maxSpan || nhiY-nloY > maxSpan {
				break
			}
			loX, hiX, loY, hiY = nloX, nhiX, nloY, nhiY
			run.lons = append(run.lons, x)
		}
		run.to = j
		runs = append(runs, run)
		i = j
	}
	return runs
}

// pick is parameter id's value in v.
func pick(id string, v geo.SampleValues) float64 {
	switch id {
	case PSeafloorAge:
		return v.AgeMa
	case PObservedDepth:
		return v.ObservedDepthM
	case PSedimentThickness:
		return v.SedimentM
	case PPredictedDepth:
		return v.PredictedDepthM
	case PHeatFlow:
		return v.HeatFlowMWm2
	case PThermalThickness:
		return v.ThermalThicknessKm
	case PDepth600C:
		return v.Depth600CKm
	case PCorrectedDepth:
		return v.CorrectedDepthM
	case PResidualDepth:
		return v.ResidualDepthM
	case PPredictedDepthUncertainty:
		return v.PredictedDepthSigmaM
	case PHeatFlowUncertainty:
		return v.HeatFlowSigmaMWm2
	case PThermalThicknessUncertainty:
		return v.ThermalThicknessSigmaKm
	case PResidualDepthUncertainty:
		return v.ResidualDepthSigmaM
	case PRidgePush:
		return v.RidgePushNPerM
	}
	return nan
}

// WaypointAt is a waypoint of a track with its distance along the track.
type WaypointAt struct {
	Name       string  `json:"name"` // "" when the track file names none
	Lon        float64 `json:"lon"`
	Lat        float64 `json:"lat"`
	DistanceKm float64 `json:"distance_km"`
}

// TrackResult are the values along a densified track.
type TrackResult struct {
	PointsResult
	DistanceKm []float64    // of each sample along the track, km
	Waypoints  []WaypointAt // the track's waypoints, names kept
}

// Track samples the track through waypoints every spacingKm along WGS84 geodesics
// (geo.Densify with gdal.WGS84(); spacingKm ≤ 0 means the age grid's row spacing at 111.32 km
// per degree) and evaluates o's parameters at every sample. More waypoints than
// Limits.MaxVertices is fault.Over("max_vertices"), more samples than Limits.MaxTrackSamples
// fault.Over("max_track_samples").
func (s *Service) Track(ctx context.Context, datasetID string, o Options, waypoints []geo.Waypoint, spacingKm float64) (*TrackResult, error) {
	wps, err := s.trackLine(waypoints, "the track", spacingKm)
	if err != nil {
		return nil, err
	}
	q, err := s.load(ctx, datasetID, o)
	if err != nil {
		return nil, err
	}
	spacingKm = sampleSpacingKm(q.Dataset, spacingKm)
	samples, err := geo.Densify(gdal.WGS84(), wps, spacingKm*1000, s.limits.MaxTrackSamples)
	if err != nil {
		return nil, trackFault(err)
	}
	lons, lats, dist := make([]float64, len(samples)), make([]float64, len(samples)), make([]float64, len(samples))
	res := &TrackResult{DistanceKm: dist, Waypoints: make([]WaypointAt, len(wps))}
	for i, w := range wps {
		res.Waypoints[i] = WaypointAt{Name: w.Name, Lon: w.Lon, Lat: w.Lat}
	}
	for i, sm := range samples {
		lons[i], lats[i], dist[i] = sm.Lon, sm.Lat, sm.DistanceKm
		if sm.Waypoint >= 0 && sm.Waypoint < len(res.Waypoints) {
			res.Waypoints[sm.Waypoint].DistanceKm = sm.DistanceKm
		}
	}
	pr, err := s.points(ctx, q, lons, lats)
	if err != nil {
		return nil, err
	}
	res.PointsResult = *pr
	return res, nil
}

// trackFault passes geo's typed track faults on (naming the coords as the field when geo names
// its own) and makes any other track error a fault.InvalidTrack.
func trackFault(err error) error {
	if f, ok := fault.As(err); ok {
		if f.Field == geo.TrackField {
			g := *f
			g.Field = "coords"
			return &g
		}
		return err
	}
	return fault.New(fault.InvalidTrack, "coords", "%v", err)
}

// trackLine checks the waypoints of a line to sample (a track, a corridor's centre line): at
// most Limits.MaxVertices (fault.Over("max_vertices")), valid positions (geo.ValidateWaypoints,
// longitudes wrapped), and a finite spacing-km. what names the line in messages.
func (s *Service) trackLine(waypoints []geo.Waypoint, what string, spacingKm float64) ([]geo.Waypoint, error) {
	if len(waypoints) > s.limits.MaxVertices {
		return nil, fault.Over("max_vertices", int64(s.limits.MaxVertices), int64(len(waypoints)), "coords",
			"%s has %d waypoints; the limit is %d", what, len(waypoints), s.limits.MaxVertices)
	}
	wps, err := geo.ValidateWaypoints(waypoints, s.limits.MaxVertices)
	if err != nil {
		return nil, trackFault(err)
	}
	if math.IsNaN(spacingKm) || math.IsInf(spacingKm, 0) {
		return nil, fault.New(fault.InvalidParameter, "spacing-km", "spacing-km must be a positive number")
	}
	return wps, nil
}

// sampleSpacingKm is the along-line sample spacing: spacingKm when positive, else the age grid's
// row spacing at a nominal 111.32 km per degree (2π × 6378.137 km / 360, the WGS84 equatorial
// radius; worked by hand). Tracks, corridors and plan checks all use it.
func sampleSpacingKm(d *Dataset, spacingKm float64) float64 {
	if spacingKm > 0 {
		return spacingKm
	}
	return d.AgeHeader().DY * 111.32
}
