package geo_test

import (
	"fmt"

	"ridgeflank/geo"
)

// A SYNTHETIC survey box in the fictional Quillon Basin that straddles the antimeridian,
// written with longitudes past 180: it comes back split into two polygons in −180..180.
func ExampleParseRegion() {
	box := `{"type":"Feature","properties":{"name":"Quillon Basin box (SYNTHETIC)"},
	  "geometry":{"type":"Polygon","coordinates":[[[175,-32],[185,-32],[185,-28],[175,-28],[175,-32]]]}}`
	mp, err := geo.ParseRegion([]byte(box), 0)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, p := range mp {
		b := p.Bound()
		fmt.Printf("lon %g..%g lat %g..%g\n", b.Min[0], b.Max[0], b.Min[1], b.Max[1])
	}
	// R²·Δλ·(sin φ2 − sin φ1) on the authalic sphere
	fmt.Printf("area %.0f km²\n", geo.SphericalAreaKm2(mp))
	// Output:
	// lon 175..180 lat -32..-28
	// lon -180..-175 lat -32..-28
	// area 428226 km²
}

func ExampleGridMask() {
	mp, _ := geo.ParseRegion([]byte(`{"type":"Polygon","coordinates":[[[0,0],[3.2,0],[0,3.2],[0,0]]]}`), 0)
	g := geo.NewGrid(4, 4, 0.5, 3.5, 1, 1, geo.CellCentre) // cell centres 0.5..3.5
	m, _ := geo.GridMask(g, mp)
	for row := 0; row < g.NY; row++ {
		for col := 0; col < g.NX; col++ {
			if m.Get(row*g.NX + col) {
				fmt.Print("#")
			} else {
				fmt.Print(".")
			}
		}
		fmt.Println()
	}
	fmt.Println(m.Count(), "cells")
	// Output:
	// ....
	// #...
	// ##..
	// ###.
	// 6 cells
}
