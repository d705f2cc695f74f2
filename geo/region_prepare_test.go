package geo

import (
	"errors"
	"math"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/encoding/wkt"

	"ridgeflank/fault"
)

// authalicRadiusKm is R2 of GRS80, the radius of the sphere with the ellipsoid's surface area
// (Moritz 2000, "Geodetic Reference System 1980", J. Geodesy 74, 128–133: R2 = 6371007.1810 m).
const authalicRadiusKm = 6371.0071810

// zoneKm2 is the area of a longitude/latitude box on the authalic sphere from the spherical-zone
// formula A = R²·Δλ·(sin φ2 − sin φ1) (Archimedes' hat-box theorem; Snyder 1987, "Map
// Projections — A Working Manual", USGS PP 1395, eq. 3-12 for the authalic sphere).
func zoneKm2(dLonDeg, lat1, lat2 float64) float64 {
	d := math.Pi / 180
	return authalicRadiusKm * authalicRadiusKm * dLonDeg * d * math.Abs(math.Sin(lat2*d)-math.Sin(lat1*d))
}

func mustWKT(t *testing.T, s string) orb.MultiPolygon {
	t.Helper()
	g, err := wkt.Unmarshal(s)
	if err != nil {
		t.Fatalf("WKT %q: %v", s, err)
	}
	switch g := g.(type) {
	case orb.Polygon:
		return orb.MultiPolygon{g}
	case orb.MultiPolygon:
		return g
	}
	t.Fatalf("WKT %q is a %T", s, g)
	return nil
}

func TestPrepareRegionBoundAndArea(t *testing.T) {
	// Bounds: the narrowest longitude interval covering the region, worked by hand from the
	// coordinates (tolerance 1e-9°). Areas: spherical-zone formula (zoneKm2), relative
	// tolerance 1e-12 (the edges are parallels and meridians, for which the area is exact).
	cases := []struct {
		name                   string
		wkt                    string
		minX, maxX, minY, maxY float64
		area                   float64
	}{
		{"short way across the antimeridian", "POLYGON((179 -31,-179 -31,-179 -41,179 -41,179 -31))",
			179, 181, -41, -31, zoneKm2(2, -41, -31)},
		{"50 degrees across the antimeridian", "POLYGON((170 -30,-140 -30,-140 -29,170 -29,170 -30))",
			170, 220, -30, -29, zoneKm2(50, -30, -29)},
		{"pre-split at the antimeridian (RFC 7946 §3.1.9)", "MULTIPOLYGON(((175 -20,180 -20,180 -10,175 -10,175 -20)),((-180 -20,-173 -20,-173 -10,-180 -10,-180 -20)))",
			175, 187, -20, -10, zoneKm2(12, -20, -10)},
		{"box written 179 to 181", "POLYGON((179 -31,181 -31,181 -41,179 -41,179 -31))",
			179, 181, -41, -31, zoneKm2(2, -41, -31)},
		{"two parts far apart either side of the antimeridian", "MULTIPOLYGON(((100 0,110 0,110 5,100 5,100 0)),((-110 0,-100 0,-100 5,-110 5,-110 0)))",
			100, 260, 0, 5, 2 * zoneKm2(10, 0, 5)},
		{"two parts either side of Greenwich", "MULTIPOLYGON(((30 0,40 0,40 5,30 5,30 0)),((-40 0,-30 0,-30 5,-40 5,-40 0)))",
			-40, 40, 0, 5, 2 * zoneKm2(10, 0, 5)},
		{"polar cap written as a box to 90N", "POLYGON((-180 75,180 75,180 90,-180 90,-180 75))",
			-180, 180, 75, 90, zoneKm2(360, 75, 90)},
		{"polar cap written as a ring round the pole", "POLYGON((0 75,90 75,180 75,-90 75,0 75))",
			-180, 180, 75, 90, zoneKm2(360, 75, 90)},
		{"box at the south pole", "POLYGON((-30 -90,30 -90,30 -80,-30 -80,-30 -90))",
			-30, 30, -90, -80, zoneKm2(60, -90, -80)},
		{"box across Greenwich", "POLYGON((-5 40,5 40,5 50,-5 50,-5 40))",
			-5, 5, 40, 50, zoneKm2(10, 40, 50)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			pr, err := PrepareRegion(mustWKT(t, c.wkt), 0)
			if err != nil {
				t.Fatal(err)
			}
			b := pr.Bound
			got := [4]float64{b.Min[0], b.Max[0], b.Min[1], b.Max[1]}
			want := [4]float64{c.minX, c.maxX, c.minY, c.maxY}
			for i := range got {
				if math.Abs(got[i]-want[i]) > 1e-9 {
					t.Fatalf("bound %v, want %v", got, want)
				}
			}
			if math.Abs(pr.AreaKm2-c.area) > 1e-12*c.area {
				t.Errorf("area %.6f km², want %.6f km²", pr.AreaKm2, c.area)
			}
			if len(pr.Repairs) != 0 {
				t.Errorf("repairs %q, want none", pr.Repairs)
			}
			for _, p := range pr.Parts {
				for _, r := range p {
					for _, pt := range r {
						if pt[0] < -180 || pt[0] > 180 {
							t.Fatalf("longitude %g outside −180..180", pt[0])
						}
					}
				}
			}
		})
	}
}

func TestRegionBoundReadsAWindow(t *testing.T) {
	// The bound RegionBound gives is read as is by (*Grid).Window, whatever the grid's longitude
	// frame (issue 9 item 4): the expected columns are those whose 1° cells overlap the region,
	// counted by hand from the grids' origins.
	shortWay := "POLYGON((179 -31,-179 -31,-179 -41,179 -41,179 -31))"
	preSplit := "MULTIPOLYGON(((175 -20,180 -20,180 -10,175 -10,175 -20)),((-180 -20,-173 -20,-173 -10,-180 -10,-180 -20)))"
	cases := []struct {
		name      string
		grid      *Grid
		wkt       string
		nx, ny    int
		firstLon  float64 // centre of the window's first column, in −180..180
		firstCol  float32 // the source column it comes from (the grid holds column numbers)
		secondCol float32
	}{
		{"global −180..180 grid, short-way box", NewGrid(360, 180, -179.5, 89.5, 1, 1, CellCentre), shortWay, 2, 10, 179.5, 359, 0},
		{"global 0..360 grid, short-way box", NewGrid(360, 180, 0.5, 89.5, 1, 1, CellCentre), shortWay, 2, 10, 179.5, 179, 180},
		{"global −180..180 grid, pre-split multipolygon", NewGrid(360, 180, -179.5, 89.5, 1, 1, CellCentre), preSplit, 12, 10, 175.5, 355, 356},
		{"global 0..360 grid, pre-split multipolygon", NewGrid(360, 180, 0.5, 89.5, 1, 1, CellCentre), preSplit, 12, 10, 175.5, 175, 176},
		{"regional 150..210 grid, pre-split multipolygon", NewGrid(60, 60, 150.5, -0.5, 1, 1, CellCentre), preSplit, 12, 10, 175.5, 25, 26},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			for i := range c.grid.Data {
				c.grid.Data[i] = float32(i % c.grid.NX)
			}
			pr, err := PrepareRegion(mustWKT(t, c.wkt), 0)
			if err != nil {
				t.Fatal(err)
			}
			w, err := c.grid.Window(pr.Bound)
			if err != nil {
				t.Fatal(err)
			}
			if w.NX != c.nx || w.NY != c.ny {
				t.Fatalf("window %d×%d, want %d×%d", w.NX, w.NY, c.nx, c.ny)
			}
			if math.Abs(LonTo180(w.West)-c.firstLon) > 1e-9 || w.Data[0] != c.firstCol || w.Data[1] != c.secondCol {
				t.Errorf("window starts at %g with columns %v %v, want %g with %v %v", w.West, w.Data[0], w.Data[1], c.firstLon, c.firstCol, c.secondCol)
			}
		})
	}
}

func TestRegionBoundEmptyAndFull(t *testing.T) {
	if b := RegionBound(nil); b != (orb.Bound{}) {
		t.Errorf("empty region: %v, want the zero bound", b)
	}
	// parts covering the whole circle between them (two halves) give −180..180
	mp := orb.MultiPolygon{{box(-180, 0, 0, 1)}, {box(0, 0, 180, 1)}}
	if b := RegionBound(mp); b.Min[0] != -180 || b.Max[0] != 180 {
		t.Errorf("two halves: %v, want −180..180", b)
	}
}

func TestPrepareRegionErrorsAreFaults(t *testing.T) {
	cases := []struct {
		name      string
		mp        orb.MultiPolygon
		max       int
		kind      fault.Kind
		limitName string
		asked     int64
	}{
		{"unclosed ring", orb.MultiPolygon{{{{0, 0}, {1, 0}, {1, 1}, {0, 1}}}}, 0, fault.InvalidRegion, "", 0},
		{"bow tie", orb.MultiPolygon{{{{0, 0}, {1, 1}, {1, 0}, {0, 1}, {0, 0}}}}, 0, fault.InvalidRegion, "", 0},
		{"too many vertices", orb.MultiPolygon{{box(0, 0, 1, 1)}}, 4, fault.LimitExceeded, "max_vertices", 5},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := PrepareRegion(c.mp, c.max)
			f, ok := fault.As(err)
			if !ok {
				t.Fatalf("error %v is not a *fault.Error", err)
			}
			if f.Kind != c.kind || f.Field != "geometry" {
				t.Errorf("kind %q field %q, want %q geometry", f.Kind, f.Field, c.kind)
			}
			if !errors.Is(err, ErrInvalidRegion) {
				t.Errorf("error %v does not wrap ErrInvalidRegion", err)
			}
			if c.limitName != "" && (f.Limit == nil || f.Limit.Name != c.limitName || f.Limit.Value != int64(c.max) || f.Limit.Asked != c.asked) {
				t.Errorf("limit %+v, want %s %d asked %d", f.Limit, c.limitName, c.max, c.asked)
			}
		})
	}
}
