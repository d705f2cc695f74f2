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
	d := xml.NewDecoder(bytes.NewReader(data))
	d.Strict = true
	var lists [3][]Waypoint // rtept, trkpt, wpt
	total := 0
	sawRoot := false
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
			return nil, trackErr("GPX line %d: %v", line, err)
		}
		se, ok := tok.(xml.StartElement)
		if !ok {
			continue
		}
		if !sawRoot {
			if se.Name.Local != "gpx" {
				return nil, trackErr("not GPX: the root element is <%s>, want <gpx>", se.Name.Local)
			}
			sawRoot = true
			continue
		}
		var which int
		switch se.Name.Local {
		case "rtept":
			which = 0
		case "trkpt":
			which = 1
		case "wpt":
			which = 2
		default:
			continue
		}
		line, _ := d.InputPos()
		var pt struct {
			Lat  *string `xml:"lat,attr"`
			Lon  *string `xml:"lon,attr"`
			Name string  `xml:"name"`
		}
		if err := d.DecodeElement(&pt, &se); err != nil {
			return nil, trackErr("GPX line %d: <%s>: %v", line, se.Name.Local, err)
		}
		if pt.Lat == nil || pt.Lon == nil {
			return nil, trackErr("GPX line %d: <%s> needs lat and lon attributes", line, se.Name.Local)
		}
		lat, err1 := strconv.ParseFloat(strings.TrimSpace(*pt.Lat), 64)
		lon, err2 := strconv.ParseFloat(strings.TrimSpace(*pt.Lon), 64)
		if err1 != nil || err2 != nil {
			return nil, trackErr("GPX line %d: <%s lat=%q lon=%q>: coordinates must be decimal degrees", line, se.Name.Local, *pt.Lat, *pt.Lon)
		}
		if err := checkLonLat(lon, lat); err != nil {
			return nil, trackErr("GPX line %d: <%s>: %v", line, se.Name.Local, err)
		}
		total++
		if total > 3*maxWaypoints {
			return nil, trackOver(maxWaypoints, 0, "GPX line %d: more than %d points, more than the limit of %d waypoints can use", line, 3*maxWaypoints, maxWaypoints)
		}
		lists[which] = append(lists[which], Waypoint{Lon: lonAnswer(lon), Lat: lat, Name: strings.TrimSpace(pt.Name)})
	}
	if !sawRoot {
		return nil, trackErr("not GPX: no <gpx> element")
	}
	for _, l := range lists {
		if len(l) > 0 {
			return ValidateWaypoints(l, maxWaypoints)
		}
	}
	return nil, trackErr("GPX has no rtept, trkpt or wpt points")
}
