package server

import (
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// installGlobe stores a global 1° cell-centre age grid whose age is |latitude|
// (Ma) and a dataset "globe" using it.
func installGlobe(t *testing.T, e *env) {
	t.Helper()
	g := geo.NewGrid(360, 180, -179.5, 89.5, 1, 1, geo.CellCentre)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			g.Set(c, r, float32(math.Abs(g.Lat(r))))
		}
	}
	ring := orb.Ring{{-180, -90}, {180, -90}, {180, 90}, {-180, 90}, {-180, -90}}
	ctx := context.Background()
	row := store.Grid{ID: "globe-age", Name: "global test age (|latitude| Ma)", Kind: store.KindAge, Units: "Ma",
		VerticalSense: store.VerticalNone, Footprint: orb.MultiPolygon{{ring}}, ResolutionDeg: 1, Registration: store.CellCentre}
	if _, _, err := e.st.ImportGrid(ctx, row, func(tmp string) error { return gdal.WriteCOG(tmp, g, gdal.Meta{Units: "Ma"}) }); err != nil {
		t.Fatal(err)
	}
	if _, err := e.st.CreateDataset(ctx, store.Dataset{ID: "globe", Name: "globe", AgeGridID: "globe-age"}); err != nil {
		t.Fatal(err)
	}
}

// Queries across the antimeridian and at the poles, on a global grid whose
// age is |latitude|: the expected values follow from that construction.
func TestAntimeridianAndPoles(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		installGlobe(t, e)
		ds := "/api/collections/globe"
		t.Run("position either side and in 0..360", func(t *testing.T) {
			mp := esc("MULTIPOINT((179.9 10.5),(-179.9 10.5),(190 -20.5),(0 90),(0 -90))")
			m := e.get(ds + "/position?coords=" + mp + "&parameter-name=seafloor_age,predicted_depth").json(t)
			// Bilinear between rows 10 and 11 (ages 10.5 on both sides) and
			// clamped at the poles to the last row (89.5), per geo.Grid.SampleBilinear.
			for i, want := range []float64{10.5, 10.5, 20.5, 89.5, 89.5} {
				if got := covValue(t, m, PSeafloorAge, i); math.Abs(got-want) > 1e-4 {
					t.Errorf("point %d: age %g, want %g", i, got, want)
				}
			}
			if got, want := covValue(t, m, PPredictedDepth, 2), gdh1Depth(20.5); math.Abs(got-want) > 25 {
				t.Errorf("predicted depth at 20.5 Ma %.1f, GDH1 fit %.1f (± 25 m)", got, want)
			}
			x := m["domain"].(map[string]any)["axes"].(map[string]any)["composite"].(map[string]any)["values"].([]any)
			if lon := num(t, x[2].([]any)[0]); lon != -170 {
				t.Errorf("190° answered as %g, want −170", lon)
			}
		})
		t.Run("area across the antimeridian", func(t *testing.T) {
			poly := esc("POLYGON((170 -10,190 -10,190 10,170 10,170 -10))")
			r := e.get(ds + "/area?coords=" + poly + "&parameter-name=seafloor_age")
			e.want(r, 200)
			m := r.json(t)
			axes := m["domain"].(map[string]any)["axes"].(map[string]any)
			x := axes["x"].(map[string]any)
			if n, start, stop := num(t, x["num"]), num(t, x["start"]), num(t, x["stop"]); n != 20 || start != 170.5 || stop != 189.5 {
				t.Errorf("x axis start %g stop %g num %g, want 170.5..189.5 in 20 cells", start, stop, n)
			}
			vals := m["ranges"].(map[string]any)[PSeafloorAge].(map[string]any)["values"].([]any)
			valid := 0
			for _, v := range vals {
				if v != nil {
					valid++
				}
			}
			if valid != 400 {
				t.Errorf("%d valid cells inside a 20°×20° box of 1° cells, want 400", valid)
			}
			g := e.get(ds + "/area?coords=" + esc("MULTIPOLYGON(((170 -10,180 -10,180 10,170 10,170 -10)),((-180 -10,-170 -10,-170 10,-180 10,-180 -10)))") + "&parameter-name=seafloor_age&f=csv")
			e.want(g, 200)
			if n := strings.Count(string(g.Body), "\n") - 1; n != 400 {
				t.Errorf("split multipolygon: %d CSV rows, want 400", n)
			}
			split := e.get(ds + "/area?coords=" + esc("MULTIPOLYGON(((170 -10,180 -10,180 10,170 10,170 -10)),((-180 -10,-170 -10,-170 10,-180 10,-180 -10)))") + "&parameter-name=seafloor_age").json(t)
			sx := split["domain"].(map[string]any)["axes"].(map[string]any)["x"].(map[string]any)
			if n := num(t, sx["num"]); n != 20 {
				t.Errorf("split multipolygon answered on %g columns, want the 20 of the region, not the globe", n)
			}
		})
		t.Run("polar cap area", func(t *testing.T) {
			poly := esc("POLYGON((-180 80,180 80,180 90,-180 90,-180 80))")
			m := e.get(ds + "/area?coords=" + poly + "&parameter-name=seafloor_age&resolution-x=10&resolution-y=5").json(t)
			y := m["domain"].(map[string]any)["axes"].(map[string]any)["y"].(map[string]any)
			if start := num(t, y["start"]); start != 87.5 {
				t.Errorf("polar area first row at %g, want 87.5 (5° blocks from 90° N)", start)
			}
		})
		t.Run("trajectory across the antimeridian", func(t *testing.T) {
			r := e.get(ds + "/trajectory?coords=" + esc("LINESTRING(179 0.5,-179 0.5)") + "&parameter-name=seafloor_age&spacing-km=50&f=GeoJSON")
			e.want(r, 200)
			feats := r.json(t)["features"].([]any)
			for i, f := range feats {
				p := f.(map[string]any)["properties"].(map[string]any)
				c := f.(map[string]any)["geometry"].(map[string]any)["coordinates"].([]any)
				if lon := num(t, c[0]); math.Abs(lon) < 178.9 {
					t.Errorf("sample %d at longitude %g: the geodesic should stay near ±180", i, lon)
				}
				if age := num(t, p["seafloor_age_ma"]); math.Abs(age-0.5) > 0.01 {
					t.Errorf("sample %d age %g, want 0.5", i, age)
				}
			}
			// 2° of longitude at 0.5° N on WGS84 ≈ 222.64 km, worked by hand from a·Δλ·cos φ
			// (first order, a = 6378.137 km, the WGS84 semi-major axis); ± 0.5 km is common
			// practice, no source.
			last := feats[len(feats)-1].(map[string]any)["properties"].(map[string]any)["distance_km"]
			if d := num(t, last); math.Abs(d-222.64) > 0.5 {
				t.Errorf("track length %.2f km, want 222.64 ± 0.5", d)
			}
		})
		t.Run("world tile", func(t *testing.T) {
			r := e.get("/tiles/globe/seafloor_age/0/0/0.png")
			e.want(r, 200)
			r = e.get(fmt.Sprintf("/tiles/globe/heat_flow/1/%d/%d.png", 1, 0))
			e.want(r, 200)
		})
	})
}
