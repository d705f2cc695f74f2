package server

import (
	"bytes"
	"context"
	"fmt"
	"log/slog"
	"mime/multipart"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"ridgeflank/evaluate"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
	"ridgeflank/store/pgtest"
)

// instance is one instance of the service (its own store connection pool, job queue, caches and
// HTTP server) over a database and grid directory it shares with other instances.
func instance(t *testing.T, dbURL, dataDir, editor string, datasetTTL time.Duration) *env {
	t.Helper()
	ctx := context.Background()
	st, err := store.Open(ctx, store.Config{DatabaseURL: dbURL, DataDir: dataDir, Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	e := &env{t: t, backend: store.BackendPostGIS, st: st, editor: editor}
	own := t.TempDir() // uploads and exports are per instance; grids are shared
	deps := Deps{Store: st, Version: "test", Assets: testAssets(),
		Config: Config{RateLimitPerMinute: -1, UploadDir: filepath.Join(own, "uploads"), ExportDir: filepath.Join(own, "exports")}}
	deps.Evaluate = evaluate.New(evaluate.Config{Store: st, Version: deps.Version, DatasetTTL: datasetTTL})
	e.serve(t, deps, 1)
	return e
}

// uploadAge uploads a 20 × 10 age grid (values base + column index, Ma) as id through e and
// waits for its import job.
func uploadAge(t *testing.T, e *env, id string, base float32) {
	t.Helper()
	g := geo.NewGrid(20, 10, -149.975, -10.025, 0.05, 0.05, geo.CellCentre)
	for i := range g.Data {
		g.Data[i] = base + float32(i%20)
	}
	path := filepath.Join(t.TempDir(), id+".tif")
	if err := gdal.WriteCOG(path, g, gdal.Meta{Units: "Ma", Name: id}); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var body bytes.Buffer
	mw := multipart.NewWriter(&body)
	mw.WriteField("kind", "age")
	mw.WriteField("id", id)
	fw, _ := mw.CreateFormFile("file", id+".tif")
	fw.Write(raw)
	mw.Close()
	up := e.do("POST", "/api/grids", &body, "Content-Type", mw.FormDataContentType(), "Authorization", "Bearer "+e.editor)
	e.want(up, 202)
	if job := e.waitJob(jobOf(up)); job["state"] != "succeeded" {
		t.Fatalf("import of %s: %v", id, job)
	}
}

// Two instances of the service over one PostGIS database and one grid directory (as replicas
// behind a load balancer): a grid imported through one is served by the other, and a dataset
// replaced or deleted through one is answered in its new state by the other once its dataset
// cache has expired (evaluate.Config.DatasetTTL, short here), while the other had it cached.
func TestTwoInstancesShareDatabaseAndGrids(t *testing.T) {
	if testing.Short() {
		t.Skip("runs two service instances on PostGIS")
	}
	dbURL := pgtest.NewDB(t)
	grids := t.TempDir()
	// The first Open migrates; the token is the same for both (one database).
	a := instance(t, dbURL, grids, "", 0)
	_, editor, err := a.st.CreateToken(context.Background(), "editor", store.RoleEditor)
	if err != nil {
		t.Fatal(err)
	}
	a.editor = editor
	const ttl = 200 * time.Millisecond
	b := instance(t, dbURL, grids, editor, ttl)

	// Imported through A, served by B.
	uploadAge(t, a, "age-one", 10)
	b.want(b.get("/api/grids/age-one"), 200)
	a.want(a.do("POST", "/api/datasets", strings.NewReader(`{"id":"shared","name":"Shared","age_grid_id":"age-one"}`),
		"Content-Type", "application/json", "Authorization", "Bearer "+editor), 201)
	pos := "/api/collections/shared/position?coords=" + url.QueryEscape(fmt.Sprintf("POINT(%g %g)", -149.5, -10.2)) + "&parameter-name=seafloor_age"
	ageAt := func(e *env) float64 {
		t.Helper()
		r := e.get(pos)
		e.want(r, 200)
		return covValue(t, r.json(t), PSeafloorAge, 0)
	}
	first := ageAt(b) // B now has the dataset cached
	if want := ageAt(a); first != want || first < 10 || first > 29 {
		t.Fatalf("B samples age-one as %g, A as %g; want equal values within the grid's 10..29", first, want)
	}

	// Replaced through A (deleted and created again under its id with another grid, uploaded
	// through B): B answers from the new grid, whose values are the old ones + 90 cell by cell.
	uploadAge(t, b, "age-two", 100)
	if got := ageAt(b); got != first { // cached again just before the change
		t.Fatalf("B before the replacement: %g, want %g", got, first)
	}
	a.want(a.do("DELETE", "/api/datasets/shared", nil, "Authorization", "Bearer "+editor), 204)
	a.want(a.do("POST", "/api/datasets", strings.NewReader(`{"id":"shared","name":"Shared again","age_grid_id":"age-two"}`),
		"Content-Type", "application/json", "Authorization", "Bearer "+editor), 201)
	if got := ageAt(a); got != first+90 {
		t.Fatalf("A after the replacement: %g, want %g", got, first+90)
	}
	changed := time.Now()
	for {
		got := ageAt(b)
		if got == first+90 {
			break
		}
		if got != first {
			t.Fatalf("B answers %g, neither the old %g nor the new %g", got, first, first+90)
		}
		if time.Since(changed) > ttl+time.Second {
			t.Fatalf("B still answers the replaced dataset %v after the change (dataset TTL %v)", time.Since(changed), ttl)
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Logf("replacement seen by the other instance after %v (dataset TTL %v)", time.Since(changed), ttl)

	// Deleted through A: B answers 404 for it.
	a.want(a.do("DELETE", "/api/datasets/shared", nil, "Authorization", "Bearer "+editor), 204)
	changed = time.Now()
	for {
		r := b.get(pos)
		if r.StatusCode == 404 {
			break
		}
		b.want(r, 200)
		if time.Since(changed) > ttl+time.Second {
			t.Fatalf("B still answers the deleted dataset %v after the delete", time.Since(changed))
		}
		time.Sleep(20 * time.Millisecond)
	}
	wantProblem(t, b.get("/api/datasets/shared"), 404, CodeNotFound)
	// Both grids are still catalogued and readable through either instance.
	a.want(a.get("/api/grids/age-two"), 200)
	b.want(b.get("/api/grids/age-one"), 200)
}
