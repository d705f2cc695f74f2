package geo

import (
	"bytes"
	"encoding/json"
	"fmt"

	"ridgeflank/fault"
)

// Track is one named track of a file that holds several, such as the lines of a survey plan.
type Track struct {
	Name      string
	Waypoints []Waypoint
}

// DefaultMaxTracks is the track limit ParseTracks applies when given maxTracks <= 0.
const DefaultMaxTracks = 1_000

func trackLimits(maxTracks, maxWaypoints int) (int, int) {
	if maxTracks <= 0 {
		maxTracks = DefaultMaxTracks
	}
	if maxWaypoints <= 0 {
		maxWaypoints = DefaultMaxWaypoints
	}
	return maxTracks, maxWaypoints
}

// validTracks drops tracks without waypoints and validates the others (ValidateWaypoints; an
// error names the track by number and name); more than maxTracks is fault.Over("max_tracks").
func validTracks(ts []Track, maxTracks, maxWaypoints int, what string) ([]Track, error) {
	out := make([]Track, 0, len(ts))
	for _, t := range ts {
		if len(t.Waypoints) > 0 {
			out = append(out, t)
		}
	}
	if len(out) == 0 {
		return nil, trackErr("%s holds no track", what)
	}
	if len(out) > maxTracks {
		return nil, fault.Over("max_tracks", int64(maxTracks), int64(len(out)), TrackField,
			"%w: %s holds %d tracks, more than the limit of %d", ErrInvalidTrack, what, len(out), maxTracks)
	}
	for i := range out {
		wps, err := ValidateWaypoints(out[i].Waypoints, maxWaypoints)
		if err != nil {
			label := fmt.Sprintf("track %d", i+1)
			if out[i].Name != "" {
				label += fmt.Sprintf(" (%s)", out[i].Name)
			}
			return nil, wrapFault(err, fault.InvalidTrack, TrackField, "%s", label)
		}
		out[i].Waypoints = wps
	}
	return out, nil
}

// ParseTracks reads every track of a file in the given format ("geojson", "gpx", "csv", or ""
// to recognise it from the content, as ParseTrack does): ParseTracksGeoJSON, ParseTracksGPX or
// ParseTracksCSV. Each track has 2..maxWaypoints waypoints (<= 0: DefaultMaxWaypoints) and
// there are at most maxTracks tracks (<= 0: DefaultMaxTracks; more is fault.Over("max_tracks")).
// Errors wrap ErrInvalidTrack.
func ParseTracks(data []byte, format string, maxTracks, maxWaypoints int) ([]Track, error) {
	f, err := trackFormat(data, format)
	if err != nil {
		return nil, err
	}
	switch f {
	case "geojson", "json":
		return ParseTracksGeoJSON(data, maxTracks, maxWaypoints)
	case "gpx":
		return ParseTracksGPX(data, maxTracks, maxWaypoints)
	case "csv":
		return ParseTracksCSV(data, maxTracks, maxWaypoints)
	}
	return nil, trackErr("unknown track format %q (want geojson, gpx or csv)", format)
}

// ParseTracksGeoJSON reads the tracks of GeoJSON (RFC 7946): a LineString is one track; a
// MultiLineString one track per line string; a Feature or a FeatureCollection one track per
// LineString feature and per line string of a MultiLineString feature, named by the feature's
// "name" property when it is a string (the parts of a MultiLineString get " 1", " 2", … after
// it). A FeatureCollection of Points only is one track of those points, as ParseTrackGeoJSON
// reads it. Altitudes are ignored; limits as ParseTracks.
func ParseTracksGeoJSON(data []byte, maxTracks, maxWaypoints int) ([]Track, error) {
	maxTracks, maxWaypoints = trackLimits(maxTracks, maxWaypoints)
	var obj geoJSONObject
	if err := json.Unmarshal(data, &obj); err != nil {
		return nil, trackErr("not valid GeoJSON: %v", err)
	}
	type feature struct {
		where, name string
		geom        json.RawMessage
	}
	var feats []feature
	switch obj.Type {
	case "FeatureCollection":
		if len(obj.Features) > maxTracks*maxWaypoints {
			return nil, fault.Over("max_tracks", int64(maxTracks), int64(len(obj.Features)), TrackField,
				"%w: %d features, more than %d tracks of %d waypoints", ErrInvalidTrack, len(obj.Features), maxTracks, maxWaypoints)
		}
		points := 0
		fs := make([]geoJSONObject, len(obj.Features))
		for i, raw := range obj.Features {
			if err := json.Unmarshal(raw, &fs[i]); err != nil {
				return nil, trackErr("feature %d: %v", i, err)
			}
			var g geoJSONObject
			if len(fs[i].Geometry) > 0 && string(bytes.TrimSpace(fs[i].Geometry)) != "null" {
				if err := json.Unmarshal(fs[i].Geometry, &g); err != nil {
					return nil, trackErr("feature %d geometry: %v", i, err)
				}
			}
			if g.Type == "Point" {
				points++
			}
			name, _ := fs[i].Properties["name"].(string)
			feats = append(feats, feature{fmt.Sprintf("feature %d", i), name, fs[i].Geometry})
		}
		if len(fs) > 0 && points == len(fs) {
			wps, err := pointFeatures(fs, maxWaypoints)
			if err != nil {
				return nil, err
			}
			return []Track{{Waypoints: wps}}, nil
		}
	case "Feature":
		name, _ := obj.Properties["name"].(string)
		feats = []feature{{"the Feature", name, obj.Geometry}}
	default:
		feats = []feature{{"the geometry", "", data}}
	}
	var tracks []Track
	for _, f := range feats {
		if len(f.geom) == 0 || string(bytes.TrimSpace(f.geom)) == "null" {
			return nil, trackErr("%s has no geometry", f.where)
		}
		var g geoJSONObject
		if err := json.Unmarshal(f.geom, &g); err != nil {
			return nil, trackErr("%s geometry: %v", f.where, err)
		}
		var lines [][][]float64
		switch g.Type {
		case "LineString":
			var c [][]float64
			if err := json.Unmarshal(g.Coordinates, &c); err != nil {
				return nil, trackErr("%s: LineString coordinates: %v", f.where, err)
			}
			lines = [][][]float64{c}
		case "MultiLineString":
			if err := json.Unmarshal(g.Coordinates, &lines); err != nil {
				return nil, trackErr("%s: MultiLineString coordinates: %v", f.where, err)
			}
		default:
			return nil, trackErr("%s is a %q; the lines of a plan are LineStrings or MultiLineStrings (or a FeatureCollection of Points only, as one line)", f.where, g.Type)
		}
		if len(tracks)+len(lines) > maxTracks {
			return nil, fault.Over("max_tracks", int64(maxTracks), int64(len(tracks)+len(lines)), TrackField,
				"%w: more than the limit of %d tracks", ErrInvalidTrack, maxTracks)
		}
		for li, line := range lines {
			if len(line) > maxWaypoints {
				return nil, trackOver(maxWaypoints, len(line), "%s: %d positions, more than the limit of %d waypoints", f.where, len(line), maxWaypoints)
			}
			wps, err := lineWaypoints(line, func(k int) string {
				if len(lines) > 1 {
					return fmt.Sprintf("%s line %d position %d", f.where, li, k)
				}
				return fmt.Sprintf("%s position %d", f.where, k)
			})
			if err != nil {
				return nil, err
			}
			name := f.name
			if len(lines) > 1 && name != "" {
				name = fmt.Sprintf("%s %d", name, li+1)
			}
			tracks = append(tracks, Track{Name: name, Waypoints: wps})
		}
	}
	return validTracks(tracks, maxTracks, maxWaypoints, "the GeoJSON")
}
