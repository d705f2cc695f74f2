package server

import (
	"bytes"
	"context"
	"mime/multipart"
	"os"
	"path/filepath"
	"testing"

	"ridgeflank/demobasin"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
	"ridgeflank/store/pgtest"
	_ "ridgeflank/store/s3blob" // the s3:// grid store
	"ridgeflank/store/s3blob/s3test"
)

// newReplica serves the API over its own handle on the store cfg names, with its own data
// directory (uploads, exports) and a job queue that runs jobs only when workers >= 0.
func newReplica(t *testing.T, cfg store.Config, workers int, limits Limits) (*env, string) {
	t.Helper()
	ctx := context.Background()
	dir := t.TempDir()
	cfg.DataDir = dir
	cfg.Logger = nopLogger()
	st, err := store.Open(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	e := &env{t: t, backend: st.Backend(), st: st, dataset: demobasin.DatasetID}
	c := Config{UploadDir: filepath.Join(dir, "uploads"), ExportDir: filepath.Join(dir, "exports"), RateLimitPerMinute: -1}
	deps := Deps{Store: st, Version: "test", Config: c, Assets: testAssets(), Limits: limits}
	e.serve(t, deps, workers)
	return e, dir
}

// TestReplicasShareUploadsAndExports runs two servers on one PostGIS database and one bucket,
// as replicas of a Deployment without a shared volume: A accepts requests but runs no jobs, B
// runs them. A grid uploaded through A is imported by B's worker, and an export asked of A and
// written by B's worker is downloaded through A; neither server keeps the files on its disk.
func TestReplicasShareUploadsAndExports(t *testing.T) {
	dbURL := pgtest.NewDB(t)
	srv := s3test.Start(t, "replicas")
	gridStore, osc := srv.Config("grids")
	cfg := store.Config{DatabaseURL: dbURL, GridStore: gridStore, ObjectStore: osc}
	limits := Limits{SyncExportCells: 100}
	a, dirA := newReplica(t, cfg, -1, limits)
	b, dirB := newReplica(t, cfg, 1, limits)
	ctx := context.Background()
	if _, err := demobasin.Install(ctx, a.st, testBasin(t)); err != nil {
		t.Fatal(err)
	}
	_, editor, err := a.st.CreateToken(ctx, "test-editor", store.RoleEditor)
	if err != nil {
		t.Fatal(err)
	}

	// Upload through A (the same small age grid as the single-server test).
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
	mw.WriteField("id", "replica-age")
	fw, _ := mw.CreateFormFile("file", "age.tif")
	fw.Write(raw)
	mw.Close()
	up := a.do("POST", "/api/grids", &body, "Content-Type", mw.FormDataContentType(), "Authorization", "Bearer "+editor)
	a.want(up, 202)
	if job := a.waitJob(jobOf(up)); job["state"] != "succeeded" {
		t.Fatalf("upload through A, imported by B: %v", job)
	}
	b.want(b.get("/api/grids/replica-age"), 200)
	a.want(a.get("/api/grids/replica-age"), 200)

	// Export asked of A, written by B, downloaded through A.
	poly := esc("POLYGON((-145 -31,-142 -31,-142 -28,-145 -28,-145 -31))")
	r := a.get("/api/collections/" + demobasin.DatasetID + "/area?coords=" + poly + "&parameter-name=residual_depth&f=COG")
	a.want(r, 202)
	if job := a.waitJob(jobOf(r)); job["state"] != "succeeded" {
		t.Fatalf("export job %v", job)
	}
	f := a.get(jobOf(r) + "/result")
	a.want(f, 200)
	if !bytes.HasPrefix(f.Body, []byte("II*\x00")) {
		t.Errorf("export starts %q, want a little-endian TIFF", f.Body[:min(8, len(f.Body))])
	}
	if fb := b.get(jobOf(r) + "/result"); !bytes.Equal(fb.Body, f.Body) {
		t.Errorf("the replicas send different export files (%d and %d bytes)", len(fb.Body), len(f.Body))
	}

	// Nothing on either server's disk; the upload is gone from the bucket, the export is kept.
	for _, dir := range []string{dirA, dirB} {
		for _, d := range []string{"uploads", "exports"} {
			if files, _ := filepath.Glob(filepath.Join(dir, d, "*")); len(files) > 0 {
				t.Errorf("files left on a server's disk: %v", files)
			}
		}
	}
	count := map[string]int{}
	for _, q := range srv.Requests() {
		if q.Status/100 == 2 && (q.Method == "PUT" || q.Method == "DELETE") {
			count[q.Method+" "+filepath.Dir(q.Path)]++
		}
	}
	want := map[string]int{"PUT /replicas/grids/uploads": 1, "DELETE /replicas/grids/uploads": 1, "PUT /replicas/grids/exports": 1, "DELETE /replicas/grids/exports": 0}
	for k, n := range want {
		if count[k] != n {
			t.Errorf("%s: %d requests, want %d (all: %v)", k, count[k], n, count)
		}
	}
	sf := a.st.Blobs().(store.SharedFiles)
	if err := sf.GetFile(ctx, "uploads/x", filepath.Join(t.TempDir(), "x")); err == nil {
		t.Error("a made-up upload name was found")
	}
}
