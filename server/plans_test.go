package server

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"net/http/httptest"
	"strings"
	"testing"

	"github.com/paulmach/orb/geojson"

	"ridgeflank/demobasin"
	"ridgeflank/survey"
)

func planJSON(t testing.TB, p survey.Plan) string {
	t.Helper()
	b, err := json.Marshal(p)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// testPlan is the demo basin's SYNTHETIC plan under a new name and no id.
func testPlan(e *env) survey.Plan {
	p := demobasin.DemoPlan()
	p.ID, p.Name = "", "test plan (SYNTHETIC)"
	p.Settings.Dataset = e.dataset
	return p
}

// Create, read, list, update (If-Match) and delete a plan, as regions are managed.
func TestPlansCRUD(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	ed := []string{"Authorization", "Bearer " + e.editor, "Content-Type", "application/json"}
	p := testPlan(e)

	wantProblem(t, e.do("POST", "/api/plans", strings.NewReader(planJSON(t, p)), "Authorization", "Bearer "+e.reader), 403, CodeForbidden)
	wantProblem(t, e.do("POST", "/api/plans", strings.NewReader(planJSON(t, p))), 401, CodeUnauthorized)

	r := e.do("POST", "/api/plans", strings.NewReader(planJSON(t, p)), ed...)
	e.want(r, 201)
	var created survey.Plan
	if err := json.Unmarshal(r.Body, &created); err != nil {
		t.Fatal(err)
	}
	if created.ID == "" || r.Header.Get("ETag") != `"1"` || !strings.HasSuffix(r.Header.Get("Location"), "/api/plans/"+created.ID) {
		t.Fatalf("created %+v, ETag %q, Location %q", created, r.Header.Get("ETag"), r.Header.Get("Location"))
	}
	path := "/api/plans/" + created.ID

	got := e.get(path)
	e.want(got, 200)
	var back survey.Plan
	_ = json.Unmarshal(got.Body, &back)
	if back.Name != p.Name || len(back.Lines) != len(p.Lines) || back.Lines[1].Waypoints[1] != p.Lines[1].Waypoints[1] || got.Header.Get("ETag") != `"1"` {
		t.Fatalf("read back %+v (ETag %s)", back, got.Header.Get("ETag"))
	}

	list := e.get("/api/plans")
	e.want(list, 200)
	var pl struct{ Plans []survey.Plan }
	_ = json.Unmarshal(list.Body, &pl)
	ids := map[string]bool{}
	for _, x := range pl.Plans {
		ids[x.ID] = true
	}
	if !ids[created.ID] || !ids[demobasin.PlanID] {
		t.Errorf("list holds %v, want %s and the demo plan", ids, created.ID)
	}
	one := e.get("/api/plans?limit=1")
	_ = json.Unmarshal(one.Body, &pl)
	if len(pl.Plans) != 1 {
		t.Errorf("limit=1 listed %d plans", len(pl.Plans))
	}

	p.Name = "renamed"
	wantProblem(t, e.do("PUT", path, strings.NewReader(planJSON(t, p)), ed...), 428, CodePreconditionNeeded)
	up := e.do("PUT", path, strings.NewReader(planJSON(t, p)), append(ed, "If-Match", `"1"`)...)
	e.want(up, 200)
	if up.Header.Get("ETag") != `"2"` {
		t.Errorf("ETag after update %q, want \"2\"", up.Header.Get("ETag"))
	}
	// Someone else's stale version: 412, and nothing changes.
	wantProblem(t, e.do("PUT", path, strings.NewReader(planJSON(t, p)), append(ed, "If-Match", `"1"`)...), 412, CodePreconditionFailed)
	wantProblem(t, e.do("DELETE", path, nil, "Authorization", "Bearer "+e.editor, "If-Match", `"1"`), 412, CodePreconditionFailed)
	wantProblem(t, e.do("DELETE", path, nil, "Authorization", "Bearer "+e.editor), 428, CodePreconditionNeeded)
	e.want(e.do("DELETE", path, nil, "Authorization", "Bearer "+e.editor, "If-Match", `"2"`), 204)
	wantProblem(t, e.get(path), 404, CodeNotFound)
}

// A plan with several bad fields is one 400 (invalid-parameter) naming every one of them.
func TestPlanBadFieldsNamed(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	body := `{"name":"bad","lines":[{"waypoints":[{"lon":-143,"lat":-30}]}],
		"settings":{"speed_on_line_kn":-1,"overlap_pct":150,"swath_angle_deg":200,"safety_depth_m":-5}}`
	for _, path := range []string{"/api/plans/check", "/api/plans"} {
		t.Run(path, func(t *testing.T) {
			r := e.do("POST", path, strings.NewReader(body), "Authorization", "Bearer "+e.editor, "Content-Type", "application/json")
			m := wantProblem(t, r, 400, CodeInvalidParameter)
			detail, _ := m["detail"].(string)
			for _, f := range []string{"lines[0].waypoints", "settings.dataset", "settings.speed_on_line_kn", "settings.overlap_pct",
				"settings.swath_angle_deg", "settings.safety_depth_m"} {
				if !strings.Contains(detail, f) {
					t.Errorf("detail does not name %s: %s", f, detail)
				}
			}
		})
	}
	// Unknown members are refused, not ignored.
	wantProblem(t, e.do("POST", "/api/plans/check", strings.NewReader(`{"lines":[],"settings":{},"speed":3}`), "Content-Type", "application/json"), 400, CodeBadRequest)
	wantProblem(t, e.do("POST", "/api/plans/check", strings.NewReader(`{"id":"nope"}`), "Content-Type", "application/json"), 404, CodeNotFound)
	wantProblem(t, e.get("/api/plans/"+demobasin.PlanID+"/check?f=xls"), 400, CodeUnsupportedFormat)
}

// The check answers in every format with its media type; CSV and GeoJSON read back; the body
// check, the stored check and the check by id in the body are the same answer.
func TestPlanCheckFormats(t *testing.T) {
	e := newEnv(t, "sqlite", Config{ReadAuth: true})
	rd := []string{"Authorization", "Bearer " + e.reader, "Content-Type", "application/json"}
	p := demobasin.DemoPlan()
	p.Settings.Dataset = e.dataset
	body := planJSON(t, p)
	wantProblem(t, e.do("POST", "/api/plans/check", strings.NewReader(body), "Content-Type", "application/json"), 401, CodeUnauthorized)

	tests := []struct {
		f, media string
		check    func(t *testing.T, b []byte)
	}{
		{"json", "application/json", func(t *testing.T, b []byte) {
			var c survey.Check
			if err := json.Unmarshal(b, &c); err != nil {
				t.Fatal(err)
			}
			if len(c.Lines) != demobasin.PlanLines || c.Caution == "" || c.Totals.LengthKm <= 0 {
				t.Errorf("check %d lines, caution %q, length %g km", len(c.Lines), c.Caution, c.Totals.LengthKm)
			}
			// 1 international nautical mile = 1852 m exactly (BIPM SI Brochure, 9th ed., Table 8); 7 digits.
			if d := c.Totals.LengthNmi*1.852 - c.Totals.LengthKm; math.Abs(d) > 1e-6*c.Totals.LengthKm {
				t.Errorf("length %g nmi vs %g km", c.Totals.LengthNmi, c.Totals.LengthKm)
			}
		}},
		{"csv", "text/csv", func(t *testing.T, b []byte) {
			recs, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			h := strings.Join(recs[0], ",")
			if !strings.HasPrefix(h, "line,line_name,sample,lon_deg,lat_deg,") || !strings.HasSuffix(h, ",dataset,model,data_label,caution") || len(recs) < 10 {
				t.Errorf("header %v, %d rows", recs[0], len(recs))
			}
			last := len(recs[1]) - 1
			if recs[1][last] == "" || recs[2][last] != "" || recs[2][last-1] != "SYNTHETIC" || recs[2][last-2] != "gdh1" {
				t.Errorf("facts: first row %v, second %v: want the caution on the first only, the demo's label and model on every row", recs[1][last-3:], recs[2][last-3:])
			}
		}},
		{"geojson", "application/geo+json", func(t *testing.T, b []byte) {
			fc, err := geojson.UnmarshalFeatureCollection(b)
			if err != nil {
				t.Fatal(err)
			}
			if fc.ExtraMembers["caution"] == nil || len(fc.Features) < demobasin.PlanLines {
				t.Errorf("%d features, caution %v", len(fc.Features), fc.ExtraMembers["caution"])
			}
		}},
		{"pdf", "application/pdf", func(t *testing.T, b []byte) {
			if !bytes.HasPrefix(b, []byte("%PDF-")) { // ISO 32000-1 §7.5.2 file header
				t.Errorf("starts %q", b[:min(8, len(b))])
			}
		}},
		{"png", "image/png", func(t *testing.T, b []byte) {
			if !bytes.HasPrefix(b, []byte("\x89PNG\r\n\x1a\n")) || !bytes.Contains(b, []byte("Disclaimer\x00")) { // ISO/IEC 15948 §5.2 signature
				t.Errorf("not a PNG with the caution")
			}
		}},
	}
	for _, tc := range tests {
		t.Run(tc.f, func(t *testing.T) {
			r := e.do("POST", "/api/plans/check?f="+tc.f, strings.NewReader(body), rd...)
			e.want(r, 200)
			if ct := r.Header.Get("Content-Type"); !strings.HasPrefix(ct, tc.media) {
				t.Errorf("Content-Type %q, want %s", ct, tc.media)
			}
			tc.check(t, r.Body)
		})
	}

	for _, f := range []string{"csv", "json", "geojson"} {
		t.Run("same answer "+f, func(t *testing.T) {
			byBody := e.do("POST", "/api/plans/check?f="+f, strings.NewReader(body), rd...)
			stored := e.get("/api/plans/"+demobasin.PlanID+"/check?f="+f, rd...)
			byID := e.do("POST", "/api/plans/check?f="+f, strings.NewReader(`{"id":"`+demobasin.PlanID+`"}`), rd...)
			e.want(stored, 200)
			e.want(byID, 200)
			// The stored plan keeps its id, version and times; the body plan has them as sent.
			norm := func(b []byte) string {
				if f != "json" {
					return string(b)
				}
				var m map[string]any
				_ = json.Unmarshal(b, &m)
				delete(m, "plan")
				out, _ := json.Marshal(m)
				return string(out)
			}
			if norm(byBody.Body) != norm(stored.Body) || norm(stored.Body) != norm(byID.Body) {
				t.Errorf("the body check, the stored check and the check by id differ (%d, %d, %d bytes)", len(byBody.Body), len(stored.Body), len(byID.Body))
			}
		})
	}

	// Settings in the body override the stored ones field by field: time on line = nmi / kn.
	r := e.do("POST", "/api/plans/check", strings.NewReader(`{"id":"`+demobasin.PlanID+`","settings":{"speed_on_line_kn":5}}`), rd...)
	e.want(r, 200)
	var c survey.Check
	_ = json.Unmarshal(r.Body, &c)
	if c.Plan.Settings.SpeedOnLineKn != 5 || c.Plan.Settings.SwathAngleDeg != 120 || c.Plan.Settings.SafetyDepthM != 200 {
		t.Errorf("settings after override %+v", c.Plan.Settings)
	}
	if d := c.Totals.TimeOnLineH - c.Totals.LengthNmi/5; math.Abs(d) > 1e-5*c.Totals.TimeOnLineH {
		t.Errorf("time on line %g h, want %g nmi / 5 kn", c.Totals.TimeOnLineH, c.Totals.LengthNmi)
	}
}

// A plan body over Limits.MaxBodyBytes is 413 naming the limit.
func TestPlanCheckBodyLimit(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	small := httptest.NewServer(New(Deps{Store: e.st, Limits: Limits{MaxBodyBytes: 200}, Config: Config{RateLimitPerMinute: -1}}))
	defer small.Close()
	se := *e
	se.ts = small
	p := testPlan(e)
	for _, chunked := range []bool{false, true} {
		t.Run(fmt.Sprint("chunked=", chunked), func(t *testing.T) {
			var body = strings.NewReader(planJSON(t, p))
			hdr := []string{"Content-Type", "application/json"}
			if chunked {
				hdr = append(hdr, "Transfer-Encoding", "chunked")
			}
			m := wantProblem(t, se.do("POST", "/api/plans/check", body, hdr...), 413, CodeBodyTooLarge)
			if m["limit_name"] != "max_body_bytes" {
				t.Errorf("limit %v", m["limit_name"])
			}
		})
	}
}
