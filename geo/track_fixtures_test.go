package geo_test

import (
	"math"
	"os"
	"path/filepath"
	"testing"

	"ridgeflank/geo"
)

// TestTrackFixturesAgree reads the same synthetic survey line written as a degrees-decimal-minutes
// CSV, a GPX 1.1 route and a GeoJSON FeatureCollection of named Points (testdata/tracks), and
// the CSV rewritten in decimal degrees and in space-separated degrees and minutes, and checks
// that the parsers, with the format sniffed from the content and named, give the same waypoints
// and names. The expected positions are d + m/60 of the CSV's written values (plain
// arithmetic), to 1e-9°.
func TestTrackFixturesAgree(t *testing.T) {
	want := [][2]float64{ // lon, lat
		{-(131 + 15.0/60), -(27 + 30.0/60)},
		{-(128 + 20.25/60), -(25 + 45.5/60)},
		{-(125 + 5.0/60), -(23 + 10.75/60)},
	}
	names := []string{"QA-01 (SYNTHETIC)", "QA-02 (SYNTHETIC)", "QA-03 (SYNTHETIC)"}
	inputs := []struct{ name, format, data string }{
		{"quillon-line-a.csv", "", ""},
		{"quillon-line-a.gpx", "", ""},
		{"quillon-line-a.geojson", "", ""},
		{"quillon-line-a.csv", "csv", ""},
		{"quillon-line-a.gpx", "gpx", ""},
		{"quillon-line-a.geojson", "geojson", ""},
		{"decimal degrees", "csv", "name,lat,lon\nQA-01 (SYNTHETIC),-27.5,-131.25\n" +
			"QA-02 (SYNTHETIC),-25.758333333333333,-128.3375\nQA-03 (SYNTHETIC),-23.179166666666667,-125.08333333333333\n"},
		{"degrees and minutes with spaces", "", "name,lat,lon\nQA-01 (SYNTHETIC),27 30.000 S,131 15.000 W\n" +
			"QA-02 (SYNTHETIC),25 45.500 S,128 20.250 W\nQA-03 (SYNTHETIC),23 10.750 S,125 05.000 W\n"},
		{"degrees and minutes, semicolons, hemisphere first", "", "waypoint;latitude;longitude\nQA-01 (SYNTHETIC);S 27°30.000';W 131°15.000'\n" +
			"QA-02 (SYNTHETIC);S 25°45.500';W 128°20.250'\nQA-03 (SYNTHETIC);S 23°10.750';W 125°05.000'\n"},
	}
	for _, in := range inputs {
		t.Run(in.name+" "+in.format, func(t *testing.T) {
			data := []byte(in.data)
			if in.data == "" {
				var err error
				if data, err = os.ReadFile(filepath.Join("..", "testdata", "tracks", in.name)); err != nil {
					t.Fatal(err)
				}
			}
			wps, err := geo.ParseTrack(data, in.format, 0)
			if err != nil {
				t.Fatal(err)
			}
			for i, w := range wps {
				if i < len(names) && w.Name != names[i] {
					t.Errorf("waypoint %d named %q, want %q", i, w.Name, names[i])
				}
			}
			if len(wps) != len(want) {
				t.Fatalf("%d waypoints, want %d", len(wps), len(want))
			}
			for i, w := range wps {
				if math.Abs(w.Lon-want[i][0]) > 1e-9 || math.Abs(w.Lat-want[i][1]) > 1e-9 {
					t.Errorf("waypoint %d at (%.9f, %.9f), want (%.9f, %.9f)", i, w.Lon, w.Lat, want[i][0], want[i][1])
				}
			}
		})
	}
}
