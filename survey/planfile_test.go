package survey

import (
	"errors"
	"math"
	"testing"

	"ridgeflank/fault"
	"ridgeflank/geo"
)

// dm is degrees and decimal minutes as decimal degrees (d + m/60, plain arithmetic).
func dm(d, m float64) float64 {
	if d < 0 {
		return d - m/60
	}
	return d + m/60
}

type wantLine struct {
	name string
	wps  []geo.Waypoint
}

func checkLines(t *testing.T, got []Line, want []wantLine) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%d lines, want %d: %+v", len(got), len(want), got)
	}
	for i, w := range want {
		if got[i].Name != w.name {
			t.Errorf("line %d named %q, want %q", i, got[i].Name, w.name)
		}
		if len(got[i].Waypoints) != len(w.wps) {
			t.Fatalf("line %d: %d waypoints, want %d", i, len(got[i].Waypoints), len(w.wps))
		}
		for k, p := range w.wps {
			g := got[i].Waypoints[k]
			// 1e-9° (about 0.1 mm): the values are exact decimal arithmetic of the written ones.
			if math.Abs(g.Lon-p.Lon) > 1e-9 || math.Abs(g.Lat-p.Lat) > 1e-9 || g.Name != p.Name {
				t.Errorf("line %d waypoint %d = %+v, want %+v", i, k, g, p)
			}
		}
	}
}

// Fixture files written here (SYNTHETIC lines, invented names, not for navigation).
func TestReadPlanLines(t *testing.T) {
	two := []wantLine{
		{"QX-1", []geo.Waypoint{{Lon: -143.5, Lat: -30.25, Name: "a"}, {Lon: -142.75, Lat: -29.5, Name: "b"}}},
		{"QX-2", []geo.Waypoint{{Lon: -143.4, Lat: -30.3, Name: "c"}, {Lon: -142.65, Lat: -29.55, Name: "d"}, {Lon: -142, Lat: -29, Name: "e"}}},
	}
	unnamed := func(ls []wantLine) []wantLine {
		out := make([]wantLine, len(ls))
		for i, l := range ls {
			out[i].name = l.name
			for _, w := range l.wps {
				w.Name = ""
				out[i].wps = append(out[i].wps, w)
			}
		}
		return out
	}
	tests := []struct {
		name, file, format string
		data               string
		want               []wantLine
	}{
		{"geojson feature collection", "plan.geojson", "", `{"type":"FeatureCollection","features":[
			{"type":"Feature","properties":{"name":"QX-1"},"geometry":{"type":"LineString","coordinates":[[-143.5,-30.25],[-142.75,-29.5,-10]]}},
			{"type":"Feature","properties":{"name":"QX-2"},"geometry":{"type":"LineString","coordinates":[[-143.4,-30.3],[-142.65,-29.55],[-142,-29]]}}]}`,
			unnamed(two)},
		{"geojson multilinestring feature", "plan.json", "", `{"type":"Feature","properties":{"name":"QX"},"geometry":{"type":"MultiLineString",
			"coordinates":[[[-143.5,-30.25],[-142.75,-29.5]],[[-143.4,-30.3],[-142.65,-29.55],[-142,-29]]]}}`,
			[]wantLine{{"QX 1", unnamed(two)[0].wps}, {"QX 2", unnamed(two)[1].wps}}},
		{"bare linestring, sniffed", "plan.dat", "", `{"type":"LineString","coordinates":[[216.5,-30.25],[-142.75,-29.5]]}`,
			[]wantLine{{"", unnamed(two)[0].wps}}},
		{"gpx routes", "plan.gpx", "", `<?xml version="1.0"?>
<gpx version="1.1" creator="test" xmlns="http://www.topografix.com/GPX/1/1">
 <rte><name>QX-1</name><rtept lat="-30.25" lon="-143.5"><name>a</name></rtept><rtept lat="-29.5" lon="-142.75"><name>b</name></rtept></rte>
 <rte><name>QX-2</name><rtept lat="-30.3" lon="-143.4"><name>c</name></rtept><rtept lat="-29.55" lon="-142.65"><name>d</name></rtept>
  <rtept lat="-29" lon="-142"><name>e</name></rtept></rte>
</gpx>`, two},
		{"gpx tracks, segments joined", "plan.gpx", "", `<gpx version="1.1" xmlns="http://www.topografix.com/GPX/1/1">
 <trk><name>QX-1</name><trkseg><trkpt lat="-30.25" lon="-143.5"><name>a</name></trkpt></trkseg><trkseg><trkpt lat="-29.5" lon="-142.75"><name>b</name></trkpt></trkseg></trk>
 <trk><name>QX-2</name><trkseg><trkpt lat="-30.3" lon="-143.4"><name>c</name></trkpt><trkpt lat="-29.55" lon="-142.65"><name>d</name></trkpt>
  <trkpt lat="-29" lon="-142"><name>e</name></trkpt></trkseg></trk>
</gpx>`, two},
		{"csv degrees and decimal minutes with a line column", "plan.csv", "", "line,name,lat,lon\n" +
			"QX-1,a,30°15.000'S,143°30.000'W\nQX-1,b,29 30.0 S,142 45.0 W\n" +
			"QX-2,c,30°18.000'S,143°24.000'W\nQX-2,d,29°33.000'S,142°39.000'W\nQX-2,e,-29,-142\n", two},
		{"csv decimal degrees, line names, semicolons", "plan.txt", "csv", "track;line_name;lon_deg;lat_deg\n" +
			"1;QX-1;-143.5;-30.25\n1;QX-1;-142.75;-29.5\n2;QX-2;-143.4;-30.3\n2;QX-2;-142.65;-29.55\n2;QX-2;-142;-29\n", unnamed(two)},
		{"csv without a line column is one line", "plan.csv", "", "lon,lat\n-143.5,-30.25\n-142.75,-29.5\n",
			[]wantLine{{"", unnamed(two)[0].wps}}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			f := tc.format
			if f == "" {
				f = PlanFileFormat(tc.file)
			}
			got, err := ReadPlanLines([]byte(tc.data), f, 10, 100)
			if err != nil {
				t.Fatal(err)
			}
			checkLines(t, got, tc.want)
		})
	}
	// The DDM check values above: 30°15.000'S = dm(−30, 15) = −30.25, 143°24.000'W = −143.4.
	if dm(-30, 15) != -30.25 || dm(-143, 24) != -143.4 {
		t.Fatal("fixture arithmetic")
	}
}

func TestReadPlanLinesFaults(t *testing.T) {
	tests := []struct {
		name, format, data string
		kind               fault.Kind
	}{
		{"a Point feature among lines", "geojson", `{"type":"FeatureCollection","features":[
			{"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[0,0],[1,1]]}},
			{"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[0,0]}}]}`, fault.InvalidTrack},
		{"a one-point line", "csv", "line,lon,lat\nA,0,0\nA,1,1\nB,2,2\n", fault.InvalidTrack},
		{"bad latitude", "csv", "lon,lat\n0,91\n1,1\n", fault.InvalidTrack},
		{"too many lines", "csv", "line,lon,lat\nA,0,0\nA,1,1\nB,0,0\nB,1,1\nC,0,0\nC,1,1\n", fault.LimitExceeded},
		{"gpx without points", "gpx", `<gpx version="1.1"><rte><name>x</name></rte></gpx>`, fault.InvalidTrack},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadPlanLines([]byte(tc.data), tc.format, 2, 100)
			f, ok := fault.As(err)
			if !ok || f.Kind != tc.kind || !errors.Is(err, geo.ErrInvalidTrack) {
				t.Fatalf("error %v, want a %s fault wrapping ErrInvalidTrack", err, tc.kind)
			}
		})
	}
}
