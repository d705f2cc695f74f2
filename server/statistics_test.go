package server

import (
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
