package geo

import (
	"errors"
	"math"
	"strings"
	"testing"
)

func TestParseLatLonSeamanForms(t *testing.T) {
	// Expected values are plain arithmetic: d + m/60 + s/3600, negative for S and W.
	// The written forms are those used in logs and cruise plans (common practice, no source).
	cases := []struct {
		in   string
		lat  bool
		want float64
	}{
		{"-12.5083", true, -12.5083},
		{"12.5", true, 12.5},
		{"+12.5", true, 12.5},
		{"12.5S", true, -12.5},
		{"12.5 s", true, -12.5},
		{"S12.5", true, -12.5},
		{"N 12.5", true, 12.5},
		{"12°30.5'S", true, -(12 + 30.5/60)},
		{"12° 30.5′ S", true, -(12 + 30.5/60)},
		{"12 30.5 S", true, -(12 + 30.5/60)},
		{"-12 30.500", true, -(12 + 30.5/60)},
		{"-0 30.0", true, -0.5},
		{"12:30.5N", true, 12 + 30.5/60},
		{"12°30'30\"S", true, -(12 + 30.0/60 + 30.0/3600)},
		{"12°30'30''N", true, 12 + 30.0/60 + 30.0/3600},
		{"\u221212.25", true, -12.25},
		{"90", true, 90},
		{"012°30.50'W", false, -(12 + 30.5/60)},
		{"012 30.50 E", false, 12 + 30.5/60},
		{"179 59.999W", false, -(179 + 59.999/60)},
		{"350.5", false, 350.5},
		{"W 5 15.2", false, -(5 + 15.2/60)},
	}
	for _, c := range cases {
		t.Run(c.in, func(t *testing.T) {
			var got float64
			var err error
			if c.lat {
				got, err = ParseLatitude(c.in)
			} else {
				got, err = ParseLongitude(c.in)
			}
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(got-c.want) > 1e-12 {
				t.Errorf("got %.12f, want %.12f", got, c.want)
			}
		})
	}
}

func TestParseLatLonRejects(t *testing.T) {
	cases := []struct {
		in, want string
		lat      bool
	}{
		{"", "empty", true},
		{"12 60.0 S", "below 60", true},
		{"12.5 30 S", "only the last part", true},
		{"-12 30 S", "both a minus sign", true},
		{"12 30 E", "takes N or S", true},
		{"12 30 N", "takes E or W", false},
		{"91", "outside", true},
		{"-181", "outside", false},
		{"12x30", "unexpected", true},
		{"NaN", "unexpected", true},
		{"1e3", "unexpected", true},
		{"1 2 3 4", "not an angle", true},
	}
	for _, c := range cases {
		t.Run(c.in, func(t *testing.T) {
			var err error
			if c.lat {
				_, err = ParseLatitude(c.in)
			} else {
				_, err = ParseLongitude(c.in)
			}
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("err = %v, want one containing %q", err, c.want)
			}
		})
	}
}

func TestParseTrackCSV(t *testing.T) {
	cases := []struct {
		name, in string
		want     []Waypoint
	}{
		{"lon,lat decimal", "lon,lat\n-30.5,10\n-29,11.25\n",
			[]Waypoint{{Lon: -30.5, Lat: 10}, {Lon: -29, Lat: 11.25}}},
		{"lat,lon with names and extra column", "# SYNTHETIC Quillon Basin line 1\nname,Latitude,speed_kn,Longitude\nQB-1,12°30.5'S,10,012°30.50'W\nQB-2,\"13 00.0 S\",10,\"011 45.0 W\"\n",
			[]Waypoint{{Lon: -(12 + 30.5/60), Lat: -(12 + 30.5/60), Name: "QB-1"}, {Lon: -11.75, Lat: -13, Name: "QB-2"}}},
		{"semicolon, 0..360 longitudes, BOM", "\ufefflat_deg;lon_deg\n-5;350\n-6;190\n",
			[]Waypoint{{Lon: -10, Lat: -5}, {Lon: -170, Lat: -6}}},
		{"tab separated DMS with quotes", "longitude\tlatitude\n179 30 00 E\t0 30'30\"S\n179 30 00 W\t0 30'30\"N\n",
			[]Waypoint{{Lon: 179.5, Lat: -(0.5 + 30.0/3600)}, {Lon: -179.5, Lat: 0.5 + 30.0/3600}}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := ParseTrackCSV([]byte(c.in), 0)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(c.want) {
				t.Fatalf("got %d waypoints %v, want %v", len(got), got, c.want)
			}
			for i := range got {
				if math.Abs(got[i].Lon-c.want[i].Lon) > 1e-12 || math.Abs(got[i].Lat-c.want[i].Lat) > 1e-12 || got[i].Name != c.want[i].Name {
					t.Errorf("waypoint %d = %+v, want %+v", i, got[i], c.want[i])
				}
			}
		})
	}
}

func TestParseTrackCSVErrors(t *testing.T) {
	cases := []struct {
		name, in, want string
		max            int
	}{
		{"no header columns", "x,y\n1,2\n3,4\n", "line 1: the CSV header must name", 0},
		{"bad latitude line 3", "lon,lat\n1,2\n1,95\n", "line 3: latitude", 0},
		{"bad longitude line 4 after comment", "lon,lat\n1,2\n# note\n12 30 N,2\n", "line 4: longitude", 0},
		{"short record", "name,lon,lat\nA,1,2\nB,3\n", "line 3: 2 field(s)", 0},
		{"duplicate column", "lon,lat,longitude\n1,2,3\n", "twice", 0},
		{"one waypoint", "lon,lat\n1,2\n", "at least 2 waypoints", 0},
		{"limit", "lon,lat\n1,2\n2,3\n3,4\n", "line 4: more than the limit of 2", 2},
		{"empty", "", "empty", 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseTrackCSV([]byte(c.in), c.max)
			if err == nil || !strings.Contains(err.Error(), c.want) || !errors.Is(err, ErrInvalidTrack) {
				t.Fatalf("err = %v, want ErrInvalidTrack containing %q", err, c.want)
			}
		})
	}
}

const gpxSample = `<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="ridgeflank test" xmlns="http://www.topografix.com/GPX/1/1">
  <metadata><name>SYNTHETIC Quillon Basin transit</name></metadata>
  <wpt lat="1" lon="2"><name>ignored when a route exists</name></wpt>
  <rte>
    <name>QB line A</name>
    <rtept lat="-20.5" lon="179.5"><name>A1</name></rtept>
    <rtept lat="-21.0" lon="-179.5"><name>A2</name></rtept>
  </rte>
  <rte>
    <rtept lat="-21.5" lon="190"/>
  </rte>
  <trk><trkseg><trkpt lat="0" lon="0"/><trkpt lat="1" lon="1"/></trkseg></trk>
</gpx>`

func TestParseTrackGPX(t *testing.T) {
	got, err := ParseTrackGPX([]byte(gpxSample), 0)
	if err != nil {
		t.Fatal(err)
	}
	want := []Waypoint{{Lon: 179.5, Lat: -20.5, Name: "A1"}, {Lon: -179.5, Lat: -21, Name: "A2"}, {Lon: -170, Lat: -21.5}}
	if len(got) != len(want) {
		t.Fatalf("got %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("waypoint %d = %+v, want %+v", i, got[i], want[i])
		}
	}
	trk := `<gpx version="1.1" xmlns="http://www.topografix.com/GPX/1/1"><trk><trkseg>
<trkpt lat="10" lon="20"></trkpt><trkpt lat="11" lon="21"></trkpt></trkseg></trk></gpx>`
	got, err = ParseTrackGPX([]byte(trk), 0)
	if err != nil || len(got) != 2 || got[1].Lat != 11 {
		t.Fatalf("track points: %v, %v", got, err)
	}
}

func TestParseTrackGPXErrors(t *testing.T) {
	cases := []struct{ name, in, want string }{
		{"missing lon on line 3", "<gpx>\n<rte>\n<rtept lat=\"1\"/>\n</rte></gpx>", "line 3: <rtept> needs lat and lon"},
		{"latitude out of range on line 2", "<gpx><rte>\n<rtept lat=\"100\" lon=\"1\"/><rtept lat=\"1\" lon=\"1\"/></rte></gpx>", "line 2: <rtept>: latitude 100"},
		{"hemisphere letters are not GPX", "<gpx><rte><rtept lat=\"12S\" lon=\"1\"/><rtept lat=\"1\" lon=\"1\"/></rte></gpx>", "decimal degrees"},
		{"not gpx", "<kml></kml>", "root element is <kml>"},
		{"broken xml on line 2", "<gpx>\n<rte><rtept lat=\"1\" lon=\"1\"></rte></gpx>", "line 2"},
		{"no points", "<gpx></gpx>", "no rtept"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseTrackGPX([]byte(c.in), 0)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("err = %v, want one containing %q", err, c.want)
			}
		})
	}
}

func TestParseTrackGeoJSON(t *testing.T) {
	cases := []struct {
		name, in string
		want     []Waypoint
	}{
		{"LineString", `{"type":"LineString","coordinates":[[170,-10],[190,-12,-3000]]}`,
			[]Waypoint{{Lon: 170, Lat: -10}, {Lon: -170, Lat: -12}}},
		{"Feature MultiLineString joined", `{"type":"Feature","properties":{},"geometry":{"type":"MultiLineString",
			"coordinates":[[[0,0],[1,1]],[[1,1],[2,2]],[[3,3],[4,4]]]}}`,
			[]Waypoint{{Lon: 0, Lat: 0}, {Lon: 1, Lat: 1}, {Lon: 2, Lat: 2}, {Lon: 3, Lat: 3}, {Lon: 4, Lat: 4}}},
		{"FeatureCollection of named points", `{"type":"FeatureCollection","features":[
			{"type":"Feature","properties":{"name":"QB-1"},"geometry":{"type":"Point","coordinates":[-20,5]}},
			{"type":"Feature","properties":{"name":"QB-2"},"geometry":{"type":"Point","coordinates":[-21,6]}}]}`,
			[]Waypoint{{Lon: -20, Lat: 5, Name: "QB-1"}, {Lon: -21, Lat: 6, Name: "QB-2"}}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := ParseTrackGeoJSON([]byte(c.in), 0)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(c.want) {
				t.Fatalf("got %v, want %v", got, c.want)
			}
			for i := range got {
				if got[i] != c.want[i] {
					t.Errorf("waypoint %d = %+v, want %+v", i, got[i], c.want[i])
				}
			}
		})
	}
	bad := []struct{ name, in, want string }{
		{"polygon", `{"type":"Polygon","coordinates":[]}`, `got "Polygon"`},
		{"short position", `{"type":"LineString","coordinates":[[1,2],[3]]}`, "position 1 has 1 number"},
		{"latitude", `{"type":"LineString","coordinates":[[1,2],[3,-91]]}`, "position 1: latitude -91"},
		{"mixed collection", `{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]}},
			{"type":"Feature","geometry":{"type":"LineString","coordinates":[[1,2],[3,4]]}}]}`, "one LineString feature or only Point"},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseTrackGeoJSON([]byte(c.in), 0)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("err = %v, want one containing %q", err, c.want)
			}
		})
	}
}

func TestParseTrackSniffsFormat(t *testing.T) {
	for name, in := range map[string]string{
		"geojson": `  {"type":"LineString","coordinates":[[1,2],[3,4]]}`,
		"gpx":     `<gpx><rte><rtept lat="2" lon="1"/><rtept lat="4" lon="3"/></rte></gpx>`,
		"csv":     "lon,lat\n1,2\n3,4\n",
	} {
		t.Run(name, func(t *testing.T) {
			got, err := ParseTrack([]byte(in), "", 0)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != 2 || got[1] != (Waypoint{Lon: 3, Lat: 4}) {
				t.Errorf("got %v", got)
			}
		})
	}
	if _, err := ParseTrack([]byte("x"), "kml", 0); err == nil {
		t.Error("unknown format accepted")
	}
}
