package server

import (
	"bytes"
	"fmt"
	"mime/multipart"
	"os"
	"strings"
	"testing"

	"ridgeflank/demobasin"
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
