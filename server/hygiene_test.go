package server

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"ridgeflank/demobasin"
	"ridgeflank/evaluate"
)

// The non-file fields of an upload are bounded in number and in total size: a form of many
// small fields is refused with 413 naming the limit before the server keeps them.
func TestUploadFormFieldLimits(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	post := func(fields int, size int) reply {
		var body bytes.Buffer
		mw := multipart.NewWriter(&body)
		mw.WriteField("kind", "age")
		for i := 0; i < fields; i++ {
			mw.WriteField(fmt.Sprintf("f%d", i), strings.Repeat("x", size))
		}
		fw, _ := mw.CreateFormFile("file", "a.tif")
		fw.Write([]byte("not read"))
		mw.Close()
		return e.do("POST", "/api/grids", &body, "Content-Type", mw.FormDataContentType(), "Authorization", "Bearer "+e.editor)
	}
	// maxFormFields + 1 fields (with kind): one too many.
	p := wantProblem(t, post(maxFormFields, 1), 413, CodeLimitExceeded)
	if p["limit_name"] != "max_form_fields" || num(t, p["limit"]) != maxFormFields {
		t.Errorf("too many fields: %v", p)
	}
	// 20 fields of 4000 bytes: each under max_form_field_bytes, together over max_form_fields_bytes.
	p = wantProblem(t, post(20, 4000), 413, CodeLimitExceeded)
	if p["limit_name"] != "max_form_fields_bytes" || num(t, p["limit"]) != maxFormFieldsBytes {
		t.Errorf("fields too large together: %v", p)
	}
	// Within both limits the form reaches the field checks (an unknown extra field is ignored;
	// the file is no grid, so the job fails later, but the upload is accepted).
	e.want(post(3, 100), 202)
}

// A duplicate dataset id is a clean 409: the database's constraint text stays in the log.
func TestDuplicateDatasetConflictIsClean(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		// The demo dataset's age grid id, read from the dataset itself.
		d := e.get("/api/datasets/" + e.dataset).json(t)
		body := fmt.Sprintf(`{"id":%q,"name":"again","age_grid_id":%q}`, e.dataset, d["age_grid_id"])
		p := wantProblem(t, e.do("POST", "/api/datasets", strings.NewReader(body), "Content-Type", "application/json", "Authorization", "Bearer "+e.editor), 409, CodeConflict)
		detail := fmt.Sprint(p["detail"])
		for _, leak := range []string{"UNIQUE", "constraint", "datasets.", "duplicate key", "SQLSTATE", "pkey"} {
			if strings.Contains(detail, leak) {
				t.Errorf("409 detail %q shows the database's words (%q)", detail, leak)
			}
		}
		if !strings.Contains(detail, e.dataset) {
			t.Errorf("409 detail %q does not name the id", detail)
		}
	})
}

// A failed import's job answers with the client's file name, never the server's upload path.
func TestJobErrorsCarryNoServerPaths(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	var body bytes.Buffer
	mw := multipart.NewWriter(&body)
	mw.WriteField("kind", "depth")
	fw, _ := mw.CreateFormFile("file", "notes.txt")
	fw.Write([]byte("this is not a grid\n"))
	mw.Close()
	up := e.do("POST", "/api/grids", &body, "Content-Type", mw.FormDataContentType(), "Authorization", "Bearer "+e.editor)
	e.want(up, 202)
	job := e.waitJob(jobOf(up))
	if job["state"] != "failed" {
		t.Fatalf("job %v", job)
	}
	raw := string(e.get(jobOf(up)).Body)
	if strings.Contains(raw, "/uploads") || strings.Contains(raw, "upload-") || strings.Contains(raw, os.TempDir()) {
		t.Errorf("the job's answer names a server path: %s", raw)
	}
}

// A custom model with heat_capacity_j_kg_k = 0 is refused by name (0 is not "absent"); the same
// model without the field is accepted (κ given). PSM-like values: Parsons & Sclater (1977),
// from memory.
func TestModelZeroHeatCapacityRefused(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	base := `"name":"z","kind":"plate","plate_thickness_km":125,"mantle_temperature_c":1350,"surface_temperature_c":0,` +
		`"expansivity_per_k":3.2e-5,"conductivity_w_m_k":3.138,"mantle_density_kg_m3":3330,"water_density_kg_m3":1000,"ridge_depth_m":2500,"diffusivity_m2_s":8e-7`
	post := func(js string) reply {
		return e.do("POST", "/api/models", strings.NewReader(js), "Content-Type", "application/json", "Authorization", "Bearer "+e.editor)
	}
	p := wantProblem(t, post(`{"id":"zero-cp",`+base+`,"heat_capacity_j_kg_k":0}`), 422, CodeInvalidModelParams)
	if p["parameter"] != "heat_capacity_j_kg_k" {
		t.Errorf("zero cp: %v", p)
	}
	e.want(post(`{"id":"no-cp",`+base+`}`), 201)
}

// A resolution finer than the grid is not silently clamped: the answer states the spacing used.
// The demo basin's spacing is demobasin.DefaultCellDeg (0.05°).
func TestAreaStatesResolutionUsed(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	lon, lat := demobasin.SwellCentreLon, demobasin.SwellCentreLat
	bbox := fmt.Sprintf("%g,%g,%g,%g", lon-0.5, lat-0.5, lon+0.5, lat+0.5)
	r := e.get("/api/collections/" + e.dataset + "/area?bbox=" + bbox + "&parameter-name=seafloor_age&resolution-x=0.001&resolution-y=0.001")
	e.want(r, 200)
	note := r.Header.Get("Ridgeflank-Resolution-Note")
	if !strings.Contains(note, "finer than the grid") {
		t.Errorf("note %q", note)
	}
	res, _ := r.json(t)["ridgeflank:resolution"].(map[string]any)
	if res == nil || num(t, res["x_deg"]) != demobasin.DefaultCellDeg || num(t, res["y_deg"]) != demobasin.DefaultCellDeg {
		t.Errorf("ridgeflank:resolution %v, want the grid's %g", res, demobasin.DefaultCellDeg)
	}
	// 0.1° is twice the spacing: answered as asked, no note.
	r = e.get("/api/collections/" + e.dataset + "/area?bbox=" + bbox + "&parameter-name=seafloor_age&resolution-x=0.1&resolution-y=0.1")
	e.want(r, 200)
	if n := r.Header.Get("Ridgeflank-Resolution-Note"); n != "" || r.json(t)["ridgeflank:resolution"] != nil {
		t.Errorf("a whole multiple got a note %q", n)
	}
}

// Area answers are weighed by their values (cells read × parameters): over the concurrent cap a
// request is answered 503 with Retry-After (a problem naming max_concurrent_values), and each
// counts one request per ValuesPerRequest values against its client's requests per minute.
func TestHeavyRequestsWeighedByValues(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	const perMinute, perRequest = 20, 100
	srv := newServer(Deps{Store: e.st, Version: "test", Config: Config{RateLimitPerMinute: perMinute},
		Limits: Limits{MaxConcurrentValues: 1_000_000, HeavyWait: 50 * time.Millisecond, ValuesPerRequest: perRequest}})
	h := srv.routes()
	lon, lat := demobasin.SwellCentreLon, demobasin.SwellCentreLat
	bbox := fmt.Sprintf("%g,%g,%g,%g", lon-0.5, lat-0.5, lon+0.5, lat+0.5)
	path := "/api/collections/" + e.dataset + "/area?bbox=" + bbox + "&parameter-name=seafloor_age"
	call := func(client, path string) *httptest.ResponseRecorder {
		req := httptest.NewRequest("GET", path, nil)
		req.RemoteAddr = client + ":1234"
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		return rec
	}
	// Full: another request holds every value.
	if err := srv.gate.sem.Acquire(context.Background(), srv.gate.max); err != nil {
		t.Fatal(err)
	}
	rec := call("192.0.2.1", path)
	var p map[string]any
	json.Unmarshal(rec.Body.Bytes(), &p)
	if rec.Code != 503 || rec.Header().Get("Retry-After") == "" || p["limit_name"] != "max_concurrent_values" || rec.Header().Get("Content-Type") != "application/problem+json" {
		t.Fatalf("gate full: %d Retry-After=%q %v", rec.Code, rec.Header().Get("Retry-After"), p)
	}
	srv.gate.sem.Release(srv.gate.max)

	// The cost is cells × parameters: two parameters cost twice one.
	_, region, err := srv.areaParam(httptest.NewRequest("GET", path, nil))
	if err != nil {
		t.Fatal(err)
	}
	one, err := srv.ev.AreaCost(context.Background(), e.dataset, evaluate.Options{Parameters: []string{"seafloor_age"}}, region, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	two, err := srv.ev.AreaCost(context.Background(), e.dataset, evaluate.Options{Parameters: []string{"seafloor_age", "heat_flow"}}, region, 0, 0)
	if err != nil || two != 2*one {
		t.Fatalf("cost of two parameters %d (%v), of one %d", two, err, one)
	}
	// Rates: the question costs `one` values, so it counts one/perRequest requests.
	units := max(one/perRequest, 1)
	if units < 2 {
		t.Fatalf("set-up: %d values count as %d requests; the test needs a heavier question", one, units)
	}
	accepted := 0
	for i := 0; i < perMinute+1; i++ {
		rec := call("192.0.2.2", path)
		if rec.Code == 429 {
			break
		}
		if rec.Code != 200 {
			t.Fatalf("request %d: %d %s", i, rec.Code, rec.Body)
		}
		accepted++
	}
	// The limiter admits a request while count+1 ≤ limit; each accepted one adds min(units, limit).
	want := int((perMinute-1)/min(units, perMinute)) + 1
	if accepted != want {
		t.Errorf("%d area questions of %d values accepted in a minute, want %d (each counts %d of %d requests)", accepted, one, want, units, perMinute)
	}
	// Another client is not charged.
	if rec := call("192.0.2.3", path); rec.Code != 200 {
		t.Errorf("another client: %d", rec.Code)
	}
}

// The upload sweep removes abandoned uploads only: never a file an import job names, never a
// fresh one (it may be streaming) unless asked with no minimum age, never other files.
func TestSweepUploads(t *testing.T) {
	dir := t.TempDir()
	write := func(name string, age time.Duration) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
		old := time.Now().Add(-age)
		if err := os.Chtimes(p, old, old); err != nil {
			t.Fatal(err)
		}
		return p
	}
	queued := write("upload-queued.tif", 3*UploadSweepAge)
	write("upload-abandoned.tif", 2*UploadSweepAge)
	write("upload-streaming.tif", time.Minute)
	write("notes.txt", 3*UploadSweepAge)
	left := func() []string {
		ents, _ := os.ReadDir(dir)
		var out []string
		for _, e := range ents {
			out = append(out, e.Name())
		}
		return out
	}
	n, err := SweepUploads(dir, map[string]bool{queued: true}, UploadSweepAge)
	if err != nil || n != 1 || strings.Join(left(), ",") != "notes.txt,upload-queued.tif,upload-streaming.tif" {
		t.Fatalf("periodic sweep removed %d (%v), left %v", n, err, left())
	}
	n, err = SweepUploads(dir, map[string]bool{"/elsewhere/spelt/" + filepath.Base(queued): true}, 0)
	if err != nil || n != 1 || strings.Join(left(), ",") != "notes.txt,upload-queued.tif" {
		t.Fatalf("start sweep removed %d (%v), left %v", n, err, left())
	}
}

// Header fields over MaxHeaderBytes are answered 431 problem+json naming the limit; over the
// hard limit Go's server answers its own plain-text 431 (as the README says: net/http writes
// it before any handler runs).
func TestHeaderLimit(t *testing.T) {
	ts := httptest.NewUnstartedServer(New(Deps{Config: Config{RateLimitPerMinute: -1}}))
	ts.Config.MaxHeaderBytes = HardMaxHeaderBytes
	ts.Start()
	defer ts.Close()
	get := func(size int) (*http.Response, []byte) {
		req, _ := http.NewRequest("GET", ts.URL+"/api/conformance", nil)
		req.Header.Set("X-Padding", strings.Repeat("a", size))
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		b, _ := io.ReadAll(resp.Body)
		return resp, b
	}
	if resp, _ := get(1000); resp.StatusCode != 200 {
		t.Fatalf("small header: %d", resp.StatusCode)
	}
	resp, b := get(MaxHeaderBytes + 1)
	var p map[string]any
	json.Unmarshal(b, &p)
	if resp.StatusCode != 431 || resp.Header.Get("Content-Type") != "application/problem+json" || p["limit_name"] != "max_header_bytes" || num(t, p["limit"]) != MaxHeaderBytes {
		t.Errorf("header over the limit: %d %s %s", resp.StatusCode, resp.Header.Get("Content-Type"), b)
	}
	resp, _ = get(HardMaxHeaderBytes + 8192)
	if resp.StatusCode != 431 || strings.Contains(resp.Header.Get("Content-Type"), "problem") {
		t.Errorf("over the hard limit: %d %s (the README says Go answers this one itself)", resp.StatusCode, resp.Header.Get("Content-Type"))
	}
}
