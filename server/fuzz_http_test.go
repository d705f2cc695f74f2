package server

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"math"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"net/textproto"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"ridgeflank/jobs"
	"ridgeflank/store"
	"ridgeflank/store/storetest"
	"ridgeflank/thermal"
)

// Fuzz targets for request bodies: multipart grid uploads and model parameter sets, sent
// through the real handler (routing, authorisation, body limits, the problem adapter) with an
// httptest recorder. Every answer must be the documented success or a 4xx problem+json, never
// a 5xx, and a refused upload leaves no file behind.

// recordingJobs is a JobQueue that records imports without running them (for tests of the
// upload handling, not of the import pipeline, which FuzzOpenReader and the ingest tests cover).
type recordingJobs struct {
	mu      sync.Mutex
	imports []jobs.ImportArgs
}

func (q *recordingJobs) EnqueueImport(_ context.Context, a jobs.ImportArgs) (int64, error) {
	q.mu.Lock()
	defer q.mu.Unlock()
	q.imports = append(q.imports, a)
	return int64(len(q.imports)), nil
}
func (q *recordingJobs) EnqueueExport(context.Context, jobs.ExportArgs) (int64, error) {
	return 0, errors.New("not in this test")
}
func (q *recordingJobs) EnqueueCalibration(context.Context, jobs.CalibrationArgs) (int64, error) {
	return 0, errors.New("not in this test")
}
func (q *recordingJobs) EnqueueStatistics(context.Context, jobs.StatisticsArgs) (int64, error) {
	return 0, errors.New("not in this test")
}
func (q *recordingJobs) Get(_ context.Context, id int64) (jobs.Status, error) {
	return jobs.Status{ID: id, Kind: "import", State: jobs.StateQueued, MaxAttempt: 1, CreatedAt: time.Now()}, nil
}
func (q *recordingJobs) Ready(context.Context) error { return nil }

func (q *recordingJobs) take() []jobs.ImportArgs {
	q.mu.Lock()
	defer q.mu.Unlock()
	out := q.imports
	q.imports = nil
	return out
}

// fuzzServer is a handler over an empty SQLite store with an editor token.
type fuzzServer struct {
	h         http.Handler
	token     string
	uploadDir string
	jobs      *recordingJobs
}

func newFuzzServer(f *testing.F, limits Limits) *fuzzServer {
	dir := f.TempDir()
	st := storetest.OpenStore(f, "sqlite", dir)
	_, tok, err := st.CreateToken(context.Background(), "fuzz-editor", store.RoleEditor)
	if err != nil {
		f.Fatal(err)
	}
	fs := &fuzzServer{token: tok, uploadDir: filepath.Join(dir, "uploads"), jobs: &recordingJobs{}}
	fs.h = New(Deps{Store: st, Version: "test", Limits: limits, Jobs: fs.jobs,
		Config: Config{UploadDir: fs.uploadDir, ExportDir: filepath.Join(dir, "exports"), RateLimitPerMinute: -1}})
	return fs
}

// serve sends one request and checks the answer is want (when not 0) or a 4xx problem+json.
func (fs *fuzzServer) serve(t *testing.T, req *http.Request, want int) *httptest.ResponseRecorder {
	t.Helper()
	req.Header.Set("Authorization", "Bearer "+fs.token)
	rec := httptest.NewRecorder()
	fs.h.ServeHTTP(rec, req)
	checkFuzzAnswer(t, req, rec.Code, rec.Header().Get("Content-Type"), rec.Body.Bytes(), want)
	return rec
}

// checkFuzzAnswer asserts an answer is the expected success (when want is not 0) or a 4xx
// with an RFC 9457 problem body whose status matches; a 5xx always fails.
func checkFuzzAnswer(t *testing.T, req *http.Request, code int, ct string, body []byte, want int) {
	t.Helper()
	if code >= 500 {
		t.Fatalf("%s %s: status %d: %s", req.Method, req.URL, code, trunc(body))
	}
	if code == want || (want == 0 && code < 300) {
		return
	}
	if code < 400 {
		t.Fatalf("%s %s: status %d, want %d or a 4xx: %s", req.Method, req.URL, code, want, trunc(body))
	}
	if ct != "application/problem+json" {
		t.Fatalf("%s %s: status %d with Content-Type %q, want application/problem+json", req.Method, req.URL, code, ct)
	}
	var p Problem
	if err := json.Unmarshal(body, &p); err != nil {
		t.Fatalf("%s %s: problem body is not JSON: %v: %s", req.Method, req.URL, err, trunc(body))
	}
	if p.Status != code || p.Code == "" || p.Type == "" || p.Title == "" {
		t.Fatalf("%s %s: problem %+v does not match status %d", req.Method, req.URL, p, code)
	}
	if _, ok := problemKinds[p.Code]; !ok {
		t.Fatalf("%s %s: problem code %q is not catalogued", req.Method, req.URL, p.Code)
	}
}

// uploadLimits keeps fuzzed bodies small and makes the size limits reachable.
var uploadLimits = Limits{MaxUploadBytes: 64 << 10, MaxBodyBytes: 64 << 10}

func FuzzUploadGrid(f *testing.F) {
	// Seeds: (file name, file bytes, kind, units, vertical, vertical_sense, extra field name,
	// extra field value, raw body used instead of a well-formed form when not empty).
	f.Add("age.nc", []byte("CDF\x01 not really"), "age", "Myr", "", "", "id", "basin-age", []byte(nil))
	f.Add("depth.tif", []byte("II*\x00"), "bathymetry", "m", "elevation", "depth", "", "", []byte(nil))
	f.Add("x.tif", []byte{}, "age", "", "", "", "", "", []byte(nil))
	f.Add("../../etc/passwd", []byte("x"), "nonsense\xff", "\xff", "up", "", "registration", "pixel", []byte(nil))
	f.Add("a.very-long-extension-of-text", []byte("x"), "", "", "", "", "licence", string(bytes.Repeat([]byte("L"), maxFormFieldBytes+1)), []byte(nil))
	f.Add("", []byte("x"), "age", "Ma", "", "", "file", "second file?", []byte(nil))
	f.Add("", []byte(nil), "", "", "", "", "", "", []byte("--B\r\nContent-Disposition: form-data; name=\"file\"; filename=\"a.nc\"\r\n\r\nabc\r\n--B--\r\n"))
	f.Add("", []byte(nil), "", "", "", "", "", "", []byte("--B\r\nContent-Disposition: form-data; name=\"kind\"\r\n\r\nage\r\n--B"))
	f.Add("", []byte(nil), "", "", "", "", "", "", []byte("--B\r\n\r\n--B--"))
	fs := newFuzzServer(f, uploadLimits)
	f.Fuzz(func(t *testing.T, fileName string, file []byte, kind, units, vertical, verticalSense, extraName, extraValue string, raw []byte) {
		var body bytes.Buffer
		ctype := "multipart/form-data; boundary=B"
		if len(raw) > 0 {
			body.Write(raw)
		} else {
			mw := multipart.NewWriter(&body)
			for _, kv := range [][2]string{{"kind", kind}, {"units", units}, {"vertical", vertical}, {"vertical_sense", verticalSense}, {extraName, extraValue}} {
				if kv[0] != "" && kv[1] != "" {
					_ = mw.WriteField(kv[0], kv[1])
				}
			}
			hdr := textproto.MIMEHeader{}
			hdr.Set("Content-Disposition", multipart.FileContentDisposition("file", fileName))
			w, _ := mw.CreatePart(hdr)
			_, _ = w.Write(file)
			_ = mw.Close()
			ctype = mw.FormDataContentType()
		}
		req := httptest.NewRequest("POST", "/api/grids", bytes.NewReader(body.Bytes()))
		req.Header.Set("Content-Type", ctype)
		rec := fs.serve(t, req, http.StatusAccepted)
		queued := fs.jobs.take()
		if rec.Code != http.StatusAccepted {
			if len(queued) != 0 {
				t.Fatalf("status %d but %d imports were queued", rec.Code, len(queued))
			}
			// Nothing is left behind by a refused upload.
			left, _ := os.ReadDir(fs.uploadDir)
			if len(left) != 0 {
				t.Fatalf("status %d left %d files in the upload directory", rec.Code, len(left))
			}
			return
		}
		if len(queued) != 1 {
			t.Fatalf("202 with %d imports queued, want 1", len(queued))
		}
		a := queued[0]
		got, err := os.ReadFile(a.Path)
		if err != nil {
			t.Fatalf("the queued upload is not on disk: %v", err)
		}
		os.Remove(a.Path)
		if filepath.Dir(a.Path) != filepath.Clean(fs.uploadDir) {
			t.Fatalf("upload stored at %s, outside the upload directory %s", a.Path, fs.uploadDir)
		}
		sum := sha256.Sum256(got)
		if a.SHA256 != hex.EncodeToString(sum[:]) || a.Bytes != int64(len(got)) || len(got) == 0 {
			t.Fatalf("queued sha256 %s, %d bytes; the file has %x, %d bytes", a.SHA256, a.Bytes, sum, len(got))
		}
		if len(raw) == 0 && !bytes.Equal(got, file) {
			t.Fatalf("stored upload differs from the file part sent (%d vs %d bytes)", len(got), len(file))
		}
		var doc map[string]any
		if err := json.Unmarshal(rec.Body.Bytes(), &doc); err != nil || doc["upload_sha256"] != a.SHA256 {
			t.Fatalf("202 body %s does not carry upload_sha256 %s (%v)", trunc(rec.Body.Bytes()), a.SHA256, err)
		}
	})
}

func FuzzCreateModel(f *testing.F) {
	good := `{"id":"fz","name":"Fuzz plate","kind":"plate","plate_thickness_km":125,"mantle_temperature_c":1350,` +
		`"surface_temperature_c":0,"expansivity_per_k":3.1e-5,"conductivity_w_m_k":3.138,"heat_capacity_j_kg_k":1171,` +
		`"mantle_density_kg_m3":3330,"water_density_kg_m3":1000,"ridge_depth_m":2600,"source":"Stein & Stein (1992) values"}`
	for _, s := range []string{
		good,
		`{"id":"hs","kind":"halfspace","mantle_temperature_c":1300,"expansivity_per_k":3e-5,"conductivity_w_m_k":3.3,"diffusivity_m2_s":1e-6,"mantle_density_kg_m3":3300,"water_density_kg_m3":1000,"ridge_depth_m":2500}`,
		`{"id":"gdh1","kind":"plate"}`,
		`{"id":"x","kind":"plate","plate_thickness_km":1e308}`,
		`{"id":"x","kind":"plate","plate_thickness_km":"NaN"}`,
		`{"id":"x","kind":"plate","plate_thickness_km":-0,"diffusivity_m2_s":5e-324}`,
		`{"id":"x\xff","kind":"plate"}`,
		`{"id":"x","kind":"plate",}`,
		`{"id":"x","unknown":1}`,
		`[]`, `null`, ``, `{"id":1}`, `{"id":"x"} {"id":"y"}`,
	} {
		f.Add([]byte(s))
	}
	fs := newFuzzServer(f, Limits{MaxBodyBytes: 16 << 10})
	f.Fuzz(func(t *testing.T, body []byte) {
		req := httptest.NewRequest("POST", "/api/models", bytes.NewReader(body))
		req.Header.Set("Content-Type", "application/json")
		rec := fs.serve(t, req, http.StatusCreated)
		if rec.Code != http.StatusCreated {
			return
		}
		// A stored set is a valid one, gives finite model answers, and reads back as sent.
		var m modelJSON
		if err := json.Unmarshal(rec.Body.Bytes(), &m); err != nil {
			t.Fatalf("201 body is not a model: %v", err)
		}
		if err := m.Params.Validate(); err != nil {
			t.Fatalf("stored parameters %+v do not validate: %v", m.Params, err)
		}
		mod, err := thermal.NewModel(m.Params)
		if err != nil {
			t.Fatalf("stored parameters do not build a model: %v", err)
		}
		for _, age := range []float64{0, 1, 50, 400} {
			if d := mod.DepthM(age); math.IsNaN(d) || math.IsInf(d, 0) {
				t.Fatalf("depth at %g Ma is %v", age, d)
			}
		}
		get := httptest.NewRequest("GET", "/api/models/"+m.ID, nil)
		rec2 := fs.serve(t, get, http.StatusOK)
		var m2 modelJSON
		if err := json.Unmarshal(rec2.Body.Bytes(), &m2); err != nil || m2.Params != m.Params {
			t.Fatalf("GET gave %+v (%v), POST stored %+v", m2.Params, err, m.Params)
		}
	})
}
