package server

import (
	"math"
	"strings"
	"testing"

	"ridgeflank/thermal"
)

// Slab pull over HTTP on the globe dataset (age = |latitude|, SYNTHETIC construction of
// installGlobe): a trench line across the antimeridian at 60.5° N (the geodesic bulges
// poleward by < 0.01°, so ages are 60.5 ± 0.01 Ma). Each sample's slab pull, thermal parameter
// and core depth are thermal's at the sample's own age (7 significant digits in JSON answers:
// 1e-6 relative), and the provenance names the model; the GET and POST (GeoJSON LineString) forms agree; CSV carries the columns;
// bad settings and the sample limit are problems naming the parameter.
func TestSlabPullAPI(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	installGlobe(t, e)
	ds := "/api/collections/globe/slab-pull"
	set := "&convergence-mm-yr=60&slab-length-km=600&dip-deg=45&spacing-km=20&model=halfspace"
	m, _ := thermal.Builtin("halfspace")
	get := e.get(ds + "?coords=" + esc("LINESTRING(179 60.5,-179 60.5)") + set)
	e.want(get, 200)
	g := get.json(t)
	t.Run("samples", func(t *testing.T) {
		s := g["samples"].(map[string]any)
		ages, pull, phi, core, lons := s["age_ma"].([]any), s["slab_pull_n_m"].([]any), s["thermal_parameter_km"].([]any), s["slab_core_below_600c_depth_km"].([]any), s["lon"].([]any)
		if len(ages) < 5 {
			t.Fatalf("%d samples", len(ages))
		}
		for i := range ages {
			a := num(t, ages[i])
			if math.Abs(a-60.5) > 0.01 {
				t.Errorf("sample %d age %g, want 60.5", i, a)
			}
			if lon := num(t, lons[i]); math.Abs(lon) < 178.9 {
				t.Errorf("sample %d at longitude %g: the line should stay near ±180", i, lon)
			}
			for _, c := range []struct {
				name      string
				got, want float64
			}{
				{"slab pull", num(t, pull[i]), thermal.SlabPullNPerM(m, a, 600, 45)},
				{"φ", num(t, phi[i]), thermal.ThermalParameterKm(a, 60, 45)},
				{"core depth", num(t, core[i]), thermal.SlabCoreDepthKm(m, a, 60, 45, thermal.SlabCoreIsothermC)},
			} {
				if math.Abs(c.got-c.want) > 1e-6*c.want {
					t.Errorf("sample %d %s %g, thermal %g", i, c.name, c.got, c.want)
				}
			}
		}
		mean := g["mean"].(map[string]any)
		if got, want := num(t, mean["slab_pull_n_m"]), thermal.SlabPullNPerM(m, 60.5, 600, 45); math.Abs(got-want) > 1e-4*want {
			t.Errorf("mean slab pull %g, thermal at 60.5 Ma %g", got, want)
		}
		if id := g["provenance"].(map[string]any)["model"].(map[string]any)["id"]; id != "halfspace" {
			t.Errorf("provenance model %v", id)
		}
	})
	t.Run("post geojson", func(t *testing.T) {
		body := `{"type":"LineString","coordinates":[[179,60.5],[-179,60.5]]}`
		r := e.do("POST", ds+"?"+strings.TrimPrefix(set, "&"), strings.NewReader(body), "Content-Type", "application/geo+json")
		e.want(r, 200)
		p := r.json(t)
		if a, b := num(t, p["total_slab_pull_n"]), num(t, g["total_slab_pull_n"]); a != b {
			t.Errorf("POST total %g, GET %g", a, b)
		}
	})
	t.Run("csv", func(t *testing.T) {
		r := e.get(ds + "?coords=" + esc("LINESTRING(179 60.5,-179 60.5)") + set + "&f=csv")
		e.want(r, 200)
		if !strings.HasPrefix(string(r.Body), "lon,lat,distance_km,age_ma,slab_pull_n_m,thermal_parameter_km,slab_core_below_600c_depth_km,") {
			t.Errorf("header %q", strings.SplitN(string(r.Body), "\n", 2)[0])
		}
	})
	t.Run("faults", func(t *testing.T) {
		line := "?coords=" + esc("LINESTRING(179 60.5,-179 60.5)")
		for _, c := range []struct {
			q, param, code string
			status         int
		}{
			{"&convergence-mm-yr=60&slab-length-km=600", "dip-deg", CodeInvalidParameter, 400},
			{"&convergence-mm-yr=-3&slab-length-km=600&dip-deg=45", "convergence-mm-yr", CodeInvalidParameter, 400},
			{"&convergence-mm-yr=60&slab-length-km=600&dip-deg=45&spacing-km=0.05", "spacing-km", CodeLimitExceeded, 422},
		} {
			p := wantProblem(t, e.get(ds+line+c.q), c.status, c.code)
			if p["parameter"] != c.param {
				t.Errorf("%s: parameter %v, want %s", c.q, p["parameter"], c.param)
			}
		}
		wantProblem(t, e.get(ds+"?coords="+esc("POINT(0 0)")+set), 400, CodeInvalidCoords)
	})
}
