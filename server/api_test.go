package server

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"image/png"
	"io"
	"math"
	"mime/multipart"
	"net"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/go-chi/chi/v5"
	"github.com/pb33f/libopenapi"
	validator "github.com/pb33f/libopenapi-validator"
	"github.com/santhosh-tekuri/jsonschema/v6"

	"ridgeflank/demobasin"
	"ridgeflank/evaluate"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
)

func esc(s string) string { return url.QueryEscape(s) }

// gdh1Depth and gdh1HeatFlow are the published GDH1 fits (Stein & Stein
// 1992, Nature 359, 123–129; from memory): depth 2600 + 365·√t m for t < 20
// Ma, else 5651 − 2473·e^(−0.0278 t); heat flow 510/√t mW/m² for t ≤ 55 Ma,
// else 48 + 96·e^(−0.0278 t). The tolerances the tests allow around them
// (± 25 m, ± 3 %) cover the fit's own misfit to the model and grid sampling:
// common practice, no source.
func gdh1Depth(t float64) float64 {
	if t < 20 {
		return 2600 + 365*math.Sqrt(t)
	}
	return 5651 - 2473*math.Exp(-0.0278*t)
}

func gdh1HeatFlow(t float64) float64 {
	if t <= 55 {
		return 510 / math.Sqrt(t)
	}
	return 48 + 96*math.Exp(-0.0278*t)
}

func num(t *testing.T, v any) float64 {
	t.Helper()
	f, ok := v.(float64)
	if !ok {
		t.Fatalf("%v is not a number", v)
	}
	return f
}

func covValue(t *testing.T, m map[string]any, param string, i int) float64 {
	t.Helper()
	rng, ok := m["ranges"].(map[string]any)[param].(map[string]any)
	if !ok {
		t.Fatalf("no range %s in %v", param, m["ranges"])
	}
	vals := rng["values"].([]any)
	if vals[i] == nil {
		return math.NaN()
	}
	return num(t, vals[i])
}

func wantProblem(t *testing.T, r reply, status int, code string) map[string]any {
	t.Helper()
	if r.StatusCode != status {
		t.Fatalf("%s: status %d, want %d: %s", r.Request.URL.RequestURI(), r.StatusCode, status, trunc(r.Body))
	}
	if ct := r.Header.Get("Content-Type"); ct != "application/problem+json" {
		t.Fatalf("content type %q, want application/problem+json", ct)
	}
	m := r.json(t)
	if m["code"] != code {
		t.Fatalf("problem code %v, want %s: %s", m["code"], code, trunc(r.Body))
	}
	return m
}

func TestAPI(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		ds := "/api/collections/" + e.dataset
		clon, clat := demobasin.SwellCentreLon, demobasin.SwellCentreLat
		at := func(lon, lat float64) string { return esc(fmt.Sprintf("POINT(%g %g)", lon, lat)) }

		t.Run("landing and conformance", func(t *testing.T) {
			m := e.get("/api").json(t)
			rels := map[string]bool{}
			for _, l := range m["links"].([]any) {
				rels[l.(map[string]any)["rel"].(string)] = true
			}
			for _, want := range []string{"service-desc", "conformance", "data"} {
				if !rels[want] {
					t.Errorf("landing page has no %s link", want)
				}
			}
			c := e.get("/api/conformance").json(t)
			got := fmt.Sprint(c["conformsTo"])
			// OGC API–EDR 1.1 conformance class URIs (OGC 19-086r6, Annex A).
			for _, uri := range []string{"http://www.opengis.net/spec/ogcapi-edr-1/1.1/conf/core", "http://www.opengis.net/spec/ogcapi-edr-1/1.1/conf/covjson", "http://www.opengis.net/spec/ogcapi-common-2/1.0/conf/collections"} {
				if !strings.Contains(got, uri) {
					t.Errorf("conformance lacks %s", uri)
				}
			}
			oa := e.get("/api/openapi.json")
			e.want(oa, 200)
			if !strings.HasPrefix(oa.Header.Get("Content-Type"), "application/vnd.oai.openapi+json") {
				t.Errorf("openapi content type %q", oa.Header.Get("Content-Type"))
			}
		})

		t.Run("collections", func(t *testing.T) {
			m := e.get("/api/collections").json(t)
			if n := len(m["collections"].([]any)); n != 1 {
				t.Fatalf("%d collections, want 1", n)
			}
			c := e.get(ds).json(t)
			pn := c["parameter_names"].(map[string]any)
			for _, p := range []string{PSeafloorAge, PObservedDepth, PSedimentThickness, PPredictedDepth, PHeatFlow, PThermalThickness, PCorrectedDepth, PResidualDepth, PDepth600C} {
				if _, ok := pn[p]; !ok {
					t.Errorf("parameter_names lacks %s", p)
				}
			}
			for _, q := range []string{"position", "area", "trajectory", "locations"} {
				if _, ok := c["data_queries"].(map[string]any)[q]; !ok {
					t.Errorf("data_queries lacks %s", q)
				}
			}
			wantProblem(t, e.get("/api/collections/nope"), 404, CodeNotFound)
		})

		t.Run("position against GDH1 and the synthetic truth", func(t *testing.T) {
			// A point on the swell, 1° east of its centre (no seamount there).
			lon, lat := clon+1, clat
			r := e.get(ds + "/position?coords=" + at(lon, lat) + "&parameter-name=seafloor_age,predicted_depth,heat_flow,residual_depth")
			e.want(r, 200)
			if r.Header.Get("Content-Type") != MediaCovJSON {
				t.Errorf("content type %q", r.Header.Get("Content-Type"))
			}
			m := r.json(t)
			age := covValue(t, m, PSeafloorAge, 0)
			// The basin's age law (demobasin.AgeMa) is the input; bilinear
			// sampling of a 0.05° grid is within 0.2 Myr of it (common practice, no source).
			if want := demobasin.AgeMa(lon, lat); math.Abs(age-want) > 0.2 {
				t.Errorf("seafloor_age %.3f, want %.3f ± 0.2", age, want)
			}
			if got, want := covValue(t, m, PPredictedDepth, 0), gdh1Depth(age); math.Abs(got-want) > 25 {
				t.Errorf("predicted_depth %.1f m at %.2f Ma, GDH1 fit gives %.1f (± 25 m)", got, age, want)
			}
			if got, want := covValue(t, m, PHeatFlow, 0), gdh1HeatFlow(age); math.Abs(got-want) > 0.03*want {
				t.Errorf("heat_flow %.2f at %.2f Ma, GDH1 fit gives %.2f (± 3%%)", got, age, want)
			}
			// Residual depth is the injected swell + seamounts (the basin's
			// construction, demobasin.Generate), positive = shallower; ± 20 m
			// allows for grid sampling (common practice, no source).
			want := demobasin.SwellM(lon, lat) + demobasin.SeamountsM(lon, lat)
			if got := covValue(t, m, PResidualDepth, 0); math.Abs(got-want) > 20 {
				t.Errorf("residual_depth %.1f m, synthetic truth %.1f (± 20 m)", got, want)
			}
			prov := m["ridgeflank:provenance"].(map[string]any)
			if prov["model"].(map[string]any)["id"] != "gdh1" || len(prov["grids"].([]any)) < 3 {
				t.Errorf("provenance %v lacks the model or the grids", prov)
			}
			if !strings.Contains(fmt.Sprint(m["ridgeflank:caution"]), "not for navigation") {
				t.Errorf("no navigation caution in %v", m["ridgeflank:caution"])
			}
			if !strings.Contains(r.Header.Get("Ridgeflank-Provenance"), "sha256") {
				t.Errorf("provenance header %q", r.Header.Get("Ridgeflank-Provenance"))
			}
		})

		t.Run("position formats", func(t *testing.T) {
			mp := esc(fmt.Sprintf("MULTIPOINT((%g %g),(%g %g))", clon, clat, clon+360+2, clat+1)) // 0..360 longitude accepted
			r := e.get(ds + "/position?coords=" + mp + "&parameter-name=predicted_depth&model=psm")
			e.want(r, 200)
			m := r.json(t)
			if m["domain"].(map[string]any)["domainType"] != "MultiPoint" {
				t.Errorf("domain %v", m["domain"])
			}
			gj := e.get(ds + "/position?coords=" + mp + "&f=GeoJSON&parameter-name=residual_depth")
			e.want(gj, 200)
			fc := gj.json(t)
			feats := fc["features"].([]any)
			if len(feats) != 2 {
				t.Fatalf("%d features", len(feats))
			}
			c := feats[1].(map[string]any)["geometry"].(map[string]any)["coordinates"].([]any)
			if lon := num(t, c[0]); math.Abs(lon-(clon+2)) > 1e-9 {
				t.Errorf("longitude answered %g, want %g (−180..180)", lon, clon+2)
			}
			csv := e.get(ds + "/position?coords=" + mp + "&f=csv&parameter-name=heat_flow")
			e.want(csv, 200)
			lines := strings.Split(strings.TrimSpace(string(csv.Body)), "\n")
			if len(lines) != 3 || !strings.HasPrefix(lines[0], "longitude,latitude,heat_flow_mw_m2") {
				t.Errorf("CSV %q", lines)
			}
			old := e.get(ds+"/position?coords="+at(clon, clat), "Accept", MediaCovJSONOld)
			e.want(old, 200)
			if old.Header.Get("Content-Type") != MediaCovJSONOld {
				t.Errorf("Accept %s answered %s", MediaCovJSONOld, old.Header.Get("Content-Type"))
			}
		})

		t.Run("position errors", func(t *testing.T) {
			wantProblem(t, e.get(ds+"/position?coords="+esc("POINT(1)")), 400, CodeInvalidCoords)
			wantProblem(t, e.get(ds+"/position"), 400, CodeInvalidCoords)
			wantProblem(t, e.get(ds+"/position?coords="+esc("POINT(10 95)")), 400, CodeInvalidCoords)
			wantProblem(t, e.get(ds+"/position?coords="+esc("LINESTRING(0 0,1 1)")), 400, CodeInvalidCoords)
			wantProblem(t, e.get(ds+"/position?coords="+at(clon, clat)+"&parameter-name=depth"), 400, CodeUnknownParameter)
			wantProblem(t, e.get(ds+"/position?coords="+at(clon, clat)+"&model=nope"), 400, CodeUnknownModel)
			wantProblem(t, e.get(ds+"/position?coords="+at(clon, clat)+"&sediment=mud"), 400, CodeUnknownSediment)
			wantProblem(t, e.get(ds+"/position?coords="+at(clon, clat)+"&f=png"), 400, CodeUnsupportedFormat)
			wantProblem(t, e.get(ds+"/position?coords="+at(10, 50)), 404, CodeNoData)
			var sb strings.Builder
			sb.WriteString("MULTIPOINT(")
			for i := 0; i <= DefaultLimits.MaxPositions; i++ {
				if i > 0 {
					sb.WriteString(",")
				}
				fmt.Fprintf(&sb, "(%g %g)", clon, clat)
			}
			sb.WriteString(")")
			p := wantProblem(t, e.get(ds+"/position?coords="+esc(sb.String())), 422, CodeLimitExceeded)
			if num(t, p["limit"]) != float64(DefaultLimits.MaxPositions) {
				t.Errorf("limit %v, want %d", p["limit"], DefaultLimits.MaxPositions)
			}
		})

		t.Run("area", func(t *testing.T) {
			poly := esc(fmt.Sprintf("POLYGON((%g %g,%g %g,%g %g,%g %g,%g %g))", clon-2, clat-2, clon+2, clat-2, clon+2, clat+2, clon-2, clat+2, clon-2, clat-2))
			r := e.get(ds + "/area?coords=" + poly + "&parameter-name=residual_depth,seafloor_age&resolution-x=0.2&resolution-y=0.2")
			e.want(r, 200)
			m := r.json(t)
			x := m["domain"].(map[string]any)["axes"].(map[string]any)["x"].(map[string]any)
			if n := num(t, x["num"]); n < 19 || n > 22 {
				t.Errorf("x axis has %v cells for 4° at 0.2°", n)
			}
			for _, f := range []struct{ f, ct, magic string }{
				{"COG", "image/tiff", "II*\x00"}, {"NetCDF", MediaNetCDF, ""}, {"PNG", MediaPNG, "\x89PNG"},
			} {
				rr := e.get(ds + "/area?coords=" + poly + "&parameter-name=residual_depth&f=" + f.f)
				e.want(rr, 200)
				if !strings.HasPrefix(rr.Header.Get("Content-Type"), f.ct) || !bytes.HasPrefix(rr.Body, []byte(f.magic)) {
					t.Errorf("%s: %s, starts %q", f.f, rr.Header.Get("Content-Type"), rr.Body[:min(8, len(rr.Body))])
				}
				if f.f == "NetCDF" && !(bytes.HasPrefix(rr.Body, []byte("CDF")) || bytes.HasPrefix(rr.Body, []byte("\x89HDF"))) {
					t.Errorf("netCDF starts %q", rr.Body[:8])
				}
				if f.f == "PNG" && !strings.Contains(rr.Header.Get("Ridgeflank-Colour-Scale"), "ramp=residual") {
					t.Errorf("PNG colour header %q", rr.Header.Get("Ridgeflank-Colour-Scale"))
				}
				if f.f == "PNG" {
					// PNG tEXt chunk (ISO/IEC 15948:2004 §11.3.4.3): keyword, NUL, text; the
					// decoder checks every chunk's CRC.
					if !bytes.Contains(rr.Body, []byte("tEXtDisclaimer\x00"+Caution)) {
						t.Errorf("PNG lacks the navigation caution in a tEXt chunk")
					}
					if _, err := png.Decode(bytes.NewReader(rr.Body)); err != nil {
						t.Errorf("PNG with caution chunk does not decode: %v", err)
					}
				}
			}
			csv := e.get(ds + "/area?coords=" + poly + "&parameter-name=residual_depth&f=csv&resolution-x=0.5&resolution-y=0.5")
			e.want(csv, 200)
			if !strings.HasPrefix(string(csv.Body), "longitude,latitude,residual_depth_m,") || !strings.Contains(string(csv.Body), "not for navigation") {
				t.Errorf("residual-depth CSV lacks the header row first or the navigation caution")
			}
			wantProblem(t, e.get(ds+"/area?coords="+poly+"&parameter-name=residual_depth,heat_flow&f=COG"), 400, CodeInvalidParameter)
			wantProblem(t, e.get(ds+"/area?coords="+esc("POLYGON((0 0,1 0,1 1,0 0))")), 404, CodeNoData)
			wantProblem(t, e.get(ds+"/area?coords="+esc("POLYGON((0 0,1 0))")), 400, CodeInvalidRegion) // one validity rule (geo.PrepareRegion) for area queries and stored regions
			wantProblem(t, e.get(ds+"/area?coords="+poly+"&resolution-x=-1"), 400, CodeInvalidParameter)
		})

		t.Run("trajectory", func(t *testing.T) {
			line := esc(fmt.Sprintf("LINESTRING(%g %g,%g %g)", clon-3, clat, clon+3, clat))
			r := e.get(ds + "/trajectory?coords=" + line + "&parameter-name=residual_depth&spacing-km=20")
			e.want(r, 200)
			m := r.json(t)
			d := m["ridgeflank:samples"].(map[string]any)["distance_km"].([]any)
			// 6° of longitude at 29.3° S on WGS84 ≈ 583 km (Karney 2013 geodesic; from memory, ± 3 km).
			if last := num(t, d[len(d)-1]); math.Abs(last-583) > 3 {
				t.Errorf("track length %.1f km, want about 583", last)
			}
			body := fmt.Sprintf(`{"type":"LineString","coordinates":[[%g,%g],[%g,%g]]}`, clon-3, clat, clon+3, clat)
			p := e.do("POST", ds+"/trajectory?parameter-name=residual_depth&f=GeoJSON&spacing-km=50", strings.NewReader(body), "Content-Type", MediaGeoJSON)
			e.want(p, 200)
			wantProblem(t, e.do("POST", ds+"/trajectory", strings.NewReader(`{"type":"Point","coordinates":[0,0]}`), "Content-Type", "application/json"), 400, CodeInvalidGeoJSON)
			wantProblem(t, e.get(ds+"/trajectory?coords="+line+"&spacing-km=0.001"), 422, CodeLimitExceeded)
		})

		t.Run("locations", func(t *testing.T) {
			l := e.get(ds + "/locations")
			e.want(l, 200)
			if !strings.Contains(string(l.Body), demobasin.RegionID) {
				t.Errorf("locations lack %s", demobasin.RegionID)
			}
			r := e.get(ds + "/locations/" + demobasin.RegionID + "?parameter-name=residual_depth&resolution-x=0.1&resolution-y=0.1")
			e.want(r, 200)
			st := r.json(t)["ridgeflank:statistics"].(map[string]any)[PResidualDepth].(map[string]any)
			// Over the swell region the mean residual is positive (the swell is
			// a positive Gaussian of 400 m amplitude, demobasin.SwellAmplitudeM).
			if mean := num(t, st["mean_m"]); !(mean > 50 && mean < demobasin.SwellAmplitudeM) {
				t.Errorf("mean residual over the swell %.1f m, want between 50 and %g", mean, demobasin.SwellAmplitudeM)
			}
			hist := st["histogram"].(map[string]any)
			edges := hist["edges_m"].([]any)
			if w := num(t, edges[1]) - num(t, edges[0]); w != 50 || math.Mod(num(t, edges[0]), 50) != 0 {
				t.Errorf("histogram edges %v…: want 50 m bins on multiples of 50", edges[:2])
			}
			total := 0.0
			for _, f := range hist["area_fractions"].([]any) {
				total += num(t, f)
			}
			if math.Abs(total-1) > 1e-9 {
				t.Errorf("histogram area fractions sum to %g, want 1", total)
			}
			// Without parameter-name every parameter comes with statistics whose
			// names carry that parameter's unit (project rule: units in every
			// name; UCUM symbols Ma, m, mW/m2, km as in parameterList). Every
			// answer is also checked against the per-unit OpenAPI schemas.
			all := e.get(ds + "/locations/" + demobasin.RegionID + "?resolution-x=0.2&resolution-y=0.2")
			e.want(all, 200)
			stats := all.json(t)["ridgeflank:statistics"].(map[string]any)
			for _, c := range []struct{ param, suffix string }{
				{PSeafloorAge, "_ma"}, {PObservedDepth, "_m"}, {PSedimentThickness, "_m"}, {PPredictedDepth, "_m"},
				{PHeatFlow, "_mw_m2"}, {PThermalThickness, "_km"}, {PCorrectedDepth, "_m"}, {PResidualDepth, "_m"}, {PDepth600C, "_km"},
			} {
				st, ok := stats[c.param].(map[string]any)
				if !ok {
					t.Errorf("no statistics for %s", c.param)
					continue
				}
				for _, k := range []string{"mean", "std", "min", "max", "median", "p05", "p25", "p75", "p95"} {
					if _, ok := st[k+c.suffix]; !ok {
						t.Errorf("%s statistics lack %s%s: %v", c.param, k, c.suffix, st)
					}
				}
				if _, ok := st["histogram"].(map[string]any)["edges"+c.suffix]; !ok {
					t.Errorf("%s histogram lacks edges%s", c.param, c.suffix)
				}
			}
			// The region as a file: the same values as its CoverageJSON answer (the mean of the
			// file's valid cells equals the unweighted mean of the coverage's values).
			for _, f := range []struct{ f, magic string }{{"COG", "II*\x00"}, {"netcdf", "\x89HDF"}} {
				file := e.get(ds + "/locations/" + demobasin.RegionID + "?parameter-name=residual_depth&resolution-x=0.1&resolution-y=0.1&f=" + f.f)
				e.want(file, 200)
				if !bytes.HasPrefix(file.Body, []byte(f.magic)) && !bytes.HasPrefix(file.Body, []byte("CDF")) {
					t.Errorf("%s answer starts %q", f.f, file.Body[:8])
				}
				if cd := file.Header.Get("Content-Disposition"); !strings.Contains(cd, demobasin.RegionID+"-residual_depth") {
					t.Errorf("%s Content-Disposition %q", f.f, cd)
				}
				path := filepath.Join(t.TempDir(), "region"+map[string]string{"COG": ".tif", "netcdf": ".nc"}[f.f])
				os.WriteFile(path, file.Body, 0o644)
				g, _, err := gdal.Read(path)
				if err != nil {
					t.Fatal(err)
				}
				values := r.json(t)["ranges"].(map[string]any)[PResidualDepth].(map[string]any)["values"].([]any)
				var sumFile, sumCov float64
				var nFile, nCov int
				for _, v := range g.Data {
					if v == v {
						sumFile += float64(v)
						nFile++
					}
				}
				for _, v := range values {
					if v != nil {
						sumCov += num(t, v)
						nCov++
					}
				}
				// float32 storage in both answers: agreement to 1e-3 m (common practice, no source).
				if nFile != nCov || math.Abs(sumFile/float64(nFile)-sumCov/float64(nCov)) > 1e-3 {
					t.Errorf("%s: %d cells with mean %g; the coverage has %d with mean %g", f.f, nFile, sumFile/float64(nFile), nCov, sumCov/float64(nCov))
				}
			}
			wantProblem(t, e.get(ds+"/locations/nope"), 404, CodeNotFound)
		})

		t.Run("models", func(t *testing.T) {
			m := e.get("/api/models").json(t)
			if n := len(m["models"].([]any)); n < 3 {
				t.Errorf("%d models", n)
			}
			e.want(e.get("/api/models/psm"), 200)
			if !strings.Contains(string(e.get("/api/models").Body), `"plate-tdep-mjp05"`) {
				t.Error("GET /api/models does not list the built-in plate-tdep-mjp05")
			}
			e.want(e.get("/api/models/plate-tdep-mjp05/curve?ages=0:200:50"), 200)
			wantProblem(t, e.get("/api/models/nope"), 404, CodeNotFound)
			c := e.get("/api/models/gdh1/curve?ages=10:100:45").json(t)
			ages, depths := c["age_ma"].([]any), c["depth_m"].([]any)
			for i := range ages {
				a := num(t, ages[i])
				if got, want := num(t, depths[i]), gdh1Depth(a); math.Abs(got-want) > 25 {
					t.Errorf("curve depth at %g Ma = %.1f, GDH1 fit %.1f (± 25 m)", a, got, want)
				}
			}
			if h := c["heat_flow_mw_m2"].([]any); len(h) != 3 {
				t.Errorf("heat flow %v", h)
			}
			csv := e.get("/api/models/gdh1/curve?ages=0:10:1&f=csv")
			e.want(csv, 200)
			// A header row and 11 ages, the caution in a column of the first.
			if n := strings.Count(string(csv.Body), "\n"); n != 12 || !strings.HasPrefix(string(csv.Body), "age_ma,") || !strings.Contains(string(csv.Body), "not for navigation") {
				t.Errorf("curve CSV has %d lines, want 12 starting with the header row and carrying the caution", n)
			}
			g := e.get("/api/models/halfspace/geotherm?age=50").json(t)
			temps := g["temperature_c"].([]any)
			// Half-space cooling holds the surface at 0 °C (Turcotte & Schubert,
			// Geodynamics, eq. 4.113 boundary condition; from memory); ± 5 °C is
			// common practice, no source.
			if t0 := num(t, temps[0]); math.Abs(t0) > 5 {
				t.Errorf("surface temperature %.1f °C", t0)
			}
			wantProblem(t, e.get("/api/models/gdh1/curve?ages=0:500:1"), 422, CodeAgeOutOfRange)
			wantProblem(t, e.get("/api/models/gdh1/curve?ages=a:b"), 400, CodeInvalidParameter)
			wantProblem(t, e.get("/api/models/gdh1/curve?ages=0:100000:0.001"), 422, CodeLimitExceeded)
			// A stray comma in parameter-name is refused, not dropped.
			wantProblem(t, e.get(ds+"/position?coords="+at(clon, clat)+"&parameter-name=seafloor_age,"), 400, CodeUnknownParameter)
			// Spans and steps whose count overflows an integer are over the limit, not a panic.
			for _, q := range []string{"ages=0:1e308:1e-308", "ages=0:1:5e-324", "depths=0:1e308:1e-308"} {
				path := "/api/models/gdh1/curve?" + q
				if strings.HasPrefix(q, "depths") {
					path = "/api/models/gdh1/geotherm?ages=50&" + q
				}
				res := e.get(path)
				if res.StatusCode != 422 && res.StatusCode != 400 {
					t.Errorf("%s: status %d, want a 4xx refusal", q, res.StatusCode)
				}
			}
			wantProblem(t, e.get("/api/models/gdh1/geotherm"), 400, CodeInvalidParameter)
			wantProblem(t, e.get("/api/models/gdh1/curve?f=xml"), 400, CodeUnsupportedFormat)

			p, _ := json.Marshal(map[string]any{"id": "thick-plate", "name": "Thick plate", "kind": "plate", "plate_thickness_km": 125,
				"mantle_temperature_c": 1350, "surface_temperature_c": 0, "expansivity_per_k": 3.1e-5, "conductivity_w_m_k": 3.138,
				"heat_capacity_j_kg_k": 1171, "mantle_density_kg_m3": 3330, "water_density_kg_m3": 1000, "ridge_depth_m": 2600, "source": "test"})
			post := func(tok string, body []byte) reply {
				h := []string{"Content-Type", "application/json"}
				if tok != "" {
					h = append(h, "Authorization", "Bearer "+tok)
				}
				return e.do("POST", "/api/models", bytes.NewReader(body), h...)
			}
			wantProblem(t, post("", p), 401, CodeUnauthorized)
			wantProblem(t, post(e.reader, p), 403, CodeForbidden)
			wantProblem(t, post("rft_bogus", p), 401, CodeUnauthorized)
			e.want(post(e.editor, p), 201)
			wantProblem(t, post(e.editor, p), 409, CodeConflict)
			bad := bytes.Replace(p, []byte(`"plate_thickness_km":125`), []byte(`"plate_thickness_km":5`), 1)
			bad = bytes.Replace(bad, []byte("thick-plate"), []byte("thin-plate"), 1)
			wantProblem(t, post(e.editor, bad), 422, CodeInvalidModelParams)
			e.want(e.get(ds+"/position?coords="+at(clon, clat)+"&model=thick-plate&parameter-name=predicted_depth"), 200)
		})

		t.Run("regions", func(t *testing.T) {
			feat := fmt.Sprintf(`{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[%g,%g],[%g,%g],[%g,%g],[%g,%g]]]},"properties":{"name":"test box"}}`,
				clon, clat, clon+1, clat, clon+1, clat+1, clon, clat)
			auth := []string{"Authorization", "Bearer " + e.editor, "Content-Type", MediaGeoJSON}
			wantProblem(t, e.do("POST", "/api/regions", strings.NewReader(feat), "Content-Type", MediaGeoJSON), 401, CodeUnauthorized)
			c := e.do("POST", "/api/regions", strings.NewReader(feat), auth...)
			e.want(c, 201)
			id := c.json(t)["id"].(string)
			if c.Header.Get("ETag") != `"1"` {
				t.Errorf("ETag %q", c.Header.Get("ETag"))
			}
			e.want(e.get("/api/regions/"+id), 200)
			e.want(e.get("/api/regions?bbox=-150,-35,-140,-25"), 200)
			upd := strings.Replace(feat, "test box", "renamed", 1)
			wantProblem(t, e.do("PUT", "/api/regions/"+id, strings.NewReader(upd), auth...), 428, CodePreconditionNeeded)
			u := e.do("PUT", "/api/regions/"+id, strings.NewReader(upd), append(auth, "If-Match", `"1"`)...)
			e.want(u, 200)
			if u.Header.Get("ETag") != `"2"` {
				t.Errorf("ETag after update %q", u.Header.Get("ETag"))
			}
			wantProblem(t, e.do("PUT", "/api/regions/"+id, strings.NewReader(upd), append(auth, "If-Match", `"1"`)...), 412, CodePreconditionFailed)
			// RFC 9110 §13.1.1: a list of entity tags matches when it holds the current one;
			// "*" matches any current version, so concurrent writers under "*" all succeed.
			e.want(e.do("PUT", "/api/regions/"+id, strings.NewReader(upd), append(auth, "If-Match", `"1", W/"2"`)...), 200)
			wantProblem(t, e.do("PUT", "/api/regions/"+id, strings.NewReader(upd), append(auth, "If-Match", `"1", "2"`)...), 412, CodePreconditionFailed)
			var wg sync.WaitGroup
			codes := make([]int, 8)
			for k := range codes {
				wg.Add(1)
				go func() {
					defer wg.Done()
					codes[k] = e.do("PUT", "/api/regions/"+id, strings.NewReader(upd), append(auth, "If-Match", "*")...).StatusCode
				}()
			}
			wg.Wait()
			for k, c := range codes {
				if c != 200 {
					t.Errorf("concurrent update %d under If-Match *: status %d, want 200", k, c)
				}
			}
			if v := e.get("/api/regions/" + id).Header.Get("ETag"); v != `"11"` {
				t.Errorf("ETag after 3 + 8 updates: %s, want \"11\"", v)
			}
			wantProblem(t, e.do("POST", "/api/regions", strings.NewReader(`{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[0,0],[1,0]]]},"properties":{"name":"x"}}`), auth...), 400, CodeInvalidRegion)
			e.want(e.do("DELETE", "/api/regions/"+id, nil, auth...), 204)
			wantProblem(t, e.get("/api/regions/"+id), 404, CodeNotFound)
		})

		t.Run("grids, upload job, datasets", func(t *testing.T) {
			l := e.get("/api/grids").json(t)
			grids := l["grids"].([]any)
			if len(grids) < 3 {
				t.Fatalf("%d grids", len(grids))
			}
			gid := grids[0].(map[string]any)["id"].(string)
			e.want(e.get("/api/grids/"+gid), 200)
			wantProblem(t, e.do("DELETE", "/api/grids/"+gid, nil, "Authorization", "Bearer "+e.editor), 409, CodeConflict)

			// Upload a small age grid (a COG written by geo/gdal).
			g := geo.NewGrid(20, 10, -149.975, -10.025, 0.05, 0.05, geo.CellCentre)
			for i := range g.Data {
				g.Data[i] = float32(10 + i%20)
			}
			path := filepath.Join(t.TempDir(), "age.tif")
			if err := gdal.WriteCOG(path, g, gdal.Meta{Units: "Ma", Name: "age"}); err != nil {
				t.Fatal(err)
			}
			raw, _ := os.ReadFile(path)
			var body bytes.Buffer
			mw := multipart.NewWriter(&body)
			mw.WriteField("kind", "age")
			mw.WriteField("id", "uploaded-age")
			mw.WriteField("name", "uploaded test age grid")
			fw, _ := mw.CreateFormFile("file", "age.tif")
			fw.Write(raw)
			mw.Close()
			wantProblem(t, e.do("POST", "/api/grids", bytes.NewReader(body.Bytes()), "Content-Type", mw.FormDataContentType()), 401, CodeUnauthorized)
			up := e.do("POST", "/api/grids", bytes.NewReader(body.Bytes()), "Content-Type", mw.FormDataContentType(), "Authorization", "Bearer "+e.editor)
			e.want(up, 202)
			jobPath := jobOf(up)
			job := e.waitJob(jobPath)
			if job["state"] != "succeeded" || num(t, job["progress"]) != 1 {
				t.Fatalf("import job %v", job)
			}
			e.want(e.get("/api/grids/uploaded-age"), 200)
			wantProblem(t, e.get("/api/jobs/999999"), 404, CodeNotFound)

			// A file GDAL cannot read fails its job for good, with the reason.
			var bad bytes.Buffer
			bw := multipart.NewWriter(&bad)
			bw.WriteField("kind", "depth")
			bf, _ := bw.CreateFormFile("file", "notes.txt")
			bf.Write([]byte("this is not a grid\n"))
			bw.Close()
			up = e.do("POST", "/api/grids", &bad, "Content-Type", bw.FormDataContentType(), "Authorization", "Bearer "+e.editor)
			e.want(up, 202)
			jobPath = jobOf(up)
			job = e.waitJob(jobPath)
			if job["state"] != "failed" || !strings.Contains(fmt.Sprint(job["errors"]), "not a readable grid") {
				t.Errorf("bad upload job %v", job)
			}
			wantProblem(t, e.do("POST", "/api/grids", strings.NewReader("x"), "Content-Type", "text/plain", "Authorization", "Bearer "+e.editor), 415, CodeUnsupportedMedia)
			// A body cut off inside the file part (no closing boundary) is the
			// client's fault: 400, not 500 (RFC 9110 §15.5.1).
			cut := body.Bytes()[:body.Len()/2]
			wantProblem(t, e.do("POST", "/api/grids", bytes.NewReader(cut), "Content-Type", mw.FormDataContentType(), "Authorization", "Bearer "+e.editor), 400, CodeBadRequest)

			dsBody := `{"id":"uploaded","name":"Uploaded","age_grid_id":"uploaded-age"}`
			cr := e.do("POST", "/api/datasets", strings.NewReader(dsBody), "Content-Type", "application/json", "Authorization", "Bearer "+e.editor)
			e.want(cr, 201)
			e.want(e.get("/api/datasets"), 200)
			e.want(e.get("/api/datasets/uploaded"), 200)
			pos := e.get("/api/collections/uploaded/position?coords=" + at(-149.5, -10.2) + "&parameter-name=seafloor_age")
			e.want(pos, 200)
			if v := covValue(t, pos.json(t), PSeafloorAge, 0); !(v >= 10 && v <= 29) {
				t.Errorf("uploaded age sampled %g, want within the uploaded 10..29", v)
			}
			wantProblem(t, e.do("POST", "/api/datasets", strings.NewReader(`{"age_grid_id":"nope"}`), "Content-Type", "application/json", "Authorization", "Bearer "+e.editor), 422, CodeInvalidParameter)
			e.want(e.do("DELETE", "/api/datasets/uploaded", nil, "Authorization", "Bearer "+e.editor), 204)
			e.want(e.do("DELETE", "/api/grids/uploaded-age", nil, "Authorization", "Bearer "+e.editor), 204)
		})

		t.Run("tiles", func(t *testing.T) {
			// Tile containing the swell centre at zoom 6.
			z := 6
			n := float64(int(1) << z)
			x := int((clon + 180) / 360 * n)
			latR := clat * math.Pi / 180
			y := int((1 - math.Log(math.Tan(latR)+1/math.Cos(latR))/math.Pi) / 2 * n)
			p := fmt.Sprintf("/tiles/%s/residual_depth/%d/%d/%d.png", e.dataset, z, x, y)
			r := e.get(p)
			e.want(r, 200)
			img, err := png.Decode(bytes.NewReader(r.Body))
			if err != nil {
				t.Fatal(err)
			}
			if b := img.Bounds(); b.Dx() != TileSize || b.Dy() != TileSize {
				t.Errorf("tile %v", b)
			}
			// The pixel over the swell centre is on the "shallower than the
			// model" (warm) side of the diverging ramp: residual ≈ +400 m
			// there (demobasin.SwellAmplitudeM). Mercator pixel position as in
			// the XYZ tiling scheme.
			px := int(((clon+180)/360*n - float64(x)) * TileSize)
			py := int(((1-math.Log(math.Tan(latR)+1/math.Cos(latR))/math.Pi)/2*n - float64(y)) * TileSize)
			cr, _, cb, ca := img.At(px, py).RGBA()
			if ca == 0 || cr <= cb {
				t.Errorf("swell-centre pixel (%d,%d) colour r=%d b=%d a=%d: want the warm (positive) side", px, py, cr>>8, cb>>8, ca>>8)
			}
			tag := r.Header.Get("ETag")
			if tag == "" || !strings.Contains(r.Header.Get("Cache-Control"), "max-age") {
				t.Errorf("ETag %q, Cache-Control %q", tag, r.Header.Get("Cache-Control"))
			}
			e.want(e.get(p, "If-None-Match", tag), 304)
			if r2 := e.get(p + "?model=psm"); r2.Header.Get("ETag") == tag {
				t.Errorf("changing the model kept the ETag")
			}
			e.want(e.get(fmt.Sprintf("/tiles/%s/seafloor_age/0/0/0.png", e.dataset)), 200)
			e.want(e.get(fmt.Sprintf("/tiles/%s/residual_depth/3/0/0.png", e.dataset)), 200) // outside: transparent
			wantProblem(t, e.get(fmt.Sprintf("/tiles/%s/residual_depth/30/0/0.png", e.dataset)), 422, CodeLimitExceeded)
			wantProblem(t, e.get(fmt.Sprintf("/tiles/%s/nope/3/0/0.png", e.dataset)), 400, CodeUnknownParameter)
			wantProblem(t, e.get(fmt.Sprintf("/tiles/%s/heat_flow/2/9/0.png", e.dataset)), 404, CodeNotFound)
		})

		t.Run("operations", func(t *testing.T) {
			e.want(e.get("/healthz"), 200)
			rd := e.get("/readyz")
			e.want(rd, 200)
			if !strings.Contains(string(rd.Body), e.backend) {
				t.Errorf("readyz %s does not name the backend", rd.Body)
			}
			e.want(e.get("/api/colour-scales"), 200)
			w := e.get("/api/whoami", "Authorization", "Bearer "+e.editor).json(t)
			if w["role"] != "editor" || w["can_write"] != true {
				t.Errorf("whoami %v", w)
			}
			e.want(e.get("/api/problems"), 200)
			e.want(e.get("/api/problems/invalid-coords"), 200)
			wantProblem(t, e.get("/api/nothing-here"), 404, CodeNotFound)
			wantProblem(t, e.do("PATCH", "/api/models", nil), 405, CodeMethodNotAllowed)
			wantProblem(t, e.get("/api/models", "Authorization", "Basic abc"), 401, CodeUnauthorized)
			pg := e.get("/")
			e.want(pg, 200)
			m := e.get("/metrics")
			e.want(m, 200)
			if !strings.Contains(string(m.Body), `ridgeflank_http_requests_total{code="200",method="GET",route="/api/collections/{datasetId}/position"}`) {
				t.Errorf("metrics lack the position route counter")
			}
		})
	})
}

// Reads need a token when configured; a bad token is refused on reads too.
func TestReadAuth(t *testing.T) {
	forEachStore(t, Config{ReadAuth: true}, func(t *testing.T, e *env) {
		wantProblem(t, e.get("/api/collections"), 401, CodeUnauthorized)
		e.want(e.get("/api/collections", "Authorization", "Bearer "+e.reader), 200)
		e.want(e.get("/tiles/"+e.dataset+"/seafloor_age/0/0/0.png?access_token="+e.reader), 200)
		wantProblem(t, e.get("/tiles/"+e.dataset+"/seafloor_age/0/0/0.png?access_token=rft_wrong"), 401, CodeUnauthorized)
		e.want(e.get("/api/openapi.json"), 200)
		wantProblem(t, e.get("/metrics"), 401, CodeUnauthorized)
		e.want(e.get("/metrics", "Authorization", "Bearer "+e.reader), 200)
	})
}

// Every answer refuses content sniffing and framing; the page and its assets carry a
// Content-Security-Policy that allows this origin only (OWASP secure headers, common practice).
func TestSecurityHeaders(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	for _, p := range []string{"/", "/app-R4GYCEPN.js", "/api/collections", "/healthz"} {
		r := e.get(p)
		if r.Header.Get("X-Content-Type-Options") != "nosniff" || r.Header.Get("X-Frame-Options") != "DENY" {
			t.Errorf("%s: X-Content-Type-Options %q, X-Frame-Options %q", p, r.Header.Get("X-Content-Type-Options"), r.Header.Get("X-Frame-Options"))
		}
		csp := r.Header.Get("Content-Security-Policy")
		page := !strings.HasPrefix(p, "/api/")
		if page && (!strings.Contains(csp, "default-src 'self'") || !strings.Contains(csp, "frame-ancestors 'none'")) {
			t.Errorf("%s: Content-Security-Policy %q", p, csp)
		}
	}
}

// A COG answer over Limits.SyncExportCells becomes an export job whose file
// is then downloaded.
func TestExportJob(t *testing.T) {
	e := newEnvLimits(t, "sqlite", Config{}, Limits{SyncExportCells: 100})
	poly := esc("POLYGON((-145 -31,-142 -31,-142 -28,-145 -28,-145 -31))")
	r := e.get("/api/collections/" + e.dataset + "/area?coords=" + poly + "&parameter-name=residual_depth&f=COG")
	e.want(r, 202)
	jobPath := jobOf(r)
	// Before the job has succeeded its file is a conflict; a quick worker may already have
	// finished it, and then the file is there.
	if early := e.get(jobPath + "/result"); early.StatusCode != 200 {
		wantProblem(t, early, 409, CodeConflict)
	} else if st := e.get(jobPath).json(t)["state"]; st != "succeeded" {
		t.Fatalf("the file was served while the job was %v", st)
	}
	job := e.waitJob(jobPath)
	if job["state"] != "succeeded" {
		t.Fatalf("export job %v", job)
	}
	f := e.get(jobPath + "/result")
	e.want(f, 200)
	if !bytes.HasPrefix(f.Body, []byte("II*\x00")) {
		t.Errorf("export starts %q, want a little-endian TIFF", f.Body[:8])
	}
	path := filepath.Join(t.TempDir(), "x.tif")
	os.WriteFile(path, f.Body, 0o644)
	g, meta, err := gdal.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	if g.NX < 50 || meta.Metadata["ridgeflank_model"] != "gdh1" {
		t.Errorf("exported grid %d×%d, metadata %v", g.NX, g.NY, meta.Metadata)
	}
}

// A netCDF answer over max_area_cells (lowered to 500) becomes an export job that writes the
// file band by band; the file holds the values a server with the default limits answers at
// once, and an answer over max_export_cells is refused at once with that limit's name.
func TestLargeNetCDFExportJob(t *testing.T) {
	e := newEnvLimits(t, "sqlite", Config{}, Limits{SyncExportCells: 100, Limits: evaluate.Limits{MaxAreaCells: 500, MaxExportCells: 50_000}})
	poly := esc("POLYGON((-145 -31,-142 -31,-142 -28,-145 -28,-145 -31))")
	path := "/api/collections/" + e.dataset + "/area?coords=" + poly + "&parameter-name=residual_depth&f=NetCDF"
	r := e.get(path)
	e.want(r, 202)
	job := e.waitJob(jobOf(r))
	if job["state"] != "succeeded" {
		t.Fatalf("export job %v", job)
	}
	f := e.get(jobOf(r) + "/result")
	e.want(f, 200)
	ref := httptest.NewServer(New(Deps{Store: e.st, Version: "test", Config: Config{RateLimitPerMinute: -1}}))
	defer ref.Close()
	re := *e
	re.ts = ref
	w := re.get(path)
	re.want(w, 200)
	dir := t.TempDir()
	read := func(name string, body []byte) *geo.Grid {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, body, 0o644); err != nil {
			t.Fatal(err)
		}
		g, _, err := gdal.Read(p)
		if err != nil {
			t.Fatal(err)
		}
		return g
	}
	got, want := read("job.nc", f.Body), read("now.nc", w.Body)
	if got.NX != want.NX || got.NY != want.NY || got.NX*got.NY <= 500 {
		t.Fatalf("job file %d×%d, at once %d×%d (must exceed 500 cells)", got.NX, got.NY, want.NX, want.NY)
	}
	valid := 0
	for i := range want.Data {
		a, b := got.Data[i], want.Data[i]
		// Companion grids are interpolated relative to each band's window: equal to float32
		// rounding (2⁻²⁰ relative), as evaluate's streamed-export test states.
		if (a != a) != (b != b) || math.Abs(float64(a-b)) > math.Abs(float64(b))/(1<<20) {
			t.Fatalf("cell %d: job %v, at once %v", i, a, b)
		}
		if b == b {
			valid++
		}
	}
	if valid == 0 {
		t.Fatal("no valid cell")
	}
	big := esc("POLYGON((-150 -40,-130 -40,-130 -20,-150 -20,-150 -40))")
	p := wantProblem(t, e.get("/api/collections/"+e.dataset+"/area?coords="+big+"&parameter-name=residual_depth&f=NetCDF"), 422, CodeLimitExceeded)
	if p["limit_name"] != "max_export_cells" {
		t.Errorf("limit name %v", p["limit_name"])
	}
}

func TestBodyAndRateLimits(t *testing.T) {
	e := newEnv(t, "sqlite", Config{RateLimitPerMinute: 3})
	small := httptest.NewServer(New(Deps{Store: e.st, Limits: Limits{MaxBodyBytes: 100, Limits: evaluate.Limits{MaxAreaCells: 50}}, Config: Config{RateLimitPerMinute: -1}}))
	defer small.Close()
	ds := "/api/collections/" + e.dataset
	se := *e
	se.ts = small
	big := fmt.Sprintf(`{"type":"LineString","coordinates":[%s[0,0]]}`, strings.Repeat("[0,0],", 50))
	p := wantProblem(t, se.do("POST", ds+"/trajectory", strings.NewReader(big), "Content-Type", "application/json"), 413, CodeBodyTooLarge)
	if num(t, p["limit"]) != 100 {
		t.Errorf("limit %v", p["limit"])
	}
	poly := esc("POLYGON((-145 -31,-142 -31,-142 -28,-145 -28,-145 -31))")
	p = wantProblem(t, se.get(ds+"/area?coords="+poly), 422, CodeLimitExceeded)
	if p["limit_name"] != "max_area_cells" {
		t.Errorf("limit name %v", p["limit_name"])
	}
	for i := 0; i < 3; i++ {
		e.want(e.get("/api/conformance"), 200)
	}
	wantProblem(t, e.get("/api/conformance"), 429, CodeRateLimited)
}

func TestCORS(t *testing.T) {
	h := New(Deps{Config: Config{CORSOrigins: []string{"https://maps.example"}}})
	req := httptest.NewRequest("OPTIONS", "/api/models", nil)
	req.Header.Set("Origin", "https://maps.example")
	req.Header.Set("Access-Control-Request-Method", "GET")
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, req)
	if got := rec.Header().Get("Access-Control-Allow-Origin"); got != "https://maps.example" {
		t.Errorf("allowed origin %q", got)
	}
	req.Header.Set("Origin", "https://elsewhere.example")
	rec = httptest.NewRecorder()
	h.ServeHTTP(rec, req)
	if got := rec.Header().Get("Access-Control-Allow-Origin"); got != "" {
		t.Errorf("foreign origin allowed: %q", got)
	}
}

// A panic becomes a 500 problem; a deadline reaching the handler a 503.
func TestRecoveryAndTimeout(t *testing.T) {
	s := &server{log: nopLogger(), limits: DefaultLimits}
	h := s.recoverer(http.HandlerFunc(func(http.ResponseWriter, *http.Request) { panic("boom") }))
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest("GET", "/x", nil))
	if rec.Code != 500 || !strings.Contains(rec.Body.String(), `"code":"internal"`) || strings.Contains(rec.Body.String(), "boom") {
		t.Errorf("panic answered %d %s", rec.Code, rec.Body)
	}
	slow := s.timeout(time.Millisecond, "")(s.h(func(w http.ResponseWriter, r *http.Request) error {
		<-r.Context().Done()
		return r.Context().Err()
	}))
	rec = httptest.NewRecorder()
	slow.ServeHTTP(rec, httptest.NewRequest("GET", "/x", nil))
	if rec.Code != 503 || !strings.Contains(rec.Body.String(), `"code":"timeout"`) {
		t.Errorf("timeout answered %d %s", rec.Code, rec.Body)
	}
}

// Every chi route is in the OpenAPI document, and every documented path
// is routed.
func TestEveryRouteDocumented(t *testing.T) {
	var doc struct {
		Paths map[string]map[string]any `json:"paths"`
	}
	if err := json.Unmarshal(openAPIDocument, &doc); err != nil {
		t.Fatal(err)
	}
	h := New(Deps{Assets: testAssets()})
	routed := map[string]bool{}
	err := chi.Walk(h.(chi.Routes), func(method, route string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		p := strings.TrimSuffix(route, "/")
		if p == "" {
			p = "/"
		}
		if p == "/*" {
			p = "/{asset}"
			routed["GET /"] = true
		}
		routed[method+" "+p] = true
		ops, ok := doc.Paths[p]
		if !ok {
			t.Errorf("route %s %s is not in the OpenAPI document", method, route)
			return nil
		}
		if _, ok := ops[strings.ToLower(method)]; !ok {
			t.Errorf("route %s %s: method not documented", method, route)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	var missing []string
	for p, ops := range doc.Paths {
		for m := range ops {
			if !routed[strings.ToUpper(m)+" "+p] {
				missing = append(missing, strings.ToUpper(m)+" "+p)
			}
		}
	}
	sort.Strings(missing)
	if len(missing) > 0 {
		t.Errorf("documented but not routed: %v", missing)
	}
}

// The document itself is valid OpenAPI 3.1 (libopenapi-validator checks it
// against the OpenAPI 3.1 JSON schema).
func TestOpenAPIDocumentValid(t *testing.T) {
	doc, err := libopenapi.NewDocument(openAPIDocument)
	if err != nil {
		t.Fatal(err)
	}
	if v := doc.GetVersion(); v != "3.1.0" {
		t.Errorf("OpenAPI version %s", v)
	}
	v, errs := validator.NewValidator(doc)
	if len(errs) > 0 {
		t.Fatal(errs)
	}
	if ok, verrs := v.ValidateDocument(); !ok {
		for _, e := range verrs {
			t.Errorf("%s: %s", e.Message, e.Reason)
		}
	}
}

// The Problem schema lists exactly the catalogued problem types.
func TestProblemTypesListedInOpenAPI(t *testing.T) {
	var doc struct {
		Components struct {
			Schemas map[string]struct {
				Properties map[string]struct {
					Enum []string `json:"enum"`
				} `json:"properties"`
			} `json:"schemas"`
		} `json:"components"`
	}
	if err := json.Unmarshal(openAPIDocument, &doc); err != nil {
		t.Fatal(err)
	}
	listed := doc.Components.Schemas["Problem"].Properties["type"].Enum
	var want []string
	for _, k := range problemCatalogue() {
		want = append(want, k.Type)
	}
	sort.Strings(listed)
	if fmt.Sprint(listed) != fmt.Sprint(want) {
		t.Errorf("OpenAPI problem types\n%v\ncatalogue\n%v", listed, want)
	}
}

// Without a store only the age-only endpoints answer; the rest say 503.
func TestWithoutStore(t *testing.T) {
	h := New(Deps{})
	head := httptest.NewRecorder()
	h.ServeHTTP(head, httptest.NewRequest("HEAD", "/api/conformance", nil))
	if head.Code != 200 {
		t.Errorf("HEAD /api/conformance: %d", head.Code)
	}
	for path, want := range map[string]int{"/api/models/psm": 200, "/api/conformance": 200, "/api/collections": 503, "/tiles/x/residual_depth/0/0/0.png": 503} {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest("GET", path, nil))
		if rec.Code != want {
			t.Errorf("%s: %d, want %d: %s", path, rec.Code, want, rec.Body)
		}
	}
}

// The request and response checks used by every API test do reject what
// the document does not allow (so their silence means something).
func TestOpenAPIChecksBite(t *testing.T) {
	v := oaValidator(t)
	bad, _ := http.NewRequest("GET", "http://x/api/models/gdh1/curve?f=xml", nil)
	if ok, _ := v.ValidateHttpRequest(bad); ok {
		t.Error("f=xml passed request validation")
	}
	rec := httptest.NewRecorder()
	rec.Header().Set("Content-Type", "application/json")
	rec.WriteHeader(200)
	rec.WriteString(`{"status": 42}`)
	resp := rec.Result()
	req, _ := http.NewRequest("GET", "http://x/healthz", nil)
	resp.Request = req
	if ok, _ := v.ValidateHttpResponse(req, resp); ok {
		t.Error("a health answer with a numeric status passed response validation")
	}
	// Statistics without the unit in their names break the Coverage schema.
	rec = httptest.NewRecorder()
	rec.Header().Set("Content-Type", MediaCovJSON)
	rec.WriteHeader(200)
	rec.WriteString(`{"type":"Coverage","domain":{},"parameters":{},"ranges":{},"ridgeflank:statistics":{"residual_depth":
		{"count":1,"no_data":0,"weight_sum":1,"mean":1,"std":0,"min":1,"max":1,"median":1,"p05":1,"p25":1,"p75":1,"p95":1}}}`)
	resp = rec.Result()
	req, _ = http.NewRequest("GET", "http://x/api/collections/d/locations/r", nil)
	resp.Request = req
	if ok, _ := v.ValidateHttpResponse(req, resp); ok {
		t.Error("statistics named mean, p05… (no unit) passed response validation")
	}
	// A Grid coverage without its y axis breaks CoverageJSON 1.0 (§ Grid domain).
	badCov := `{"type":"Coverage","domain":{"type":"Domain","domainType":"Grid","axes":{"x":{"values":[1]}},
		"referencing":[]},"parameters":{},"ranges":{}}`
	inst, _ := jsonschema.UnmarshalJSON(strings.NewReader(badCov))
	if covSchema(t).Validate(inst) == nil {
		t.Error("a Grid domain without y passed the CoverageJSON schema")
	}
}

// A body that announces a million bytes and trickles them is cut off with a 408 once it falls
// behind the minimum pace, and one that stalls after a few bytes once it has been idle; a body
// cut short is a 400. None is a server error.
func TestSlowBodies(t *testing.T) {
	e := newEnvLimits(t, "sqlite", Config{}, Limits{BodyIdleTimeout: 300 * time.Millisecond, BodyMinBytesPerSecond: 1 << 20})
	addr := strings.TrimPrefix(e.ts.URL, "http://")
	send := func(t *testing.T, head string, trickle func(c net.Conn)) string {
		c, err := net.Dial("tcp", addr)
		if err != nil {
			t.Fatal(err)
		}
		defer c.Close()
		if _, err := c.Write([]byte(head)); err != nil {
			t.Fatal(err)
		}
		done := make(chan struct{})
		go func() { defer close(done); trickle(c) }()
		_ = c.SetReadDeadline(time.Now().Add(10 * time.Second))
		line, err := bufio.NewReader(c).ReadString('\n')
		if err != nil {
			t.Fatalf("no answer within 10 s: %v", err)
		}
		<-done
		return strings.TrimSpace(line)
	}
	path := "/api/collections/" + e.dataset + "/trajectory"
	head := "POST " + path + " HTTP/1.1\r\nHost: x\r\nContent-Type: text/csv\r\nContent-Length: 1000000\r\n\r\n"
	t.Run("trickle", func(t *testing.T) {
		stop := time.Now().Add(5 * time.Second)
		got := send(t, head, func(c net.Conn) {
			for time.Now().Before(stop) {
				if _, err := c.Write([]byte("1")); err != nil {
					return
				}
				time.Sleep(100 * time.Millisecond)
			}
		})
		if !strings.Contains(got, " 408 ") {
			t.Errorf("trickling body: %q, want 408", got)
		}
	})
	t.Run("stall", func(t *testing.T) {
		got := send(t, head, func(c net.Conn) { _, _ = c.Write([]byte("lon,lat\n")) })
		if !strings.Contains(got, " 408 ") {
			t.Errorf("stalled body: %q, want 408", got)
		}
	})
	t.Run("cut short", func(t *testing.T) {
		got := send(t, head, func(c net.Conn) {
			_, _ = c.Write([]byte("lon,lat\n"))
			_ = c.(*net.TCPConn).CloseWrite()
		})
		if !strings.Contains(got, " 400 ") {
			t.Errorf("body cut short: %q, want 400", got)
		}
	})
}

// Without a configured public URL, links are absolute only for a trusted Host (loopback or
// Config.TrustedHosts); a forged Host gets root-relative links, never its own address.
func TestLinksTrustOnlyKnownHosts(t *testing.T) {
	e := newEnv(t, "sqlite", Config{TrustedHosts: []string{"maps.example.org"}})
	for _, c := range []struct{ host, want string }{
		{"evil.example", `"href":"/api`},
		{"maps.example.org:8080", `"href":"http://maps.example.org:8080/api`},
		{"127.0.0.1:9", `"href":"http://127.0.0.1:9/api`},
		{"localhost", `"href":"http://localhost/api`},
		{"[::1]:80", `"href":"http://[::1]:80/api`},
	} {
		req, _ := http.NewRequest("GET", e.ts.URL+"/api/", nil)
		req.Host = c.host
		res, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(res.Body)
		res.Body.Close()
		if !strings.Contains(string(body), c.want) || (c.host == "evil.example" && strings.Contains(string(body), "evil.example")) {
			t.Errorf("Host %s: links %s…, want %s", c.host, trunc(body), c.want)
		}
	}
}
