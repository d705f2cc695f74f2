package survey

import (
	"path/filepath"
	"strings"

	"ridgeflank/geo"
)

// PlanFileFormat is the track format of a plan file named name, from its extension: "geojson"
// (.geojson, .json), "gpx" (.gpx) or "csv" (.csv, .txt, .tsv); "" (recognise it from the
// content, as geo.ParseTracks does) for any other name.
func PlanFileFormat(name string) string {
	switch strings.ToLower(filepath.Ext(name)) {
	case ".geojson", ".json":
		return "geojson"
	case ".gpx":
		return "gpx"
	case ".csv", ".txt", ".tsv":
		return "csv"
	}
	return ""
}

// ReadPlanLines reads the lines of a plan from a file (geo.ParseTracks, which reuses the track
// parsers of geo): GeoJSON (a LineString, a MultiLineString, or a FeatureCollection of line
// features → one Line per line string, named by the feature's "name" property), GPX (each route
// rte, or each track trk when there are no routes → one Line named by its <name>; rtept/trkpt
// names become waypoint names) or CSV (lon/lat columns in decimal degrees or degrees and decimal
// minutes, geo.ParseLatitude; an optional line column splitting the rows into lines, an
// optional name column naming waypoints). format is "geojson", "gpx", "csv" or "" to recognise
// it from the content. At most maxLines lines (fault.Over("max_tracks")) of 2..maxWaypoints
// waypoints each; errors are faults of kind fault.InvalidTrack naming the line and row.
func ReadPlanLines(data []byte, format string, maxLines, maxWaypoints int) ([]Line, error) {
	ts, err := geo.ParseTracks(data, format, maxLines, maxWaypoints)
	if err != nil {
		return nil, err
	}
	lines := make([]Line, len(ts))
	for i, t := range ts {
		lines[i] = Line{Name: t.Name, Waypoints: t.Waypoints}
	}
	return lines, nil
}
