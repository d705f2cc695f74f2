package geo_test

import (
	"math"
	"os"
	"path/filepath"
	"testing"

	"ridgeflank/geo"
)

// TestTrackFixturesAgree reads the same synthetic survey line written as a degrees-decimal-minutes
// CSV, a GPX 1.1 route and a GeoJSON LineString (testdata/tracks) and checks that the three
// parsers, with the format sniffed from the content, give the same waypoints. The expected
// positions are d + m/60 of the CSV's written values (plain arithmetic), to 1e-9°.
func TestTrackFixturesAgree(t *testing.T) {
	want := [][2]float64{ // lon, lat
		{-(131 + 15.0/60), -(27 + 30.0/60)},
		{-(128 + 20.25/60), -(25 + 45.5/60)},
		{-(125 + 5.0/60), -(23 + 10.75/60)},
	}
	for _, name := range []string{"quillon-line-a.csv", "quillon-line-a.gpx", "quillon-line-a.geojson"} {
		t.Run(name, func(t *testing.T) {
			data, err := os.ReadFile(filepath.Join("..", "testdata", "tracks", name))
			if err != nil {
				t.Fatal(err)
			}
			wps, err := geo.ParseTrack(data, "", 0)
			if err != nil {
				t.Fatal(err)
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
