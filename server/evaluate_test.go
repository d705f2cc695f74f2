package server

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/evaluate"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// installGrid stores g under id (kind, units) with a footprint box and returns nothing; the
// caller makes datasets of the grids it installs.
func installGrid(t *testing.T, e *env, id string, kind store.GridKind, units string, sense store.VerticalSense, g *geo.Grid, west, east float64) {
	t.Helper()
	ring := orb.Ring{{west, -90}, {east, -90}, {east, 90}, {west, 90}, {west, -90}}
	row := store.Grid{ID: id, Name: id, Kind: kind, Units: units, VerticalSense: sense,
		Footprint: orb.MultiPolygon{{ring}}, ResolutionDeg: g.DX, Registration: store.CellCentre}
	if _, _, err := e.st.ImportGrid(context.Background(), row, func(tmp string) error { return gdal.WriteCOG(tmp, g, gdal.Meta{Units: units}) }); err != nil {
		t.Fatal(err)
	}
}

// installGlobe360 stores the globe of installGlobe written on a 0..360° lattice (dataset
// "globe360").
func installGlobe360(t *testing.T, e *env) {
	t.Helper()
	g := geo.NewGrid(360, 180, 0.5, 89.5, 1, 1, geo.CellCentre)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			g.Set(c, r, float32(math.Abs(g.Lat(r))))
		}
	}
	installGrid(t, e, "globe360-age", store.KindAge, "Ma", store.VerticalNone, g, -180, 180)
	if _, err := e.st.CreateDataset(context.Background(), store.Dataset{ID: "globe360", Name: "globe 0..360", AgeGridID: "globe360-age"}); err != nil {
		t.Fatal(err)
	}
}

// areaAnswer is the lattice and one parameter's values of a CoverageJSON grid answer.
type areaAnswer struct {
	X0, X1, Y0, Y1 float64
	NX, NY         int
	Values         []float64 // NaN for null
}

func readArea(t *testing.T, m map[string]any, param string) areaAnswer {
	t.Helper()
	axes := m["domain"].(map[string]any)["axes"].(map[string]any)
	x, y := axes["x"].(map[string]any), axes["y"].(map[string]any)
	a := areaAnswer{X0: num(t, x["start"]), X1: num(t, x["stop"]), Y0: num(t, y["start"]), Y1: num(t, y["stop"]),
		NX: int(num(t, x["num"])), NY: int(num(t, y["num"]))}
	for _, v := range m["ranges"].(map[string]any)[param].(map[string]any)["values"].([]any) {
		if v == nil {
			a.Values = append(a.Values, math.NaN())
		} else {
			a.Values = append(a.Values, num(t, v))
		}
	}
	return a
}

func sameArea(t *testing.T, what string, got, want areaAnswer) {
	t.Helper()
	if got.NX != want.NX || got.NY != want.NY || math.Abs(got.X0-want.X0) > 1e-9 || math.Abs(got.Y0-want.Y0) > 1e-9 {
		t.Errorf("%s: lattice x %g..%g (%d) y %g..%g (%d), want x %g..%g (%d) y %g..%g (%d)", what,
			got.X0, got.X1, got.NX, got.Y0, got.Y1, got.NY, want.X0, want.X1, want.NX, want.Y0, want.Y1, want.NY)
		return
	}
	for i := range want.Values {
		g, w := got.Values[i], want.Values[i]
		if !(math.IsNaN(g) && math.IsNaN(w)) && math.Abs(g-w) > 1e-6 {
			t.Errorf("%s: value %d = %g, want %g", what, i, g, w)
			return
		}
	}
}

// Issue 9 item 4: the same antimeridian area written four ways, on a global grid in −180..180
// and in 0..360, gives one answer; the export job writes the cells the size check counted.
func TestAntimeridianAreasOneAnswer(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		installGlobe(t, e)
		installGlobe360(t, e)
		// The answer by construction (age = |latitude| on 1° cells): columns at 179.5 and 180.5
		// (−179.5), rows at −31.5 … −40.5.
		want := areaAnswer{X0: 179.5, X1: 180.5, Y0: -31.5, Y1: -40.5, NX: 2, NY: 10}
		for r := 0; r < 10; r++ {
			want.Values = append(want.Values, 31.5+float64(r), 31.5+float64(r))
		}
		shapes := map[string]string{
			"short way across ±180": "POLYGON((179 -31,-179 -31,-179 -41,179 -41,179 -31))",
			"written 179 to 181":    "POLYGON((179 -31,181 -31,181 -41,179 -41,179 -31))",
			"pre-split at ±180":     "MULTIPOLYGON(((179 -31,180 -31,180 -41,179 -41,179 -31)),((-180 -31,-179 -31,-179 -41,-180 -41,-180 -31)))",
		}
		for _, ds := range []string{"globe", "globe360"} {
			for name, wkt := range shapes {
				r := e.get("/api/collections/" + ds + "/area?coords=" + esc(wkt) + "&parameter-name=seafloor_age")
				e.want(r, 200)
				got := readArea(t, r.json(t), PSeafloorAge)
				if got.X0 < 0 { // a lattice written from −180.5 is the same cells
					got.X0, got.X1 = got.X0+360, got.X1+360
				}
				sameArea(t, ds+": "+name, got, want)
			}
			// The same box stored as a region answers the same cells as a location.
			if ds == "globe" {
				body := `{"type":"Feature","id":"across","geometry":{"type":"Polygon","coordinates":[[[179,-31],[-179,-31],[-179,-41],[179,-41],[179,-31]]]},"properties":{"name":"across"}}`
				e.want(e.do("POST", "/api/regions", strings.NewReader(body), "Authorization", "Bearer "+e.editor, "Content-Type", MediaGeoJSON), 201)
			}
			loc := e.get("/api/collections/" + ds + "/locations/across?parameter-name=seafloor_age")
			e.want(loc, 200)
			lm := loc.json(t)
			got := readArea(t, lm, PSeafloorAge)
			if got.X0 < 0 {
				got.X0, got.X1 = got.X0+360, got.X1+360
			}
			sameArea(t, ds+": stored region", got, want)
			st := lm["ridgeflank:statistics"].(map[string]any)[PSeafloorAge].(map[string]any)
			if c := num(t, st["count"]); c != 20 {
				t.Errorf("%s: stored region statistics over %g cells, want 20", ds, c)
			}
			// A 50°-wide band the short way round (170 → 220): 50 columns, all at 29.5 Ma.
			r := e.get("/api/collections/" + ds + "/area?coords=" + esc("POLYGON((170 -30,-140 -30,-140 -29,170 -29,170 -30))") + "&parameter-name=seafloor_age")
			e.want(r, 200)
			band := readArea(t, r.json(t), PSeafloorAge)
			if band.NX != 50 || band.NY != 1 {
				t.Errorf("%s: band lattice %d×%d, want 50×1", ds, band.NX, band.NY)
			}
			for _, v := range band.Values {
				if math.Abs(v-29.5) > 1e-6 {
					t.Errorf("%s: band value %g, want 29.5", ds, v)
					break
				}
			}
		}
	})
}

// The export job's file for a pre-split multipolygon 175..180 ∪ −180..−173 has the width the
// handler's size check counted (12 one-degree columns), and equals the synchronous answer.
func TestExportJobWindowAndSameFile(t *testing.T) {
	for _, b := range []string{"sqlite", "postgis"} {
		t.Run(b, func(t *testing.T) {
			e := newEnvLimits(t, b, Config{}, Limits{SyncExportCells: 20})
			installGlobe(t, e)
			q := "/api/collections/globe/area?coords=" + esc("MULTIPOLYGON(((175 -30,180 -30,180 -40,175 -40,175 -30)),((-180 -30,-173 -30,-173 -40,-180 -40,-180 -30)))") +
				"&parameter-name=seafloor_age&f=COG"
			r := e.get(q)
			e.want(r, 202)
			jobPath := jobOf(r)
			job := e.waitJob(jobPath)
			if job["state"] != "succeeded" {
				t.Fatalf("export job %v", job)
			}
			f := e.get(jobPath + "/result")
			e.want(f, 200)
			path := filepath.Join(t.TempDir(), "x.tif")
			if err := os.WriteFile(path, f.Body, 0o644); err != nil {
				t.Fatal(err)
			}
			g, _, err := gdal.Read(path)
			if err != nil {
				t.Fatal(err)
			}
			// 175.5 … 179.5 and −179.5 … −173.5: 5 + 7 columns; −30.5 … −39.5: 10 rows.
			if g.NX != 12 || g.NY != 10 {
				t.Errorf("exported raster %d×%d, want 12×10", g.NX, g.NY)
			}
			// The same request answered synchronously (a handler on the same store without jobs).
			sync := New(Deps{Store: e.st, Version: "test"})
			rec := httptest.NewRecorder()
			sync.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, q, nil))
			if rec.Code != 200 {
				t.Fatalf("synchronous COG: %d %s", rec.Code, rec.Body.String())
			}
			if rec.Body.String() != string(f.Body) {
				t.Errorf("the export job's file (%d bytes) differs from the synchronous answer (%d bytes)", len(f.Body), rec.Body.Len())
			}
		})
	}
}

// boxAreaKm2 is the area of a longitude/latitude box on a sphere of radius R:
// R²·Δλ·(sin φ2 − sin φ1) (the area of a spherical zone cut by two meridians), with the
// authalic radius 6371.0071810 km (WGS84 authalic sphere, Moritz 2000, Geodetic Reference
// System 1980).
func boxAreaKm2(w, s, e, n float64) float64 {
	const r = 6371.0071810
	rad := math.Pi / 180
	return r * r * (e - w) * rad * (math.Sin(n*rad) - math.Sin(s*rad))
}

// Issue 9 item 6: one validity rule for stored regions and area queries.
func TestRegionValidityOneRule(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		installGlobe(t, e)
		auth := []string{"Authorization", "Bearer " + e.editor, "Content-Type", MediaGeoJSON}
		square := "[[0,0],[10,0],[10,10],[0,10],[0,0]]"
		cases := []struct {
			name, coords, wkt string
			ok                bool
		}{
			{"hole outside its shell", `{"type":"Polygon","coordinates":[` + square + `,[[20,20],[20,22],[22,22],[22,20],[20,20]]]}`,
				"POLYGON((0 0,10 0,10 10,0 10,0 0),(20 20,20 22,22 22,22 20,20 20))", true},
			{"the same square twice", `{"type":"MultiPolygon","coordinates":[[` + square + `],[` + square + `]]}`,
				"MULTIPOLYGON(((0 0,10 0,10 10,0 10,0 0)),((0 0,10 0,10 10,0 10,0 0)))", true},
			{"hole crossing the shell's edge", `{"type":"Polygon","coordinates":[` + square + `,[[5,5],[5,15],[8,15],[8,5],[5,5]]]}`,
				"POLYGON((0 0,10 0,10 10,0 10,0 0),(5 5,8 5,8 15,5 15,5 5))", false},
		}
		plain := e.get("/api/collections/globe/area?coords=" + esc("POLYGON((0 0,10 0,10 10,0 10,0 0))") + "&parameter-name=seafloor_age")
		e.want(plain, 200)
		want := readArea(t, plain.json(t), PSeafloorAge)
		for _, c := range cases {
			t.Run(c.name, func(t *testing.T) {
				body := `{"type":"Feature","geometry":` + c.coords + `,"properties":{"name":"` + c.name + `"}}`
				rr := e.do("POST", "/api/regions", strings.NewReader(body), auth...)
				ar := e.get("/api/collections/globe/area?coords=" + esc(c.wkt) + "&parameter-name=seafloor_age")
				if !c.ok {
					wantProblem(t, rr, 400, CodeInvalidRegion)
					wantProblem(t, ar, 400, CodeInvalidRegion)
					return
				}
				e.want(rr, 201)
				f := rr.json(t)
				if got, w := num(t, f["properties"].(map[string]any)["area_km2"]), boxAreaKm2(0, 0, 10, 10); math.Abs(got-w) > 1e-6*w {
					t.Errorf("stored area %g km², want %g (one 10° square)", got, w)
				}
				if reps, _ := f["ridgeflank:repairs"].([]any); len(reps) == 0 {
					t.Errorf("the stored region does not say what was repaired: %v", f)
				}
				e.want(ar, 200)
				m := ar.json(t)
				sameArea(t, "area query", readArea(t, m, PSeafloorAge), want)
				if reps, _ := m["ridgeflank:repairs"].([]any); len(reps) == 0 {
					t.Errorf("the area answer does not say what was repaired")
				}
				// The stored region answers as a location with the same cells.
				loc := e.get("/api/collections/globe/locations/" + f["id"].(string) + "?parameter-name=seafloor_age")
				e.want(loc, 200)
				sameArea(t, "location", readArea(t, loc.json(t), PSeafloorAge), want)
			})
		}
	})
}

// Issue 9 item 7: limit errors are typed and state their limit.
func TestLimitProblems(t *testing.T) {
	for _, b := range []string{"sqlite", "postgis"} {
		t.Run(b, func(t *testing.T) {
			e := newEnvLimits(t, b, Config{}, Limits{Limits: evaluate.Limits{MaxVertices: 6, MaxTrackSamples: 10, MaxAreaCells: 50}})
			installGlobe(t, e)
			ds := "/api/collections/globe"
			heptagon := "POLYGON((0 0,2 0,3 1,2 2,1 3,0 2,0 0))" // 7 positions
			auth := []string{"Authorization", "Bearer " + e.editor, "Content-Type", MediaGeoJSON}
			for _, c := range []struct {
				name  string
				r     reply
				limit string
				value float64
			}{
				{"area vertices", e.get(ds + "/area?coords=" + esc(heptagon)), "max_vertices", 6},
				{"region vertices", e.do("POST", "/api/regions", strings.NewReader(`{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[0,0],[2,0],[3,1],[2,2],[1,3],[0,2],[0,0]]]},"properties":{"name":"x"}}`), auth...), "max_vertices", 6},
				{"trajectory vertices", e.get(ds + "/trajectory?coords=" + esc("LINESTRING(0 0,1 0,2 0,3 0,4 0,5 0,6 0)")), "max_vertices", 6},
				{"track samples", e.get(ds + "/trajectory?coords=" + esc("LINESTRING(0 0,1 0)") + "&spacing-km=1"), "max_track_samples", 10},
				{"area cells", e.get(ds + "/area?coords=" + esc("POLYGON((0 0,10 0,10 10,0 0))")), "max_area_cells", 50},
			} {
				t.Run(c.name, func(t *testing.T) {
					p := wantProblem(t, c.r, 422, CodeLimitExceeded)
					if p["limit_name"] != c.limit || num(t, p["limit"]) != c.value {
						t.Errorf("problem states limit %v = %v, want %s = %g", p["limit_name"], p["limit"], c.limit, c.value)
					}
				})
			}
		})
	}
}

// readTrack reads a trajectory CoverageJSON answer: sample positions, distances, residual
// depths and the waypoints.
func readTrack(t *testing.T, m map[string]any) (pos [][2]float64, dist, res []float64, wps []map[string]any) {
	t.Helper()
	for _, v := range m["domain"].(map[string]any)["axes"].(map[string]any)["composite"].(map[string]any)["values"].([]any) {
		p := v.([]any)
		pos = append(pos, [2]float64{num(t, p[0]), num(t, p[1])})
	}
	for _, v := range m["ridgeflank:samples"].(map[string]any)["distance_km"].([]any) {
		dist = append(dist, num(t, v))
	}
	for i := range pos {
		res = append(res, covValue(t, m, PResidualDepth, i))
	}
	for _, w := range m["ridgeflank:waypoints"].([]any) {
		wps = append(wps, w.(map[string]any))
	}
	return
}

// Issue 9 item 5: the track file itself, in CSV (degrees and decimal minutes), GPX and
// GeoJSON, gives the same samples and keeps the waypoint names.
func TestTrajectoryFiles(t *testing.T) {
	read := func(name string) string {
		b, err := os.ReadFile(filepath.Join("..", "testdata", "tracks", name))
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	names := []string{"QA-01 (SYNTHETIC)", "QA-02 (SYNTHETIC)", "QA-03 (SYNTHETIC)"}
	// The same waypoints as a GeoJSON LineString (which has no names).
	line := `{"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[-131.25,-27.5],[-128.3375,-25.758333333333333],[-125.08333333333333,-23.179166666666667]]}}`
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		path := "/api/collections/" + e.dataset + "/trajectory?parameter-name=residual_depth&spacing-km=25"
		files := []struct {
			name, ctype, body string
			named             bool
		}{
			{"csv", "text/csv", read("quillon-line-a.csv"), true},
			{"gpx", "application/gpx+xml", read("quillon-line-a.gpx"), true},
			{"geojson", MediaGeoJSON, read("quillon-line-a.geojson"), true},
			{"geojson line", "application/json", line, false},
		}
		var refPos [][2]float64
		var refRes []float64
		for i, f := range files {
			r := e.do("POST", path, strings.NewReader(f.body), "Content-Type", f.ctype)
			e.want(r, 200)
			pos, dist, res, wps := readTrack(t, r.json(t))
			if len(wps) != 3 {
				t.Fatalf("%s: %d waypoints, want 3", f.name, len(wps))
			}
			for k, w := range wps {
				if f.named && w["name"] != names[k] {
					t.Errorf("%s: waypoint %d named %v, want %q", f.name, k, w["name"], names[k])
				}
			}
			if d := num(t, wps[0]["distance_km"]); d != 0 {
				t.Errorf("%s: first waypoint at %g km", f.name, d)
			}
			// Sample distances are written to 7 significant digits.
			if d, last := num(t, wps[2]["distance_km"]), dist[len(dist)-1]; math.Abs(d-last) > 1e-6*last {
				t.Errorf("%s: last waypoint at %g km, last sample at %g km", f.name, d, last)
			}
			if i == 0 {
				refPos, refRes = pos, res
				// 27°30.000'S 131°15.000'W is −27.5, −131.25 (the fixture's GPX writes it so).
				if math.Abs(pos[0][0]+131.25) > 1e-12 || math.Abs(pos[0][1]+27.5) > 1e-12 {
					t.Errorf("first sample %v, want (−131.25, −27.5)", pos[0])
				}
				continue
			}
			if len(pos) != len(refPos) {
				t.Fatalf("%s: %d samples, csv gave %d", f.name, len(pos), len(refPos))
			}
			for k := range pos {
				if math.Abs(pos[k][0]-refPos[k][0]) > 1e-9 || math.Abs(pos[k][1]-refPos[k][1]) > 1e-9 ||
					!(math.IsNaN(res[k]) && math.IsNaN(refRes[k])) && math.Abs(res[k]-refRes[k]) > 1e-6 {
					t.Fatalf("%s: sample %d %v %g, csv gave %v %g", f.name, k, pos[k], res[k], refPos[k], refRes[k])
				}
			}
		}
		// CSV and GeoJSON answers name the waypoints too.
		c := e.do("POST", path+"&f=csv", strings.NewReader(read("quillon-line-a.csv")), "Content-Type", "text/csv")
		e.want(c, 200)
		recs, col := csvRecords(t, c)
		named := map[string]bool{}
		for _, r := range recs[1:] {
			named[r[col["waypoint"]]] = true
		}
		for _, n := range names {
			if !named[n] {
				t.Errorf("CSV answer does not name waypoint %q in its waypoint column", n)
			}
		}
		g := e.do("POST", path+"&f=GeoJSON", strings.NewReader(read("quillon-line-a.gpx")), "Content-Type", "application/gpx+xml")
		e.want(g, 200)
		if w, _ := g.json(t)["ridgeflank:waypoints"].([]any); len(w) != 3 || w[1].(map[string]any)["name"] != names[1] {
			t.Errorf("GeoJSON answer waypoints %v", w)
		}
		wantProblem(t, e.do("POST", path, strings.NewReader("name,lat,lon\nA,north,west\nB,1,2\n"), "Content-Type", "text/csv"), 400, CodeInvalidTrack)
		wantProblem(t, e.do("POST", path, strings.NewReader("x"), "Content-Type", "image/png"), 415, CodeUnsupportedMedia)
	})
}

// The same question through any door: a position, a trajectory through it and an area cell
// centred on it give the same residual depth (float32 rounding of the grid path).
func TestSameQuestionAnyDoor(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		ds := "/api/collections/" + e.dataset
		ar := e.get(ds + "/area?coords=" + esc("POLYGON((-135 -25,-134 -25,-134 -24,-135 -24,-135 -25))") + "&parameter-name=residual_depth")
		e.want(ar, 200)
		a := readArea(t, ar.json(t), PResidualDepth)
		col, row := a.NX/2, a.NY/2
		lon := a.X0 + float64(col)*(a.X1-a.X0)/float64(a.NX-1)
		lat := a.Y0 + float64(row)*(a.Y1-a.Y0)/float64(a.NY-1)
		cell := a.Values[row*a.NX+col]
		if math.IsNaN(cell) {
			t.Fatalf("no residual depth at the area cell (%g, %g)", lon, lat)
		}
		pt := fmt.Sprintf("%.10f %.10f", lon, lat)
		pos := covValue(t, e.get(ds+"/position?coords="+esc("POINT("+pt+")")+"&parameter-name=residual_depth").json(t), PResidualDepth, 0)
		tr := covValue(t, e.get(ds+"/trajectory?coords="+esc("LINESTRING("+pt+","+fmt.Sprintf("%.10f %.10f", lon+0.5, lat)+")")+"&parameter-name=residual_depth").json(t), PResidualDepth, 0)
		// float32 values near 5 km are 0.5 mm apart; the answers are rounded to 7 significant digits.
		for name, v := range map[string]float64{"position": pos, "trajectory": tr} {
			if math.Abs(v-cell) > 0.01 {
				t.Errorf("%s residual depth %g m, area cell %g m at (%g, %g)", name, v, cell, lon, lat)
			}
		}
	})
}

// Physically impossible inputs are refused, and the answer says which input caused it.
func TestImplausibleFlagged(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		// 10×10 one-degree cells at 0..10°E, 0..10°N: age 50 Ma, depth 5000 m, sediment 500 m,
		// except three cells in row 0 with 25 km of sediment and one with −100 m.
		mk := func(v float32) *geo.Grid {
			g := geo.NewGrid(10, 10, 0.5, 9.5, 1, 1, geo.CellCentre)
			for i := range g.Data {
				g.Data[i] = v
			}
			return g
		}
		age, depth, sed := mk(50), mk(5000), mk(500)
		sed.Set(0, 0, 25000)
		sed.Set(1, 0, 25000)
		sed.Set(2, 0, 25000)
		sed.Set(5, 5, -100)
		installGrid(t, e, "imp-age", store.KindAge, "Ma", store.VerticalNone, age, 0, 10)
		installGrid(t, e, "imp-depth", store.KindDepth, "m", store.DepthPositiveDown, depth, 0, 10)
		installGrid(t, e, "imp-sed", store.KindSedimentThickness, "m", store.VerticalNone, sed, 0, 10)
		if _, err := e.st.CreateDataset(context.Background(), store.Dataset{ID: "imp", Name: "imp", AgeGridID: "imp-age", DepthGridID: "imp-depth", SedimentGridID: "imp-sed"}); err != nil {
			t.Fatal(err)
		}
		ds := "/api/collections/imp"
		p := e.get(ds + "/position?coords=" + esc("POINT(0.5 9.5)") + "&parameter-name=residual_depth,predicted_depth")
		e.want(p, 200)
		m := p.json(t)
		if v := covValue(t, m, PResidualDepth, 0); !math.IsNaN(v) {
			t.Errorf("residual depth over 25 km of sediment answered %g", v)
		}
		if v := covValue(t, m, PPredictedDepth, 0); math.IsNaN(v) {
			t.Errorf("predicted depth (age only) refused")
		}
		wantFlags(t, m, `[{"parameter":"residual_depth","input":"sediment_thickness","count":1,"reason":"sediment thickness beyond 20 km"}]`)
		a := e.get(ds + "/area?coords=" + esc("POLYGON((0 0,10 0,10 10,0 10,0 0))") + "&parameter-name=residual_depth")
		e.want(a, 200)
		wantFlags(t, a.json(t), `[{"parameter":"residual_depth","input":"sediment_thickness","count":1,"reason":"negative sediment thickness"},`+
			`{"parameter":"residual_depth","input":"sediment_thickness","count":3,"reason":"sediment thickness beyond 20 km"}]`)
	})
}

func wantFlags(t *testing.T, m map[string]any, want string) {
	t.Helper()
	got, _ := json.Marshal(m["ridgeflank:flags"])
	var a, b any
	_ = json.Unmarshal(got, &a)
	_ = json.Unmarshal([]byte(want), &b)
	ga, _ := json.Marshal(a)
	wb, _ := json.Marshal(b)
	if string(ga) != string(wb) {
		t.Errorf("flags %s, want %s", ga, wb)
	}
}
