package geo_test

import (
	"fmt"

	"ridgeflank/geo"
)

func ExampleParseLatitude() {
	for _, s := range []string{"12°30.5'S", "12 30.5 S", "-12 30.500", "N 5 15.0"} {
		v, _ := geo.ParseLatitude(s)
		fmt.Printf("%-12q %.6f\n", s, v)
	}
	w, _ := geo.ParseLongitude("012°30.50'W")
	fmt.Printf("%-12q %.6f\n", "012°30.50'W", w)
	// Output:
	// "12°30.5'S"  -12.508333
	// "12 30.5 S"  -12.508333
	// "-12 30.500" -12.508333
	// "N 5 15.0"   5.250000
	// "012°30.50'W" -12.508333
}

// Densify along great circles of the pure-Go Sphere (use gdal.WGS84() for WGS84 geodesics).
func ExampleDensify() {
	wps, _ := geo.ParseTrackCSV([]byte("name,lat,lon\nQB-1 (SYNTHETIC),0 00.0 N,179 00.0 E\nQB-2 (SYNTHETIC),0 00.0 N,179 00.0 W\n"), 0)
	samples, _ := geo.Densify(geo.Sphere{RadiusM: 6371000}, wps, 50_000, 0)
	for _, s := range samples {
		fmt.Printf("%8.3f %6.3f %7.2f km leg %d waypoint %d\n", s.Lon, s.Lat, s.DistanceKm, s.Leg, s.Waypoint)
	}
	// Output:
	//  179.000  0.000    0.00 km leg 0 waypoint 0
	//  179.400  0.000   44.48 km leg 0 waypoint -1
	//  179.800  0.000   88.96 km leg 0 waypoint -1
	// -179.800  0.000  133.43 km leg 0 waypoint -1
	// -179.400  0.000  177.91 km leg 0 waypoint -1
	// -179.000  0.000  222.39 km leg 0 waypoint 1
}
