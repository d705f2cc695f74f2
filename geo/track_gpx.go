package geo

import (
	"bytes"
	"encoding/xml"
	"errors"
	"io"
	"strconv"
	"strings"
)

// ParseTrackGPX reads waypoints from GPX 1.1 (or 1.0; the open GPS Exchange Format of
// TopoGrafix, https://www.topografix.com/GPX/1/1/). Route points (rte/rtept) are used when the
// file has any; otherwise track points (trk/trkseg/trkpt); otherwise the stand-alone waypoints
// (wpt), in document order. Several routes or segments are joined in order. Each point needs
// decimal-degree lat and lon attributes (GPX latitudeType −90..90, longitudeType −180..180; we
// accept up to 360) and may have a <name>. maxWaypoints <= 0 means DefaultMaxWaypoints. Errors
// wrap ErrInvalidTrack and give the line of the offending element.
func ParseTrackGPX(data []byte, maxWaypoints int) ([]Waypoint, error) {
	if maxWaypoints <= 0 {
		maxWaypoints = DefaultMaxWaypoints
	}
	groups, err := parseGPX(data, 3*maxWaypoints, maxWaypoints)
	if err != nil {
		return nil, err
	}
	for _, g := range groups {
		var wps []Waypoint
		for _, t := range g {
			wps = append(wps, t.Waypoints...)
		}
		if len(wps) > 0 {
			return ValidateWaypoints(wps, maxWaypoints)
		}
	}
	return nil, trackErr("GPX has no rtept, trkpt or wpt points")
}

// ParseTracksGPX reads the tracks of a GPX file (see ParseTrackGPX for the format): each route
// (rte) is a Track named by the route's <name>, or, when the file has no route points, each
// track (trk, its segments joined), or, with neither, the stand-alone waypoints (wpt) as one
// Track. Point names are kept. Every Track is validated by ValidateWaypoints; more than
// maxTracks tracks is fault.Over("max_tracks"). maxWaypoints <= 0 means DefaultMaxWaypoints,
// maxTracks <= 0 DefaultMaxTracks.
func ParseTracksGPX(data []byte, maxTracks, maxWaypoints int) ([]Track, error) {
	maxTracks, maxWaypoints = trackLimits(maxTracks, maxWaypoints)
	groups, err := parseGPX(data, maxTracks*maxWaypoints, maxWaypoints)
	if err != nil {
		return nil, err
	}
	for _, g := range groups {
		n := 0
		for _, t := range g {
			n += len(t.Waypoints)
		}
		if n > 0 {
			return validTracks(g, maxTracks, maxWaypoints, "GPX")
		}
	}
	return nil, trackErr("GPX has no rtept, trkpt or wpt points")
}

// parseGPX reads the points of a GPX file into three groups: routes, tracks (segments joined)
// and the stand-alone waypoints (one Track), each Track named by its <name>. More than
// maxPoints points in all is an error.
func parseGPX(data []byte, maxPoints, maxWaypoints int) ([3][]Track, error) {
	var groups [3][]Track // rte, trk, wpt
	d := xml.NewDecoder(bytes.NewReader(data))
	d.Strict = true
	total := 0
	sawRoot := false
	var stack []string // open elements that were not decoded whole
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			line, _ := d.InputPos()
			var se *xml.SyntaxError
			if errors.As(err, &se) {
				line = se.Line
			}
			return groups, trackErr("GPX line %d: %v", line, err)
		}
		if _, ok := tok.(xml.EndElement); ok && len(stack) > 0 {
			stack = stack[:len(stack)-1]
			continue
		}
		se, ok := tok.(xml.StartElement)
		if !ok {
			continue
		}
		if !sawRoot {
			if se.Name.Local != "gpx" {
				return groups, trackErr("not GPX: the root element is <%s>, want <gpx>", se.Name.Local)
			}
			sawRoot = true
			stack = append(stack, se.Name.Local)
			continue
		}
		if len(stack) == 0 { // an element after </gpx>: a second root, not well-formed XML
			line, _ := d.InputPos()
			return groups, trackErr("GPX line %d: <%s> after the end of <gpx> (a document has one root element)", line, se.Name.Local)
		}
		parent := stack[len(stack)-1]
		var which int
		switch se.Name.Local {
		case "rte", "trk":
			which = 0
			if se.Name.Local == "trk" {
				which = 1
			}
			groups[which] = append(groups[which], Track{})
			stack = append(stack, se.Name.Local)
			continue
		case "name":
			if parent == "rte" || parent == "trk" {
				var name string
				if err := d.DecodeElement(&name, &se); err != nil {
					line, _ := d.InputPos()
					return groups, trackErr("GPX line %d: <name>: %v", line, err)
				}
				g := 0
				if parent == "trk" {
					g = 1
				}
				groups[g][len(groups[g])-1].Name = strings.TrimSpace(name)
				continue
			}
			stack = append(stack, se.Name.Local)
			continue
		case "rtept":
			which = 0
		case "trkpt":
			which = 1
		case "wpt":
			which = 2
		default:
			stack = append(stack, se.Name.Local)
			continue
		}
		line, _ := d.InputPos()
		var pt struct {
			Lat  *string `xml:"lat,attr"`
			Lon  *string `xml:"lon,attr"`
			Name string  `xml:"name"`
		}
		if err := d.DecodeElement(&pt, &se); err != nil {
			return groups, trackErr("GPX line %d: <%s>: %v", line, se.Name.Local, err)
		}
		if pt.Lat == nil || pt.Lon == nil {
			return groups, trackErr("GPX line %d: <%s> needs lat and lon attributes", line, se.Name.Local)
		}
		lat, err1 := strconv.ParseFloat(strings.TrimSpace(*pt.Lat), 64)
		lon, err2 := strconv.ParseFloat(strings.TrimSpace(*pt.Lon), 64)
		if err1 != nil || err2 != nil {
			return groups, trackErr("GPX line %d: <%s lat=%q lon=%q>: coordinates must be decimal degrees", line, se.Name.Local, *pt.Lat, *pt.Lon)
		}
		if err := checkLonLat(lon, lat); err != nil {
			return groups, trackErr("GPX line %d: <%s>: %v", line, se.Name.Local, err)
		}
		total++
		if total > maxPoints {
			return groups, trackOver(maxWaypoints, 0, "GPX line %d: more than %d points, more than the limit of %d waypoints can use", line, maxPoints, maxWaypoints)
		}
		if len(groups[which]) == 0 { // a point outside any rte/trk (or the first wpt)
			groups[which] = append(groups[which], Track{})
		}
		t := &groups[which][len(groups[which])-1]
		t.Waypoints = append(t.Waypoints, Waypoint{Lon: lonAnswer(lon), Lat: lat, Name: strings.TrimSpace(pt.Name)})
	}
	if !sawRoot {
		return groups, trackErr("not GPX: no <gpx> element")
	}
	return groups, nil
}
