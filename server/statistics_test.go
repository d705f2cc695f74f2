package server

import (
	"encoding/json"
	"math"
	"net/http/httptest"
	"net/url"
	"reflect"
	"strings"
	"testing"

	"ridgeflank/evaluate"
)

// Statistics over a drawn polygon need no token and no stored region, agree with the
// statistics the locations query gives for the same region, and carry the percentile error
// bound; a polygon reading more cells than the limit is refused with the limit's name.
func TestStatisticsQueries(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		installGlobe(t, e)
		ds := "/api/collections/globe"
		wkt := "POLYGON((-30 -40,30 -40,30 40,-30 40,-30 -40))"
		m := e.get(ds + "/statistics?coords=" + url.QueryEscape(wkt) + "&parameter-name=seafloor_age").json(t)
		st := m["statistics"].(map[string]any)["seafloor_age"].(map[string]any)
		// Ages are |latitude| on 1° cells (installGlobe): cells centred 39.5S..39.5N, 60 columns;
		// the cos-latitude-weighted mean of |φ| over ±40° is ∫φcosφ/∫cosφ (worked by hand:
		// (40°·sin40° + cos40° − 1)/sin40° in radians → 18.5°), within 0.1 for the 1° cells.
		if got := num(t, st["count"]); got != 80*60 {
			t.Errorf("count %v, want 4800", got)
		}
		phi := 40 * math.Pi / 180
		want := (phi*math.Sin(phi) + math.Cos(phi) - 1) / math.Sin(phi) * 180 / math.Pi
		if got := num(t, st["mean_ma"]); math.Abs(got-want) > 0.1 {
			t.Errorf("mean %g Ma, want %g", got, want)
		}
		if b := num(t, st["percentile_error_bound_ma"]); b < 0 || b > 39/65536.0 {
			t.Errorf("percentile error bound %g", b)
		}
		// Weighted median of |φ| with weight cos φ over ±40°: sin x = sin(40°)/2, x = 18.75°
		// (worked by hand); the 1° cells hold 18.5 and 19.5.
		if med := num(t, st["median_ma"]); math.Abs(med-18.75) > 1.0 {
			t.Errorf("median %g Ma, want about 18.75", med)
		}
		wantProblem(t, e.get(ds+"/statistics?parameter-name=seafloor_age"), 400, CodeInvalidCoords)
	})
}

// A statistics question reading more cells than Limits.MaxStatisticsCells (lowered here to
// 1000) is answered 202 with a job link, over a drawn polygon and over a stored region; the
// job reports progress, and its result is the same statistics JSON a server with the default
// limit answers at once for the same question. Over Limits.MaxStatisticsJobCells it is refused
// with that limit's name; a server without a job queue refuses it with max_statistics_cells.
func TestStatisticsJob(t *testing.T) {
	e := newEnvLimits(t, "sqlite", Config{}, Limits{Limits: evaluate.Limits{MaxStatisticsCells: 1000}})
	installGlobe(t, e)
	region := `{"type":"Feature","id":"mid","geometry":{"type":"Polygon","coordinates":[[[-30,-40],[30,-40],[30,40],[-30,40],[-30,-40]]]},"properties":{"name":"mid"}}`
	e.want(e.do("POST", "/api/regions", strings.NewReader(region), "Authorization", "Bearer "+e.editor, "Content-Type", MediaGeoJSON), 201)
	// The reference: the same store served with the default limits and no job queue.
	ref := httptest.NewServer(New(Deps{Store: e.st, Version: "test", Config: Config{RateLimitPerMinute: -1}}))
	defer ref.Close()
	re := *e
	re.ts = ref
	ds := "/api/collections/globe"
	wkt := url.QueryEscape("POLYGON((-30 -40,30 -40,30 40,-30 40,-30 -40))")
	for _, path := range []string{
		ds + "/statistics?coords=" + wkt + "&parameter-name=seafloor_age",
		ds + "/locations/mid/statistics?parameter-name=seafloor_age",
	} {
		t.Run(path[len(ds):min(len(path), len(ds)+20)], func(t *testing.T) {
			r := e.get(path)
			e.want(r, 202)
			jobPath := jobOf(r)
			if k := r.json(t)["kind"]; k != "statistics" {
				t.Fatalf("job kind %v", k)
			}
			job := e.waitJob(jobPath)
			if job["state"] != "succeeded" || num(t, job["progress"]) != 1 {
				t.Fatalf("statistics job %v", job)
			}
			res := e.get(jobPath + "/result")
			e.want(res, 200)
			got := res.json(t)
			want := re.get(path)
			re.want(want, 200)
			w := want.json(t)
			for _, k := range []string{"statistics", "cells", "dataset", "region", "resolution_x_deg", "percentile_method", "ridgeflank:caution"} {
				if !reflect.DeepEqual(got[k], w[k]) {
					t.Errorf("%s: job %v, at once %v", k, got[k], w[k])
				}
			}
			// 80 rows × 60 columns of 1° cells (installGlobe).
			if c := num(t, got["cells"]); c != 4800 {
				t.Errorf("cells %v, want 4800", c)
			}
			if !reflect.DeepEqual(job["result"], got) {
				t.Errorf("the job's document and its result differ")
			}
		})
	}
	t.Run("over the job limit", func(t *testing.T) {
		tiny := newEnvLimits(t, "sqlite", Config{}, Limits{Limits: evaluate.Limits{MaxStatisticsCells: 100, MaxStatisticsJobCells: 1000}})
		installGlobe(t, tiny)
		p := wantProblem(t, tiny.get(ds+"/statistics?coords="+wkt+"&parameter-name=seafloor_age"), 422, CodeLimitExceeded)
		if p["limit_name"] != "max_statistics_job_cells" {
			t.Errorf("limit name %v", p["limit_name"])
		}
	})
	t.Run("no job queue", func(t *testing.T) {
		nq := httptest.NewServer(New(Deps{Store: e.st, Limits: Limits{Limits: evaluate.Limits{MaxStatisticsCells: 1000}}, Config: Config{RateLimitPerMinute: -1}}))
		defer nq.Close()
		ne := *e
		ne.ts = nq
		p := wantProblem(t, ne.get(ds+"/statistics?coords="+wkt+"&parameter-name=seafloor_age"), 422, CodeLimitExceeded)
		if p["limit_name"] != "max_statistics_cells" {
			t.Errorf("limit name %v", p["limit_name"])
		}
	})
}

// Statistics of a geometry posted as GeoJSON: with read authentication on, a reader token
// suffices; the answer equals the GET with coords= for the same polygon (same computation,
// so exact equality, no tolerance); the grid comes only when asked; models= answers one
// block per model, each equal to the single-model answer.
func TestStatisticsPostAndModels(t *testing.T) {
	e := newEnv(t, "sqlite", Config{ReadAuth: true})
	auth := []string{"Authorization", "Bearer " + e.reader}
	ds := "/api/collections/" + e.dataset + "/statistics"
	wkt := "POLYGON((-145 -31,-142 -31,-142 -28,-145 -28,-145 -31))"
	poly := `{"type":"Polygon","coordinates":[[[-145,-31],[-142,-31],[-142,-28],[-145,-28],[-145,-31]]]}`
	post := func(query, body string, hdr ...string) reply {
		return e.do("POST", ds+query, strings.NewReader(body), append([]string{"Content-Type", "application/geo+json"}, hdr...)...)
	}
	wantProblem(t, post("", poly), 401, CodeUnauthorized)

	get := e.get(ds+"?coords="+url.QueryEscape(wkt), auth...)
	e.want(get, 200)
	byGet := get.json(t)
	for _, body := range []string{poly, `{"type":"Feature","properties":{},"geometry":` + poly + `}`} {
		r := post("", body, auth...)
		e.want(r, 200)
		if byPost := r.json(t); !reflect.DeepEqual(byPost, byGet) {
			t.Errorf("POST %s answers\n%s\nGET coords= answers\n%s", body[:20], trunc(r.Body), trunc(get.Body))
		}
	}
	// Every parameter the demo basin answers is there by default.
	st := byGet["statistics"].(map[string]any)
	for _, p := range []string{"seafloor_age", "observed_depth", "predicted_depth", "heat_flow", "residual_depth"} {
		if _, ok := st[p]; !ok {
			t.Errorf("default statistics lack %s: %v", p, st)
		}
		if _, ok := st[p].(map[string]any)["histogram"]; !ok {
			t.Errorf("%s has no histogram", p)
		}
	}
	if _, ok := byGet["grid"]; ok {
		t.Error("the grid came without grid=true")
	}
	withGrid := post("?grid=true&parameter-name=residual_depth", poly, auth...)
	e.want(withGrid, 200)
	g, ok := withGrid.json(t)["grid"].(map[string]any)
	if !ok {
		t.Fatalf("grid=true answer has no grid: %s", trunc(withGrid.Body))
	}
	checkCoverageJSON(t, mustJSON(t, g))
	vals := g["ranges"].(map[string]any)["residual_depth"].(map[string]any)["values"].([]any)
	n := 0
	for _, v := range vals {
		if v != nil {
			n++
		}
	}
	cnt := num(t, st["residual_depth"].(map[string]any)["count"])
	if float64(n) != cnt {
		t.Errorf("grid holds %d residual values, statistics count %v", n, cnt)
	}
	t.Logf("statistics of every parameter: %d bytes; residual statistics with the grid: %d bytes", len(get.Body), len(withGrid.Body))

	models := []string{"psm", "gdh1", "halfspace"}
	cmp := post("?models="+strings.Join(models, ","), poly, auth...)
	e.want(cmp, 200)
	blocks := cmp.json(t)["comparison"].([]any)
	if len(blocks) != len(models) {
		t.Fatalf("%d blocks for %d models", len(blocks), len(models))
	}
	for i, m := range models {
		single := e.get(ds+"?coords="+url.QueryEscape(wkt)+"&model="+m, auth...).json(t)
		if !reflect.DeepEqual(blocks[i], any(single)) {
			t.Errorf("block %d (%s) differs from the model=%s answer", i, m, m)
		}
		if single["model"] != m {
			t.Errorf("model=%s answer says model %v", m, single["model"])
		}
	}
	p0 := blocks[0].(map[string]any)["statistics"].(map[string]any)["predicted_depth"].(map[string]any)["mean_m"]
	p2 := blocks[2].(map[string]any)["statistics"].(map[string]any)["predicted_depth"].(map[string]any)["mean_m"]
	if p0 == p2 {
		t.Errorf("psm and halfspace give the same mean predicted depth %v", p0)
	}
	// The stored region's statistics: the same opt-in grid and side-by-side models.
	feat := `{"type":"Feature","geometry":` + poly + `,"properties":{"name":"stats box"}}`
	c := e.do("POST", "/api/regions", strings.NewReader(feat), "Authorization", "Bearer "+e.editor, "Content-Type", MediaGeoJSON)
	e.want(c, 201)
	loc := "/api/collections/" + e.dataset + "/locations/" + c.json(t)["id"].(string) + "/statistics"
	byRegion := e.get(loc+"?parameter-name=residual_depth", auth...).json(t)
	if _, ok := byRegion["grid"]; ok {
		t.Error("the region's statistics carry the grid without grid=true")
	}
	if _, ok := e.get(loc+"?parameter-name=residual_depth&grid=true", auth...).json(t)["grid"]; !ok {
		t.Error("the region's statistics lack the grid with grid=true")
	}
	rc := e.get(loc+"?parameter-name=residual_depth&models=psm,gdh1", auth...).json(t)
	if blocks := rc["comparison"].([]any); len(blocks) != 2 || !reflect.DeepEqual(blocks[1], any(byRegion)) {
		t.Errorf("region comparison %v, its gdh1 block should equal the default (gdh1) answer", trunc(mustJSON(t, rc)))
	}
	wantProblem(t, post("?models=psm,psm", poly, auth...), 400, CodeInvalidParameter)
	wantProblem(t, post("?models=psm,gdh1,halfspace,psm1,a,b,c", poly, auth...), 422, CodeLimitExceeded)
	wantProblem(t, post("?grid=perhaps", poly, auth...), 400, CodeInvalidParameter)
	wantProblem(t, post("", `{"type":"Point","coordinates":[0,0]}`, auth...), 400, CodeInvalidRegion)
}

func mustJSON(t *testing.T, v any) []byte {
	t.Helper()
	b, err := json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	return b
}
