package geo

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
	"unicode"
)

// ParseLatitude reads a latitude written in decimal degrees or as seamen write positions, and
// returns decimal degrees (north positive). Accepted forms, with or without spaces:
//
//	-12.5083   12.5083S   S12.5083   12°30.5'S   12 30.5 S   -12 30.500   12°30'30"S   12:30.5 S
//
// Degrees, minutes and seconds may be separated by spaces, colons or the symbols ° º ˚ ' ′ ’ "
// ″ ”. With minutes the degrees must be a whole number and minutes (and seconds) below 60; a
// decimal fraction is allowed only on the last part. A hemisphere letter N or S (either case)
// may lead or trail, but not together with a minus sign.
func ParseLatitude(s string) (float64, error) { return parseAngle(s, true) }

// ParseLongitude is ParseLatitude for longitudes (hemisphere letters E or W, west negative,
// e.g. 012°30.50'W = −12.508333). Values from −180 to 360 are accepted and returned as written.
func ParseLongitude(s string) (float64, error) { return parseAngle(s, false) }

func isAngleSeparator(r rune) bool {
	switch r {
	case '°', 'º', '˚', '\'', '′', '’', '"', '″', '”', ':':
		return true
	}
	return unicode.IsSpace(r)
}

func parseAngle(in string, lat bool) (float64, error) {
	s := strings.TrimSpace(in)
	if s == "" {
		return 0, errors.New("empty value")
	}
	var hemi rune
	if r := unicode.ToUpper(rune(s[len(s)-1])); strings.ContainsRune("NSEW", r) {
		hemi = r
		s = strings.TrimSpace(s[:len(s)-1])
	} else if r := unicode.ToUpper(rune(s[0])); strings.ContainsRune("NSEW", r) {
		hemi = r
		s = strings.TrimSpace(s[1:])
	}
	neg := false
	switch {
	case strings.HasPrefix(s, "-"):
		neg, s = true, s[1:]
	case strings.HasPrefix(s, "\u2212"): // minus sign
		neg, s = true, s[len("\u2212"):]
	case strings.HasPrefix(s, "+"):
		s = s[1:]
	}
	parts := strings.FieldsFunc(s, isAngleSeparator)
	if len(parts) == 0 || len(parts) > 3 {
		return 0, fmt.Errorf("%q is not an angle (want decimal degrees or degrees and decimal minutes)", in)
	}
	vals := make([]float64, len(parts))
	for i, p := range parts {
		for _, r := range p {
			if !(r >= '0' && r <= '9' || r == '.') {
				return 0, fmt.Errorf("%q is not an angle: unexpected %q", in, r)
			}
		}
		v, err := strconv.ParseFloat(p, 64)
		if err != nil {
			return 0, fmt.Errorf("%q is not an angle: bad number %q", in, p)
		}
		if i < len(parts)-1 && strings.Contains(p, ".") {
			return 0, fmt.Errorf("%q: only the last part (degrees, minutes or seconds) may have a decimal fraction", in)
		}
		if i > 0 && v >= 60 {
			return 0, fmt.Errorf("%q: minutes and seconds must be below 60", in)
		}
		vals[i] = v
	}
	v := vals[0]
	if len(vals) > 1 {
		v += vals[1] / 60
	}
	if len(vals) > 2 {
		v += vals[2] / 3600
	}
	if hemi != 0 {
		if neg {
			return 0, fmt.Errorf("%q has both a minus sign and a hemisphere letter", in)
		}
		if lat && (hemi == 'E' || hemi == 'W') {
			return 0, fmt.Errorf("%q: a latitude takes N or S, not %c", in, hemi)
		}
		if !lat && (hemi == 'N' || hemi == 'S') {
			return 0, fmt.Errorf("%q: a longitude takes E or W, not %c", in, hemi)
		}
		neg = hemi == 'S' || hemi == 'W'
	}
	if neg {
		v = -v
	}
	if lat && (v < -90 || v > 90) {
		return 0, fmt.Errorf("latitude %q is outside −90..90", in)
	}
	if !lat && (v < -180 || v > 360) {
		return 0, fmt.Errorf("longitude %q is outside −180..360", in)
	}
	return v, nil
}

// csvColumn classifies a header cell.
func csvColumn(h string) string {
	k := strings.ToLower(strings.TrimSpace(h))
	k = strings.NewReplacer(" ", "", "_", "", "-", "", "(deg)", "", "[deg]", "", "(degrees)", "").Replace(k)
	k = strings.TrimSuffix(k, "deg")
	k = strings.TrimSuffix(k, "degrees")
	switch k {
	case "lon", "long", "lng", "longitude":
		return "lon"
	case "lat", "latitude":
		return "lat"
	case "name", "waypoint", "wp", "label", "id":
		return "name"
	case "line", "lineid", "track", "trackid":
		return "line"
	case "linename", "trackname":
		return "linename"
	}
	return ""
}

// ParseTrackCSV reads waypoints from delimited text with a header row that names the columns:
// a longitude column (lon, long, lng or longitude), a latitude column (lat or latitude), in
// either order, and optionally a name column (name, waypoint, wp, label or id); other columns
// are ignored, case and a "_deg"/"(deg)" suffix do not matter. The delimiter is a comma, or a
// semicolon or tab when the header has no comma. Lines starting with '#' and blank lines are
// skipped. Values are decimal degrees or degrees-and-minutes as written at sea (see
// ParseLatitude). A line column (see ParseTracksCSV) is ignored here: all rows are one track.
// maxWaypoints <= 0 means DefaultMaxWaypoints. Errors wrap ErrInvalidTrack and name the line.
func ParseTrackCSV(data []byte, maxWaypoints int) ([]Waypoint, error) {
	if maxWaypoints <= 0 {
		maxWaypoints = DefaultMaxWaypoints
	}
	rows, err := parseCSVTrack(data, maxWaypoints, maxWaypoints)
	if err != nil {
		return nil, err
	}
	wps := make([]Waypoint, len(rows))
	for i, r := range rows {
		wps[i] = r.wp
	}
	return ValidateWaypoints(wps, maxWaypoints)
}

// ParseTracksCSV reads tracks from delimited text as ParseTrackCSV reads one, with an optional
// line column (line, line_id, track or track_id) that splits the rows into tracks: a new track
// starts wherever its value changes, and the value names the track unless a line_name (or
// track_name) column gives the name. Without a line column the file is one track. Limits as
// ParseTracks.
func ParseTracksCSV(data []byte, maxTracks, maxWaypoints int) ([]Track, error) {
	maxTracks, maxWaypoints = trackLimits(maxTracks, maxWaypoints)
	rows, err := parseCSVTrack(data, maxTracks*maxWaypoints, maxWaypoints)
	if err != nil {
		return nil, err
	}
	var ts []Track
	for i, r := range rows {
		if i == 0 || r.line != rows[i-1].line {
			name := r.lineName
			if name == "" {
				name = r.line
			}
			ts = append(ts, Track{Name: name})
		}
		t := &ts[len(ts)-1]
		t.Waypoints = append(t.Waypoints, r.wp)
	}
	return validTracks(ts, maxTracks, maxWaypoints, "the CSV")
}

// csvRow is one waypoint row of a track CSV with its line key and line name ("" without those
// columns).
type csvRow struct {
	wp             Waypoint
	line, lineName string
}

// parseCSVTrack reads the rows of a track CSV (see ParseTrackCSV); more than maxRows rows is
// fault.Over("max_vertices") with limit maxWaypoints.
func parseCSVTrack(data []byte, maxRows, maxWaypoints int) ([]csvRow, error) {
	data = bytes.TrimPrefix(data, []byte("\ufeff"))
	delim := ','
	for _, line := range bytes.Split(data, []byte("\n")) {
		t := bytes.TrimSpace(line)
		if len(t) == 0 || t[0] == '#' {
			continue
		}
		switch {
		case bytes.ContainsRune(t, ','):
		case bytes.ContainsRune(t, ';'):
			delim = ';'
		case bytes.ContainsRune(t, '\t'):
			delim = '\t'
		}
		break
	}
	r := csv.NewReader(bytes.NewReader(data))
	r.Comma = delim
	r.Comment = '#'
	r.FieldsPerRecord = -1
	r.LazyQuotes = true // 12°30'30"S has a bare quote
	r.TrimLeadingSpace = true
	header, err := r.Read()
	if err == io.EOF {
		return nil, trackErr("CSV is empty (it needs a header row such as lon,lat)")
	}
	if err != nil {
		return nil, trackErr("CSV: %v", err)
	}
	var rows []csvRow
	lonCol, latCol, nameCol, lineCol, lineNameCol := -1, -1, -1, -1, -1
	for i, h := range header {
		var p *int
		switch csvColumn(h) {
		case "lon":
			p = &lonCol
		case "lat":
			p = &latCol
		case "name":
			p = &nameCol
		case "line":
			p = &lineCol
		case "linename":
			p = &lineNameCol
		default:
			continue
		}
		if *p >= 0 {
			line, _ := r.FieldPos(i)
			return nil, trackErr("line %d: header names column %q twice (columns %d and %d)", line, csvColumn(h), *p+1, i+1)
		}
		*p = i
	}
	if lonCol < 0 || latCol < 0 {
		line, _ := r.FieldPos(0)
		return nil, trackErr("line %d: the CSV header must name a longitude column (lon or longitude) and a latitude column (lat or latitude); found %q", line, strings.Join(header, string(delim)))
	}
	cellAt := func(rec []string, c int) string {
		if c >= 0 && c < len(rec) {
			return strings.TrimSpace(rec[c])
		}
		return ""
	}
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, trackErr("CSV: %v", err)
		}
		line, _ := r.FieldPos(0)
		if len(rec) == 1 && strings.TrimSpace(rec[0]) == "" {
			continue
		}
		if len(rec) <= max(lonCol, latCol) {
			return nil, trackErr("line %d: %d field(s), but the header puts longitude in column %d and latitude in column %d", line, len(rec), lonCol+1, latCol+1)
		}
		lat, err := ParseLatitude(rec[latCol])
		if err != nil {
			return nil, trackErr("line %d: latitude: %v", line, err)
		}
		lon, err := ParseLongitude(rec[lonCol])
		if err != nil {
			return nil, trackErr("line %d: longitude: %v", line, err)
		}
		w := Waypoint{Lon: lonAnswer(lon), Lat: lat}
		w.Name = cellAt(rec, nameCol)
		if len(rows) == maxRows {
			asked := len(rows) + 1
			for {
				if _, err := r.Read(); err != nil {
					break
				}
				asked++
			}
			return nil, trackOver(maxWaypoints, asked, "line %d: more than the limit of %d waypoints (the file has %d rows)", line, maxRows, asked)
		}
		rows = append(rows, csvRow{wp: w, line: cellAt(rec, lineCol), lineName: cellAt(rec, lineNameCol)})
	}
	return rows, nil
}
