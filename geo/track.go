package geo

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
)

// Waypoint is a point of a planned track: longitude and latitude in decimal degrees (longitude
// in −180..180 once parsed) and an optional name. Tracks here are for survey planning, not for
// navigation.
type Waypoint struct {
	Lon  float64 `json:"lon"`
	Lat  float64 `json:"lat"`
	Name string  `json:"name,omitempty"`
}

// DefaultMaxWaypoints is the waypoint limit the track parsers apply when given maxWaypoints <= 0.
const DefaultMaxWaypoints = 100_000

// ErrInvalidTrack is wrapped by every track parsing and validation error. Those errors are
// *fault.Error of kind fault.InvalidTrack (field TrackField), or fault.LimitExceeded with limit
// "max_vertices" when a track has more waypoints than allowed (Limit.Asked is the number the
// input holds, 0 when not counted).
var ErrInvalidTrack = errors.New("invalid track")

// ValidateWaypoints checks a track: at least 2 and at most maxWaypoints waypoints
// (<= 0 means DefaultMaxWaypoints), finite coordinates, latitudes within ±90 and longitudes
// within −180..360. It returns the waypoints with longitudes wrapped into −180..180 (a copy).
func ValidateWaypoints(wps []Waypoint, maxWaypoints int) ([]Waypoint, error) {
	if maxWaypoints <= 0 {
		maxWaypoints = DefaultMaxWaypoints
	}
	if len(wps) < 2 {
		return nil, trackErr("a track needs at least 2 waypoints, got %d", len(wps))
	}
	if len(wps) > maxWaypoints {
		return nil, trackOver(maxWaypoints, len(wps), "%d waypoints, more than the limit of %d", len(wps), maxWaypoints)
	}
	out := make([]Waypoint, len(wps))
	for i, w := range wps {
		if err := checkLonLat(w.Lon, w.Lat); err != nil {
			return nil, trackErr("waypoint %d: %v", i, err)
		}
		out[i] = Waypoint{Lon: lonAnswer(w.Lon), Lat: w.Lat, Name: w.Name}
	}
	return out, nil
}

func checkLonLat(lon, lat float64) error {
	switch {
	case math.IsNaN(lon) || math.IsNaN(lat) || math.IsInf(lon, 0) || math.IsInf(lat, 0):
		return fmt.Errorf("coordinates (%g, %g) are not finite", lon, lat)
	case lat < -90 || lat > 90:
		return fmt.Errorf("latitude %g is outside −90..90", lat)
	case lon < -180 || lon > 360:
		return fmt.Errorf("longitude %g is outside −180..360", lon)
	}
	return nil
}

// lonAnswer wraps a longitude into [−180, 180], keeping +180 as given.
func lonAnswer(lon float64) float64 {
	if lon == 180 {
		return 180
	}
	return LonTo180(lon)
}

// ParseTrack reads waypoints in the given format: "geojson", "gpx", "csv", or "" to recognise it
// from the content (a first non-blank byte '{' means GeoJSON, '<' means GPX, anything else CSV).
func ParseTrack(data []byte, format string, maxWaypoints int) ([]Waypoint, error) {
	f, err := trackFormat(data, format)
	if err != nil {
		return nil, err
	}
	switch f {
	case "geojson", "json":
		return ParseTrackGeoJSON(data, maxWaypoints)
	case "gpx":
		return ParseTrackGPX(data, maxWaypoints)
	case "csv":
		return ParseTrackCSV(data, maxWaypoints)
	}
	return nil, trackErr("unknown track format %q (want geojson, gpx or csv)", format)
}

// trackFormat is format lower-cased, or recognised from the content when "" (a first non-blank
// byte '{' means GeoJSON, '<' GPX, anything else CSV).
func trackFormat(data []byte, format string) (string, error) {
	f := strings.ToLower(strings.TrimSpace(format))
	if f != "" {
		return f, nil
	}
	t := bytes.TrimLeft(bytes.TrimPrefix(data, []byte("\ufeff")), " \t\r\n")
	switch {
	case len(t) == 0:
		return "", trackErr("empty input")
	case t[0] == '{':
		return "geojson", nil
	case t[0] == '<':
		return "gpx", nil
	}
	return "csv", nil
}

// ParseTrackGeoJSON reads waypoints from GeoJSON (RFC 7946): a LineString or MultiLineString
// (bare, in a Feature, or in a FeatureCollection with exactly one feature), or a
// FeatureCollection whose features are all Points, taken in order, each named by its "name"
// property if that is a string. The lines of a MultiLineString are joined in order into one
// track (a repeated junction position is kept once), so the gap between them becomes a leg.
// Altitudes are ignored. maxWaypoints <= 0 means DefaultMaxWaypoints. Errors wrap
// ErrInvalidTrack (see there) and give the position index. A LineString carries no names.
func ParseTrackGeoJSON(data []byte, maxWaypoints int) ([]Waypoint, error) {
	if maxWaypoints <= 0 {
		maxWaypoints = DefaultMaxWaypoints
	}
	var obj geoJSONObject
	if err := json.Unmarshal(data, &obj); err != nil {
		return nil, trackErr("not valid GeoJSON: %v", err)
	}
	if obj.Type == "FeatureCollection" {
		if len(obj.Features) > maxWaypoints {
			return nil, trackOver(maxWaypoints, len(obj.Features), "%d features, more than the limit of %d waypoints", len(obj.Features), maxWaypoints)
		}
		feats := make([]geoJSONObject, len(obj.Features))
		points := 0
		for i, raw := range obj.Features {
			if err := json.Unmarshal(raw, &feats[i]); err != nil {
				return nil, trackErr("feature %d: %v", i, err)
			}
			var g geoJSONObject
			if len(feats[i].Geometry) > 0 && string(bytes.TrimSpace(feats[i].Geometry)) != "null" {
				if err := json.Unmarshal(feats[i].Geometry, &g); err != nil {
					return nil, trackErr("feature %d geometry: %v", i, err)
				}
			}
			if g.Type == "Point" {
				points++
			}
		}
		switch {
		case len(feats) > 0 && points == len(feats):
			return pointFeatures(feats, maxWaypoints)
		case len(feats) != 1:
			return nil, trackErr("a FeatureCollection track must hold one LineString feature or only Point features; found %d features, %d of them Points", len(feats), points)
		}
		obj = feats[0]
	}
	if obj.Type == "Feature" {
		if len(obj.Geometry) == 0 || string(bytes.TrimSpace(obj.Geometry)) == "null" {
			return nil, trackErr("the Feature has no geometry")
		}
		var g geoJSONObject
		if err := json.Unmarshal(obj.Geometry, &g); err != nil {
			return nil, trackErr("feature geometry: %v", err)
		}
		obj = g
	}
	var lines [][][]float64
	switch obj.Type {
	case "LineString":
		var c [][]float64
		if err := json.Unmarshal(obj.Coordinates, &c); err != nil {
			return nil, trackErr("LineString coordinates: %v", err)
		}
		lines = [][][]float64{c}
	case "MultiLineString":
		if err := json.Unmarshal(obj.Coordinates, &lines); err != nil {
			return nil, trackErr("MultiLineString coordinates: %v", err)
		}
	default:
		return nil, trackErr("a track must be a GeoJSON LineString, MultiLineString or a FeatureCollection of Points, got %q", obj.Type)
	}
	npos := 0
	for _, line := range lines {
		npos += len(line)
	}
	var wps []Waypoint
	for li, line := range lines {
		lw, err := lineWaypoints(line, func(k int) string {
			if obj.Type == "MultiLineString" {
				return fmt.Sprintf("line %d position %d", li, k)
			}
			return fmt.Sprintf("position %d", k)
		})
		if err != nil {
			return nil, err
		}
		for k, w := range lw {
			if k == 0 && li > 0 && len(wps) > 0 && wps[len(wps)-1] == w {
				continue
			}
			if len(wps) == maxWaypoints {
				return nil, trackOver(maxWaypoints, npos, "%d positions, more than the limit of %d waypoints", npos, maxWaypoints)
			}
			wps = append(wps, w)
		}
	}
	return ValidateWaypoints(wps, maxWaypoints)
}

// lineWaypoints reads the positions of one GeoJSON line (altitudes ignored); where names
// position k in errors.
func lineWaypoints(line [][]float64, where func(k int) string) ([]Waypoint, error) {
	out := make([]Waypoint, 0, len(line))
	for k, pos := range line {
		if len(pos) < 2 {
			return nil, trackErr("%s has %d number(s); a GeoJSON position needs longitude and latitude", where(k), len(pos))
		}
		if err := checkLonLat(pos[0], pos[1]); err != nil {
			return nil, trackErr("%s: %v", where(k), err)
		}
		out = append(out, Waypoint{Lon: lonAnswer(pos[0]), Lat: pos[1]})
	}
	return out, nil
}

func pointFeatures(feats []geoJSONObject, maxWaypoints int) ([]Waypoint, error) {
	wps := make([]Waypoint, 0, len(feats))
	for i, f := range feats {
		var g geoJSONObject
		_ = json.Unmarshal(f.Geometry, &g) // decoded once already
		var c []float64
		if err := json.Unmarshal(g.Coordinates, &c); err != nil {
			return nil, trackErr("feature %d Point coordinates: %v", i, err)
		}
		if len(c) < 2 {
			return nil, trackErr("feature %d position has %d number(s); a GeoJSON position needs longitude and latitude", i, len(c))
		}
		if err := checkLonLat(c[0], c[1]); err != nil {
			return nil, trackErr("feature %d: %v", i, err)
		}
		name, _ := f.Properties["name"].(string)
		wps = append(wps, Waypoint{Lon: lonAnswer(c[0]), Lat: c[1], Name: name})
	}
	return ValidateWaypoints(wps, maxWaypoints)
}
