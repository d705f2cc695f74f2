package server

import (
	"bytes"
	"encoding/json"
	"fmt"
	"strings"
	"testing"
)

// A calibration over the SYNTHETIC demo basin runs as a job: the request is checked at once,
// the job's result is the fit, the plot answers PNG and SVG, and the saved model is served
// like any custom model. (Recovery of known parameters is evaluate's TestCalibrateDataset.)
func TestCalibrationJob(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	auth := []string{"Authorization", "Bearer " + e.editor, "Content-Type", "application/json"}
	path := "/api/collections/" + e.dataset + "/calibrations"
	poly := `{"type":"Polygon","coordinates":[[[-148,-43],[-122,-43],[-122,-22],[-148,-22],[-148,-43]]]}`
	body := `{"geometry":` + poly + `,"free":["ridge_depth_m","plate_thickness_km"],"resolution_deg":0.25,"bootstrap":10,"save_as":"basin-fit"}`

	for _, c := range []struct {
		name, body string
		status     int
		code       string
	}{
		{"unknown free parameter", `{"geometry":` + poly + `,"free":["thickness"]}`, 400, CodeInvalidParameter},
		{"no region", `{"free":["ridge_depth_m"]}`, 400, CodeInvalidParameter},
		{"save as a built-in id", `{"geometry":` + poly + `,"free":["ridge_depth_m"],"save_as":"gdh1"}`, 409, CodeConflict},
		{"unknown field", `{"geometry":` + poly + `,"free":["ridge_depth_m"],"smooth":true}`, 400, CodeBadRequest},
	} {
		t.Run(c.name, func(t *testing.T) {
			wantProblem(t, e.do("POST", path, strings.NewReader(c.body), auth...), c.status, c.code)
		})
	}
	t.Run("needs a token", func(t *testing.T) {
		r := e.do("POST", path, strings.NewReader(body), "Content-Type", "application/json")
		if r.StatusCode != 401 {
			t.Errorf("status %d without a token", r.StatusCode)
		}
	})

	r := e.do("POST", path, strings.NewReader(body), auth...)
	e.want(r, 202)
	loc := r.Header.Get("Location")
	self := loc[strings.Index(loc, "/api/"):]
	id := r.json(t)["id"]
	job := e.waitJob(fmt.Sprintf("/api/jobs/%v", id))
	if job["state"] != "succeeded" {
		t.Fatalf("calibration job %v", job)
	}
	res := e.get(self)
	e.want(res, 200)
	c := res.json(t)
	if c["saved_model"] != "basin-fit" || len(c["parameters"].([]any)) != 2 || c["caution"] == "" {
		t.Errorf("calibration %s", trunc(res.Body))
	}
	for _, p := range []struct{ path, prefix string }{
		{self + "/plot.png", "\x89PNG"}, {self + "?f=png", "\x89PNG"}, {self + "/plot.svg", "<?xml"}, {self + "?f=svg", "<?xml"},
	} {
		t.Run(p.path, func(t *testing.T) {
			g := e.get(p.path)
			e.want(g, 200)
			if !bytes.HasPrefix(g.Body, []byte(p.prefix)) {
				t.Errorf("starts %q", g.Body[:min(len(g.Body), 16)])
			}
		})
	}
	t.Run("saved model", func(t *testing.T) {
		m := e.get("/api/models/basin-fit")
		e.want(m, 200)
		e.want(e.get("/api/models/basin-fit/curve?ages=0:100:10"), 200)
		// The fitted parameter set passes POST /api/models's own validation as it stands.
		mp := c["model_params"].(map[string]any)
		mp["id"] = "basin-fit-copy"
		raw, _ := json.Marshal(mp)
		e.want(e.do("POST", "/api/models", bytes.NewReader(raw), auth...), 201)
	})
	t.Run("other dataset", func(t *testing.T) {
		wantProblem(t, e.get(strings.Replace(self, e.dataset, "nosuch", 1)), 404, CodeNotFound)
	})
}
