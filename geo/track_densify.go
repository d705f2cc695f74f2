package geo

import (
	"fmt"
	"math"

	"ridgeflank/fault"
)

// DefaultMaxTrackSamples is the sample limit Densify applies when given maxSamples <= 0.
const DefaultMaxTrackSamples = 2_000_000

// TrackSample is a point of a densified track.
type TrackSample struct {
	Lon        float64 `json:"lon"`         // degrees, −180..180
	Lat        float64 `json:"lat"`         // degrees
	DistanceKm float64 `json:"distance_km"` // along the track from the first waypoint
	Leg        int     `json:"leg"`         // leg index: leg i runs from waypoint i to i+1
	Waypoint   int     `json:"waypoint"`    // index of the waypoint this sample is, or −1
}

// Leg describes the geodesic from waypoint From to waypoint To = From+1.
type Leg struct {
	From, To          int     `json:"-"`
	LengthKm          float64 `json:"length_km"`
	StartDistanceKm   float64 `json:"start_distance_km"`   // cumulative distance at From
	InitialAzimuthDeg float64 `json:"initial_azimuth_deg"` // at From, clockwise from true north, 0..360
	FinalAzimuthDeg   float64 `json:"final_azimuth_deg"`   // direction of travel at To, 0..360
}

func azimuth360(a float64) float64 {
	a = math.Mod(a, 360)
	if a < 0 {
		a += 360
	}
	return a
}

// Legs returns the geodesic length and the initial and final azimuths (clockwise from true
// north, 0..360) of every leg of a track, solving the inverse problem with g (use
// ridgeflank/geo/gdal.WGS84() for WGS84 geodesics after Karney 2013). The waypoints are checked
// as by ValidateWaypoints with the default limit.
func Legs(g Geodesic, wps []Waypoint) ([]Leg, error) {
	if g == nil {
		return nil, trackErr("no geodesic solver given")
	}
	wps, err := ValidateWaypoints(wps, DefaultMaxWaypoints)
	if err != nil {
		return nil, err
	}
	legs := make([]Leg, len(wps)-1)
	cum := 0.0
	for i := range legs {
		a, b := wps[i], wps[i+1]
		s, az1, az2 := g.Inverse(a.Lat, a.Lon, b.Lat, b.Lon)
		if math.IsNaN(s) || s < 0 {
			return nil, trackErr("leg %d: geodesic solver failed (%g m)", i, s)
		}
		legs[i] = Leg{From: i, To: i + 1, LengthKm: s / 1000, StartDistanceKm: cum / 1000,
			InitialAzimuthDeg: azimuth360(az1), FinalAzimuthDeg: azimuth360(az2)}
		cum += s
	}
	return legs, nil
}

// StepSolver is implemented by Geodesic solvers that place many points along one geodesic
// faster than one Direct call each (ridgeflank/geo/gdal.WGS84()). DirectSteps writes the
// points at distances k0·stepM … (k0+n−1)·stepM along the geodesic leaving (lat1, lon1) at
// azimuth azi1Deg to dst as lat, lon pairs (len(dst) ≥ 2n), equal to Direct's answers.
type StepSolver interface {
	DirectSteps(lat1, lon1, azi1Deg, stepM float64, k0, n int, dst []float64)
}

// stepChunk is the most points Densify asks a StepSolver for at once.
const stepChunk = 4096

// Densify samples a track along the geodesics between its waypoints, at most spacingM metres
// apart. Each leg of length s is divided into n = ⌈s/spacingM⌉ equal steps of s/n ≤ spacingM
// (so the spacing differs slightly from leg to leg); the points are found by solving the direct
// geodesic problem from the leg's start with its initial azimuth, using g (for WGS84 ellipsoidal
// geodesics use ridgeflank/geo/gdal.WGS84(), PROJ's implementation of Karney 2013, "Algorithms
// for geodesics", J. Geodesy 87, 43–55; Sphere gives great circles).
//
// The waypoints themselves are kept exactly as given (longitude wrapped into −180..180) and marked
// with their index; DistanceKm accumulates the geodesic leg lengths. Legs crossing the
// antimeridian or passing over a pole need no special care: longitudes are answered in
// −180..180, so they jump by 360° where a leg crosses ±180. A zero-length leg (repeated waypoint)
// adds only its end waypoint. Legs between (nearly) antipodal points have no unique geodesic; the
// solver picks one.
//
// Limits: 2..DefaultMaxWaypoints waypoints, spacingM > 0, and at most maxSamples samples
// (<= 0 means DefaultMaxTrackSamples), checked before any sample is computed. Errors wrap
// ErrInvalidTrack: a bad spacing is a fault.InvalidParameter about "spacing-km"; too many
// samples is fault.Over("max_track_samples", maxSamples, n, "spacing-km", ...) where n is the
// number of samples the whole track would need.
//
// This is a survey-planning aid, not navigation: depths sampled along a track from model or
// gridded data are estimates; defer to official charts, surveys and the local hydrographic
// authority.
func Densify(g Geodesic, wps []Waypoint, spacingM float64, maxSamples int) ([]TrackSample, error) {
	if !(spacingM > 0) || math.IsInf(spacingM, 0) {
		return nil, fault.New(fault.InvalidParameter, "spacing-km", "%w: sample spacing %g m must be a positive number", ErrInvalidTrack, spacingM)
	}
	if maxSamples <= 0 {
		maxSamples = DefaultMaxTrackSamples
	}
	legs, err := Legs(g, wps)
	if err != nil {
		return nil, err
	}
	wps, _ = ValidateWaypoints(wps, DefaultMaxWaypoints)
	steps := make([]int, len(legs))
	total := 1.0 // the samples the whole track needs: every step's end and the first waypoint
	for i, l := range legs {
		n := math.Ceil(l.LengthKm * 1000 / spacingM)
		total += n
		steps[i] = int(min(n, math.MaxInt32))
	}
	if total > float64(maxSamples) {
		end := legs[len(legs)-1]
		asked := int64(min(total, math.MaxInt64/2))
		return nil, fault.Over("max_track_samples", int64(maxSamples), asked, "spacing-km",
			"%w: the track (%.3f km) would need %d samples at %g m spacing, more than %d samples (the limit)", ErrInvalidTrack, end.StartDistanceKm+end.LengthKm, asked, spacingM, maxSamples)
	}
	out := make([]TrackSample, 0, int(total))
	var buf []float64 // StepSolver answers
	for i, l := range legs {
		a := wps[i]
		startM := l.StartDistanceKm * 1000
		lengthM := l.LengthKm * 1000
		out = append(out, TrackSample{Lon: a.Lon, Lat: a.Lat, DistanceKm: l.StartDistanceKm, Leg: i, Waypoint: i})
		n := steps[i]
		if n == 0 {
			continue
		}
		step := lengthM / float64(n)
		az := l.InitialAzimuthDeg
		if ss, ok := g.(StepSolver); ok {
			if buf == nil {
				buf = make([]float64, 2*stepChunk)
			}
			for k0 := 1; k0 < n; k0 += stepChunk {
				m := min(stepChunk, n-k0)
				ss.DirectSteps(a.Lat, a.Lon, az, step, k0, m, buf)
				for j := range m {
					d := step * float64(k0+j)
					out = append(out, TrackSample{Lon: lonAnswer(buf[2*j+1]), Lat: buf[2*j], DistanceKm: (startM + d) / 1000, Leg: i, Waypoint: -1})
				}
			}
			continue
		}
		for k := 1; k < n; k++ {
			d := step * float64(k)
			lat, lon := g.Direct(a.Lat, a.Lon, az, d)
			out = append(out, TrackSample{Lon: lonAnswer(lon), Lat: lat, DistanceKm: (startM + d) / 1000, Leg: i, Waypoint: -1})
		}
	}
	last := wps[len(wps)-1]
	end := legs[len(legs)-1]
	out = append(out, TrackSample{Lon: last.Lon, Lat: last.Lat, DistanceKm: end.StartDistanceKm + end.LengthKm,
		Leg: len(legs) - 1, Waypoint: len(wps) - 1})
	return out, nil
}

// String formats a sample for debugging.
func (s TrackSample) String() string {
	return fmt.Sprintf("(%.6f, %.6f) %.3f km leg %d wp %d", s.Lon, s.Lat, s.DistanceKm, s.Leg, s.Waypoint)
}
