package geo

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"math"
	"strconv"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/geojson"

	"ridgeflank/fault"
)

// Fuzz targets for the parsers of outside data this package owns: track files (CSV in decimal
// degrees or degrees and decimal minutes, GPX, GeoJSON), single angles as written at sea, and
// GeoJSON regions. Each target checks that a refusal is the documented fault and that an
// accepted input satisfies the documented invariants (finite positions, latitude within ±90,
// longitude within −180..180 once parsed, limits kept) and survives a round trip through a
// writer. Seeds: the f.Add calls below and testdata/fuzz/<FuzzName>.
//
//	go test ./geo -run '^$' -fuzz '^FuzzParseTrack$' -fuzztime 60s

// fuzzMaxWaypoints keeps the limits small so that limit paths are reached by short inputs.
const fuzzMaxWaypoints = 50

// checkFault asserts err is a *fault.Error of one of kinds wrapping sentinel.
func checkFault(t *testing.T, err error, sentinel error, kinds ...fault.Kind) {
	t.Helper()
	var fe *fault.Error
	if !errors.As(err, &fe) {
		t.Fatalf("error %v (%T) is not a *fault.Error", err, err)
	}
	ok := false
	for _, k := range kinds {
		ok = ok || fe.Kind == k
	}
	if !ok {
		t.Fatalf("fault kind %q, want one of %v: %v", fe.Kind, kinds, err)
	}
	if sentinel != nil && !errors.Is(err, sentinel) {
		t.Fatalf("error %v does not wrap %v", err, sentinel)
	}
	if fe.Kind == fault.LimitExceeded && fe.Limit == nil {
		t.Fatalf("limit fault without its limit: %v", err)
	}
	if err.Error() == "" {
		t.Fatal("empty error message")
	}
}

// checkWaypoints asserts the invariants of a parsed track (geo.ValidateWaypoints' contract).
func checkWaypoints(t *testing.T, wps []Waypoint, maxWaypoints int) {
	t.Helper()
	if len(wps) < 2 || len(wps) > maxWaypoints {
		t.Fatalf("%d waypoints, want 2..%d", len(wps), maxWaypoints)
	}
	for i, w := range wps {
		if math.IsNaN(w.Lon) || math.IsNaN(w.Lat) || math.IsInf(w.Lon, 0) || math.IsInf(w.Lat, 0) {
			t.Fatalf("waypoint %d (%g, %g) is not finite", i, w.Lon, w.Lat)
		}
		if w.Lat < -90 || w.Lat > 90 || w.Lon < -180 || w.Lon > 180 {
			t.Fatalf("waypoint %d (%g, %g) is outside −180..180, −90..90", i, w.Lon, w.Lat)
		}
	}
}

// trackCSV writes waypoints as a lon,lat CSV with the shortest decimal that reads back exactly.
func trackCSV(wps []Waypoint) []byte {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	_ = w.Write([]string{"lon", "lat"})
	for _, p := range wps {
		_ = w.Write([]string{strconv.FormatFloat(p.Lon, 'f', -1, 64), strconv.FormatFloat(p.Lat, 'f', -1, 64)})
	}
	w.Flush()
	return b.Bytes()
}

var fuzzTrackFormats = []string{"", "csv", "gpx", "geojson"}

func FuzzParseTrack(f *testing.F) {
	seeds := []string{
		"lon,lat\n-179.5,10\n179.5,10.5\n",
		"lon,lat\n180,0\n-180,0\n",
		"lat;lon\n89°59.999'N;10E\n90N;350\n",
		"Latitude,Longitude,name\n12°30.5'S,012°30.50'W,A\n12 30 30 S,12:30.5 W,B\n",
		"lon,lat\n1e308,0\n-0,5e-324\n",
		"lon,lat\nNaN,0\n0,Inf\n",
		"lon,lat\n\xff,\xfe\n0,0\n",
		"",
		"#only a comment\n",
		`{"type":"LineString","coordinates":[[179,0],[-179,1]]}`,
		`{"type":"MultiLineString","coordinates":[[[0,0],[1,1]],[[1,1],[2,2,5]]]}`,
		`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[0,90]},"properties":{"name":"pole"}},{"type":"Feature","geometry":{"type":"Point","coordinates":[360,-90]},"properties":{"name":1}}]}`,
		`{"type":"LineString","coordinates":[[1e309,0],[0,0]]}`,
		`<?xml version="1.0"?><gpx version="1.1" creator="t"><rte><rtept lat="-90" lon="180"><name>a</name></rtept><rtept lat="90" lon="-180"/></rte></gpx>`,
		`<gpx><trk><trkseg><trkpt lat="1" lon="2"/><trkpt lat="NaN" lon="2"/></trkseg></trk></gpx>`,
		`<gpx><wpt lat="1" lon="2"/><wpt lat="1.5" lon="359.9"/></gpx>`,
	}
	for _, s := range seeds {
		f.Add([]byte(s), uint8(0))
	}
	f.Fuzz(func(t *testing.T, data []byte, format uint8) {
		fm := fuzzTrackFormats[int(format)%len(fuzzTrackFormats)]
		wps, err := ParseTrack(data, fm, fuzzMaxWaypoints)
		if err != nil {
			checkFault(t, err, ErrInvalidTrack, fault.InvalidTrack, fault.LimitExceeded)
			return
		}
		checkWaypoints(t, wps, fuzzMaxWaypoints)
		// Round trip: written as decimal degrees and read again, the positions are unchanged.
		back, err := ParseTrackCSV(trackCSV(wps), fuzzMaxWaypoints)
		if err != nil {
			t.Fatalf("round trip of %v: %v", wps, err)
		}
		if len(back) != len(wps) {
			t.Fatalf("round trip gave %d waypoints, want %d", len(back), len(wps))
		}
		for i := range wps {
			if back[i].Lon != wps[i].Lon || back[i].Lat != wps[i].Lat {
				t.Fatalf("round trip waypoint %d: (%v, %v), want (%v, %v)", i, back[i].Lon, back[i].Lat, wps[i].Lon, wps[i].Lat)
			}
		}
	})
}

func FuzzParseTracks(f *testing.F) {
	seeds := []string{
		"line,lon,lat\nA,0,0\nA,1,1\nB,179,0\nB,-179,0\n",
		"track_id,line_name,lat,lon\n1,North,90,0\n1,North,89,0\n2,,0,0\n2,,0,1\n",
		"line,lon,lat\nA,0,0\n",
		`<gpx><rte><name>r1</name><rtept lat="0" lon="0"/><rtept lat="1" lon="1"/></rte><rte><rtept lat="2" lon="2"/><rtept lat="3" lon="3"/></rte></gpx>`,
		`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"LineString","coordinates":[[0,0],[1,1]]},"properties":{"name":"L1"}},{"type":"Feature","geometry":{"type":"LineString","coordinates":[[180,0],[-180,1]]},"properties":null}]}`,
		`{"type":"FeatureCollection","features":[]}`,
	}
	for _, s := range seeds {
		f.Add([]byte(s), uint8(0))
	}
	const maxTracks = 5
	f.Fuzz(func(t *testing.T, data []byte, format uint8) {
		fm := fuzzTrackFormats[int(format)%len(fuzzTrackFormats)]
		ts, err := ParseTracks(data, fm, maxTracks, fuzzMaxWaypoints)
		if err != nil {
			checkFault(t, err, ErrInvalidTrack, fault.InvalidTrack, fault.LimitExceeded)
			return
		}
		if len(ts) == 0 || len(ts) > maxTracks {
			t.Fatalf("%d tracks, want 1..%d", len(ts), maxTracks)
		}
		for _, tr := range ts {
			checkWaypoints(t, tr.Waypoints, fuzzMaxWaypoints)
		}
	})
}

func FuzzParseAngle(f *testing.F) {
	for _, s := range []string{
		"-12.5083", "12.5083S", "S12.5083", "12°30.5'S", "12 30.5 S", "-12 30.500", "12°30'30\"S",
		"12:30.5 S", "90N", "90.0000001", "89 59.99999999999 N", "179°59.9'E", "180W", "360", "−0",
		"-0", "1e308", "5e-324", "NaN", "Inf", "", " ", "N", "-N", "12.5.3", "12.5 30", "12 60",
		"\xff", "12°\xff'S", "0x1p-2", "1_0", ".", "..", "1.", ".5",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		lat, errLat := ParseLatitude(s)
		if errLat == nil {
			if math.IsNaN(lat) || lat < -90 || lat > 90 {
				t.Fatalf("ParseLatitude(%q) = %v, outside −90..90", s, lat)
			}
			// Decimal degrees written back read as the same value.
			txt := strconv.FormatFloat(lat, 'f', -1, 64)
			if back, err := ParseLatitude(txt); err != nil || back != lat {
				t.Fatalf("ParseLatitude(%q) = %v; reading %q back gave %v, %v", s, lat, txt, back, err)
			}
			checkDDM(t, lat, "N", "S", ParseLatitude)
		}
		lon, errLon := ParseLongitude(s)
		if errLon == nil {
			if math.IsNaN(lon) || lon < -180 || lon > 360 {
				t.Fatalf("ParseLongitude(%q) = %v, outside −180..360", s, lon)
			}
			txt := strconv.FormatFloat(lon, 'f', -1, 64)
			if back, err := ParseLongitude(txt); err != nil || back != lon {
				t.Fatalf("ParseLongitude(%q) = %v; reading %q back gave %v, %v", s, lon, txt, back, err)
			}
			if lon <= 180 {
				checkDDM(t, lon, "E", "W", ParseLongitude)
			}
		}
		// Plain decimal numbers within range are read as strconv reads them.
		if v, err := strconv.ParseFloat(s, 64); err == nil && isPlainDecimal(s) {
			if v >= -90 && v <= 90 && (errLat != nil || lat != v) {
				t.Fatalf("ParseLatitude(%q) = %v, %v; strconv reads %v", s, lat, errLat, v)
			}
		}
	})
}

// checkDDM writes v as degrees and decimal minutes with a hemisphere letter (the form written
// at sea) and checks that it reads back within 1e-9 degrees (the minutes are written with 12
// decimals; rounding of minutes to 60 is carried into the degrees).
func checkDDM(t *testing.T, v float64, pos, neg string, parse func(string) (float64, error)) {
	t.Helper()
	h := pos
	a := math.Abs(v)
	if v < 0 {
		h = neg
	}
	d := math.Floor(a)
	m := (a - d) * 60
	ms := strconv.FormatFloat(m, 'f', 12, 64)
	if mm, _ := strconv.ParseFloat(ms, 64); mm >= 60 {
		d++
		ms = "0"
	}
	txt := strconv.FormatFloat(d, 'f', 0, 64) + "°" + ms + "'" + h
	got, err := parse(txt)
	if err != nil {
		t.Fatalf("%v written as %q does not read back: %v", v, txt, err)
	}
	if math.Abs(got-v) > 1e-9 {
		t.Fatalf("%v written as %q reads back as %v", v, txt, got)
	}
}

// isPlainDecimal reports whether s is an optionally signed decimal number with digits and at
// most one point (no exponent, no spaces), the form both strconv and ParseLatitude accept.
func isPlainDecimal(s string) bool {
	if len(s) > 0 && (s[0] == '-' || s[0] == '+') {
		s = s[1:]
	}
	digits, points := 0, 0
	for _, r := range s {
		switch {
		case r >= '0' && r <= '9':
			digits++
		case r == '.':
			points++
		default:
			return false
		}
	}
	return digits > 0 && points <= 1
}

const fuzzMaxVertices = 200

func FuzzParseRegion(f *testing.F) {
	for _, s := range []string{
		`{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,1],[0,0]]]}`,
		`{"type":"Polygon","coordinates":[[[170,-10],[-170,-10],[-170,10],[170,10],[170,-10]]]}`,
		`{"type":"Polygon","coordinates":[[[350,-10],[370,-10],[370,10],[350,10],[350,-10]]]}`,
		`{"type":"Polygon","coordinates":[[[-180,80],[0,80],[180,80],[180,90],[-180,90],[-180,80]]]}`,
		`{"type":"Polygon","coordinates":[[[0,0],[0,1],[1,1],[1,0],[0,0]],[[0.2,0.2],[0.8,0.2],[0.8,0.8],[0.2,0.2]]]}`,
		`{"type":"MultiPolygon","coordinates":[[[[0,0],[1,0],[1,1],[0,0]]],[[[0,0],[1,0],[1,1],[0,0]]]]}`,
		`{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[0,0],[2,2],[2,0],[0,2],[0,0]]]},"properties":{}}`,
		`{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[0,-90],[1,-90],[1,-89],[0,-90]]]}}]}`,
		`{"type":"Polygon","coordinates":[[[0,0],[1e308,0],[1,1],[0,0]]]}`,
		`{"type":"Polygon","coordinates":[[[0,0],[5e-324,0],[-0,1],[0,0]]]}`,
		`{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,0],]]}`,
		`{"type":"Polygon","coordinates":[[["NaN",0],[1,0],[1,1],[0,0]]]}`,
		`{"type":"Polygon","coordinates":[]}`,
		`{"type":"Point","coordinates":[0,0]}`,
		"{\"type\":\"Polygon\xff\"}",
		``,
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		mp, err := ParseRegion(data, fuzzMaxVertices)
		pr, perr := PrepareRegionGeoJSON(data, fuzzMaxVertices)
		if (err == nil) != (perr == nil) {
			t.Fatalf("ParseRegion error %v, PrepareRegionGeoJSON error %v", err, perr)
		}
		if err != nil {
			checkFault(t, err, ErrInvalidRegion, fault.InvalidRegion, fault.LimitExceeded)
			checkFault(t, perr, ErrInvalidRegion, fault.InvalidRegion, fault.LimitExceeded)
			return
		}
		checkRegion(t, mp)
		checkRegion(t, pr.Parts)
		// A sliver of 5e-324° has an area that underflows to 0, so 0 is allowed.
		if !(pr.AreaKm2 >= 0) || pr.AreaKm2 > 510.1e6 {
			t.Fatalf("area %v km², want 0..510.1e6 (the Earth's surface, from memory)", pr.AreaKm2)
		}
		// Round trip: the normalised region written as GeoJSON reads back as itself.
		raw, err := json.Marshal(geojson.NewGeometry(mp))
		if err != nil {
			t.Fatalf("writing %v: %v", mp, err)
		}
		back, err := ParseRegion(raw, 0) // a split at the antimeridian may add vertices
		if err != nil {
			t.Fatalf("the normalised region %s does not read back: %v", raw, err)
		}
		if !orb.Equal(back, mp) {
			t.Fatalf("round trip changed the region:\n%v\n%v", mp, back)
		}
	})
}

// checkRegion asserts a normalised region's invariants: closed rings of at least 4 finite
// positions within −180..180, −90..90, and at most fuzzMaxVertices positions in all.
func checkRegion(t *testing.T, mp orb.MultiPolygon) {
	t.Helper()
	if len(mp) == 0 {
		t.Fatal("a valid region without polygons")
	}
	for pi, p := range mp {
		if len(p) == 0 {
			t.Fatalf("polygon %d has no rings", pi)
		}
		for ri, r := range p {
			if len(r) < 4 || r[0] != r[len(r)-1] {
				t.Fatalf("polygon %d ring %d is not a closed ring of 4 or more positions: %v", pi, ri, r)
			}
			for _, q := range r {
				if math.IsNaN(q[0]) || math.IsNaN(q[1]) || q[0] < -180 || q[0] > 180 || q[1] < -90 || q[1] > 90 {
					t.Fatalf("polygon %d ring %d has position %v outside −180..180, −90..90", pi, ri, q)
				}
			}
		}
	}
}
