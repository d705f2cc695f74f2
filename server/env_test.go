package server

import (
	"bytes"
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/pb33f/libopenapi"
	validator "github.com/pb33f/libopenapi-validator"
	"github.com/santhosh-tekuri/jsonschema/v6"

	"ridgeflank/demobasin"
	"ridgeflank/jobs"
	"ridgeflank/jobs/queue"
	"ridgeflank/store"
	_ "ridgeflank/store/postgis"
	_ "ridgeflank/store/sqlite"
	"ridgeflank/store/storetest"
)

// env is one running API over one store with the synthetic demo basin
// installed (generated without noise, so its injected swell is the exact
// residual-depth answer away from seamounts and fracture zones).
type env struct {
	t       testing.TB
	backend string
	st      store.Store
	q       *queue.Queue
	handler http.Handler
	ts      *httptest.Server
	editor  string // token with role editor
	reader  string // token with role reader
	dataset string
}

var (
	basinOnce sync.Once
	basin     *demobasin.Basin
	basinErr  error
)

func testBasin(t testing.TB) *demobasin.Basin {
	basinOnce.Do(func() { basin, basinErr = demobasin.Generate(demobasin.Options{NoiseStdM: -1}) })
	if basinErr != nil {
		t.Fatal(basinErr)
	}
	return basin
}

// newEnv opens a store of the given backend ("sqlite" or "postgis"),
// installs the demo basin, makes tokens and a job queue, and serves the API.
func newEnv(t testing.TB, backend string, cfg Config) *env {
	return newEnvLimits(t, backend, cfg, Limits{})
}

func newEnvLimits(t testing.TB, backend string, cfg Config, limits Limits) *env {
	t.Helper()
	ctx := context.Background()
	e := &env{t: t, backend: backend}
	dir := t.TempDir()
	e.st = storetest.OpenStore(t, backend, dir)
	var err error
	if e.dataset, err = demobasin.Install(ctx, e.st, testBasin(t)); err != nil {
		t.Fatal(err)
	}
	if _, e.editor, err = e.st.CreateToken(ctx, "test-editor", store.RoleEditor); err != nil {
		t.Fatal(err)
	}
	if _, e.reader, err = e.st.CreateToken(ctx, "test-reader", store.RoleReader); err != nil {
		t.Fatal(err)
	}
	cfg.UploadDir = filepath.Join(dir, "uploads")
	cfg.ExportDir = filepath.Join(dir, "exports")
	if cfg.RateLimitPerMinute == 0 {
		cfg.RateLimitPerMinute = -1
	}
	deps := Deps{Store: e.st, Version: "test", Config: cfg, Assets: testAssets(), Limits: limits}
	e.serve(t, deps, 1)
	return e
}

func testAssets() fsys {
	return fsys{"index.html": "<!doctype html><title>ridgeflank</title>", "app-R4GYCEPN.js": "export {};"}
}

// forEachStore runs fn against the SQLite and the PostGIS store.
func forEachStore(t *testing.T, cfg Config, fn func(t *testing.T, e *env)) {
	for _, b := range []string{"sqlite", "postgis"} {
		t.Run(b, func(t *testing.T) { fn(t, newEnv(t, b, cfg)) })
	}
}

// reply is a response with its body read.
type reply struct {
	*http.Response
	Body []byte
}

func (r reply) json(t testing.TB) map[string]any {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal(r.Body, &m); err != nil {
		t.Fatalf("body is not a JSON object: %v\n%s", err, trunc(r.Body))
	}
	return m
}

func trunc(b []byte) string {
	if len(b) > 600 {
		return string(b[:600]) + "…"
	}
	return string(b)
}

// do sends a request and checks the response against the OpenAPI document
// and, for CoverageJSON, against the CoverageJSON 1.0 schema.
func (e *env) do(method, path string, body io.Reader, hdr ...string) reply {
	e.t.Helper()
	var reqBody []byte
	if body != nil {
		reqBody, _ = io.ReadAll(body)
		body = bytes.NewReader(reqBody)
	}
	req, err := http.NewRequest(method, e.ts.URL+path, body)
	if err != nil {
		e.t.Fatal(err)
	}
	for i := 0; i+1 < len(hdr); i += 2 {
		req.Header.Set(hdr[i], hdr[i+1])
	}
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		e.t.Fatal(err)
	}
	raw, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	resp.Body = io.NopCloser(bytes.NewReader(raw))
	checkOpenAPI(e.t, req, resp)
	if resp.StatusCode < 400 {
		// A request the server accepted must be one the document allows.
		vreq, _ := http.NewRequest(method, e.ts.URL+path, bytes.NewReader(reqBody))
		vreq.Header = req.Header.Clone()
		if ok, errs := oaVal.ValidateHttpRequest(vreq); !ok {
			for _, ve := range errs {
				e.t.Errorf("%s %s was accepted (%d) but the OpenAPI document does not allow it: %s (%s)", method, path, resp.StatusCode, ve.Message, ve.Reason)
			}
		}
	}
	resp.Body = io.NopCloser(bytes.NewReader(raw))
	ct := resp.Header.Get("Content-Type")
	if strings.HasPrefix(ct, MediaCovJSON) || strings.HasPrefix(ct, MediaCovJSONOld) {
		checkCoverageJSON(e.t, raw)
	}
	if strings.HasPrefix(ct, "application/problem+json") {
		checkProblem(e.t, raw, resp.StatusCode)
	}
	return reply{resp, raw}
}

func (e *env) get(path string, hdr ...string) reply { return e.do("GET", path, nil, hdr...) }

// jobOf is the job path named by the Location header of a 202 answer.
func jobOf(r reply) string {
	loc := r.Header.Get("Location")
	return loc[strings.Index(loc, "/api/jobs/"):]
}

// waitJob polls the job at jobPath until it has succeeded or failed (at most 30 s) and returns
// its last document.
func (e *env) waitJob(jobPath string) map[string]any {
	e.t.Helper()
	deadline := time.Now().Add(30 * time.Second)
	for {
		job := e.get(jobPath).json(e.t)
		if job["state"] == "succeeded" || job["state"] == "failed" || time.Now().After(deadline) {
			return job
		}
		time.Sleep(100 * time.Millisecond)
	}
}

func (e *env) want(r reply, status int) {
	e.t.Helper()
	if r.StatusCode != status {
		e.t.Fatalf("%s %s: status %d, want %d\n%s", r.Request.Method, r.Request.URL.RequestURI(), r.StatusCode, status, trunc(r.Body))
	}
}

var (
	oaOnce sync.Once
	oaVal  validator.Validator
	oaErr  error
	cjOnce sync.Once
	cjSch  *jsonschema.Schema
	cjErr  error
)

// oaValidator is the OpenAPI validator of the embedded document.
func oaValidator(t testing.TB) validator.Validator {
	t.Helper()
	oaOnce.Do(func() {
		doc, err := libopenapi.NewDocument(openAPIDocument)
		if err != nil {
			oaErr = err
			return
		}
		v, errs := validator.NewValidator(doc)
		if len(errs) > 0 {
			oaErr = errs[0]
			return
		}
		oaVal = v
	})
	if oaErr != nil {
		t.Fatalf("OpenAPI document: %v", oaErr)
	}
	return oaVal
}

func checkOpenAPI(t testing.TB, req *http.Request, resp *http.Response) {
	t.Helper()
	oaValidator(t)
	resp.Request = req
	ok, errs := oaVal.ValidateHttpResponse(req, resp)
	if !ok && (resp.StatusCode == 404 || resp.StatusCode == 405) && len(errs) == 1 && strings.Contains(errs[0].Message, "not found") {
		return // an unrouted path or method: nothing in the document to check against
	}
	if !ok {
		for _, e := range errs {
			t.Errorf("%s %s → %d: response does not match the OpenAPI document: %s (%s)", req.Method, req.URL.Path, resp.StatusCode, e.Message, e.Reason)
			for _, se := range e.SchemaValidationErrors {
				t.Errorf("  schema: %s at %s", se.Reason, se.FieldPath)
			}
		}
	}
}

// checkCoverageJSON validates a document against the CoverageJSON 1.0 JSON
// schema (OGC CoverageJSON repository, testdata/coveragejson.json).
func checkCoverageJSON(t testing.TB, raw []byte) {
	t.Helper()
	inst, err := jsonschema.UnmarshalJSON(bytes.NewReader(raw))
	if err != nil {
		t.Fatalf("CoverageJSON answer is not JSON: %v", err)
	}
	if err := covSchema(t).Validate(inst); err != nil {
		t.Errorf("CoverageJSON answer fails the CoverageJSON 1.0 schema: %v", err)
	}
}

// covSchema is the compiled CoverageJSON 1.0 schema.
func covSchema(t testing.TB) *jsonschema.Schema {
	t.Helper()
	cjOnce.Do(func() {
		f, err := os.Open("testdata/coveragejson.json")
		if err != nil {
			cjErr = err
			return
		}
		defer f.Close()
		doc, err := jsonschema.UnmarshalJSON(f)
		if err != nil {
			cjErr = err
			return
		}
		c := jsonschema.NewCompiler()
		if err := c.AddResource("https://schemas.opengis.net/covjson/1.0/coveragejson.json", doc); err != nil {
			cjErr = err
			return
		}
		cjSch, cjErr = c.Compile("https://schemas.opengis.net/covjson/1.0/coveragejson.json")
	})
	if cjErr != nil {
		t.Fatalf("CoverageJSON schema: %v", cjErr)
	}
	return cjSch
}

// checkProblem checks RFC 9457 members and our catalogue.
func checkProblem(t testing.TB, raw []byte, status int) {
	t.Helper()
	var p Problem
	if err := json.Unmarshal(raw, &p); err != nil {
		t.Fatalf("problem body: %v", err)
	}
	k, ok := problemKinds[p.Code]
	if !ok || p.Type != k.Type || p.Status != status || p.Title == "" {
		t.Errorf("problem %+v (HTTP %d) is not a catalogued kind with matching type and status", p, status)
	}
}

func nopLogger() *slog.Logger { return slog.New(slog.DiscardHandler) }

// serve starts e's job queue on deps.Store with the service's workers (workers at a time;
// 0 runs none, for a replica that only takes requests) and e's handler and test server on
// deps, all stopped when the test ends.
func (e *env) serve(t testing.TB, deps Deps, workers int) {
	t.Helper()
	ctx := context.Background()
	h := jobs.Handlers{Import: ImportWorker(deps.Store, nil), Export: ExportWorker(deps), Calibrate: CalibrationWorker(deps), Statistics: StatisticsWorker(deps)}
	q, err := queue.Open(ctx, deps.Store, h, queue.Options{Workers: workers, PollInterval: 100 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	e.q = q
	t.Cleanup(func() { q.Close() })
	if err := q.Migrate(ctx); err != nil {
		t.Fatal(err)
	}
	if err := q.Start(ctx); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		c, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		_ = q.Stop(c)
	})
	deps.Jobs = q
	e.handler = New(deps)
	e.ts = httptest.NewServer(e.handler)
	t.Cleanup(e.ts.Close)
}
