package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"ridgeflank/demobasin"
	"ridgeflank/store"
	"ridgeflank/store/pgtest"
	"ridgeflank/store/s3blob/s3test"
)

// syncBuffer collects a server's log lines from its goroutine.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// startServeEnv runs `ridgeflank serve` with extra arguments and environment, on a free
// loopback port; everything it prints is collected in out.
func startServeEnv(t *testing.T, env map[string]string, out *syncBuffer, args ...string) (base string) {
	t.Helper()
	ctx, cancel := context.WithCancel(withEnv(context.Background(), func(k string) (string, bool) {
		v, ok := env[k]
		return v, ok
	}))
	pr, pw := io.Pipe()
	done := make(chan int, 1)
	go func() {
		done <- run(ctx, append([]string{"serve", "--addr", "127.0.0.1:0", "--log-level", "debug"}, args...), io.MultiWriter(pw, out), out)
		pw.Close()
	}()
	t.Cleanup(func() {
		cancel()
		if code := <-done; code != 0 {
			t.Errorf("serve exited %d", code)
		}
	})
	sc := bufio.NewScanner(pr)
	deadline := time.AfterFunc(120*time.Second, func() { pw.CloseWithError(io.ErrUnexpectedEOF) })
	defer deadline.Stop()
	for sc.Scan() {
		if i := strings.Index(sc.Text(), "listening on "); i >= 0 {
			base = strings.Fields(sc.Text()[i+len("listening on "):])[0]
			break
		}
	}
	if base == "" {
		t.Fatalf("serve did not start: %s", out.String())
	}
	go io.Copy(io.Discard, pr)
	return base
}

func get(t *testing.T, url string) (int, []byte) {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	return resp.StatusCode, b
}

// TestServeGridsInObjectStore serves the demo basin once from a grid directory and once from
// a bucket of a local S3-compatible server: the bucket's grids are read by GDAL in place
// (HTTP range requests, nothing stored locally), every answer equals the directory's, and the
// object store's secret appears in no log line and no answer.
func TestServeGridsInObjectStore(t *testing.T) {
	srv := s3test.Start(t, "ridgeflank-grids")
	env := map[string]string{
		"RIDGEFLANK_S3_ACCESS_KEY_ID":     srv.AccessKeyID,
		"RIDGEFLANK_S3_SECRET_ACCESS_KEY": srv.SecretAccessKey,
	}
	var localOut, s3Out syncBuffer
	localDir, s3Dir := t.TempDir(), t.TempDir()
	local := startServeEnv(t, nil, &localOut, "--data", localDir)
	remote := startServeEnv(t, env, &s3Out, "--data", s3Dir, "--grid-store", "s3://ridgeflank-grids/deploy/grids", "--s3-endpoint", srv.URL)

	// The demo basin's grids went to the bucket, none to the data directory.
	var puts int
	for _, r := range srv.Requests() {
		if r.Method == "PUT" && strings.HasPrefix(r.Path, "/ridgeflank-grids/deploy/grids/") && strings.HasSuffix(r.Path, ".tif") && r.Status == 200 {
			puts++
		}
	}
	if puts < 3 {
		t.Fatalf("%d grid files uploaded to the bucket, want the demo basin's (at least 3)", puts)
	}
	if files, _ := filepath.Glob(filepath.Join(s3Dir, "grids", "*.tif")); len(files) > 0 {
		t.Fatalf("grid files stored locally: %v", files)
	}

	paths := []string{
		"/api/collections/quillon-basin-synthetic/position?coords=POINT(-135%20-30)",
		"/api/collections/quillon-basin-synthetic/position?coords=MULTIPOINT((-148.2%20-44.1),(-121.3%20-21.7),(-134%20-25))&model=psm",
		"/api/collections/quillon-basin-synthetic/area?coords=POLYGON((-140%20-35,-130%20-35,-130%20-25,-140%20-25,-140%20-35))&resolution-x=0.5&resolution-y=0.5&f=CoverageJSON",
		"/tiles/quillon-basin-synthetic/residual_depth/3/1/4.png",
		"/tiles/quillon-basin-synthetic/observed_depth/5/4/18.png",
	}
	before := len(srv.Requests())
	for _, p := range paths {
		lc, lb := get(t, local+p)
		rc, rb := get(t, remote+p)
		if lc != 200 {
			t.Fatalf("%s from the directory: %d %s", p, lc, lb)
		}
		lb = bytes.ReplaceAll(lb, []byte(local), nil)
		rb = bytes.ReplaceAll(rb, []byte(remote), nil)
		if rc != lc || !bytes.Equal(lb, rb) {
			t.Errorf("%s: the bucket answers %d (%d bytes), the directory %d (%d bytes)\nbucket: %.300s\ndirectory: %.300s", p, rc, len(rb), lc, len(lb), rb, lb)
		}
	}
	// GDAL read the COG files through /vsis3/: signed range requests, no whole download.
	var ranged, whole int
	for _, r := range srv.Requests()[before:] {
		if r.Method != "GET" || !strings.HasSuffix(r.Path, ".tif") {
			continue
		}
		if r.Status != 206 && r.Status != 200 {
			t.Errorf("GDAL's request %s %s (Range %q) answered %d", r.Method, r.Path, r.Range, r.Status)
		}
		if r.Range != "" {
			ranged++
		} else {
			whole++
		}
	}
	t.Logf("GDAL: %d range requests, %d whole GETs", ranged, whole)
	if ranged == 0 || whole > 0 {
		t.Errorf("GDAL made %d range requests and %d whole-object GETs; want range requests only", ranged, whole)
	}

	// The secret is in no log line and no answer.
	for _, p := range []string{"/api", "/api/collections", "/api/collections/quillon-basin-synthetic", "/api/grids", "/api/datasets", "/healthz", "/readyz", "/metrics", "/api/openapi.json"} {
		_, b := get(t, remote+p)
		if bytes.Contains(b, []byte(srv.SecretAccessKey)) {
			t.Errorf("%s answers the object store's secret", p)
		}
	}
	if strings.Contains(s3Out.String(), srv.SecretAccessKey) {
		t.Errorf("the server's output holds the object store's secret")
	}
	if !strings.Contains(s3Out.String(), "level=DEBUG") {
		t.Errorf("the log was not captured at debug level: %.500s", s3Out.String())
	}
}

// TestGridStoreFlags checks the refusals of the object store flags.
func TestGridStoreFlags(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--grid-store", "s3://b/p", "--grid-dir", dir}, "exclude each other"},
		{[]string{"--s3-endpoint", "http://127.0.0.1:1"}, "needs --grid-store"},
		{[]string{"--grid-store", "ftp://b/p"}, "s3://bucket"},
	} {
		code, _, stderr := runCLI(t, nil, append([]string{"migrate", "--status", "--data", dir}, c.args...)...)
		if code != 2 || !strings.Contains(stderr, c.want) {
			t.Errorf("migrate %v: exit %d, %q; want 2 and %q", c.args, code, stderr, c.want)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "grids")); err == nil {
		t.Log("grid directory created by a refused command")
	}
}

// TestTwoReplicasOnePostGISOneBucket runs two servers on one PostGIS database and one bucket,
// as the Kubernetes Deployment does: grids imported once are read by both (the start-up sweep
// of the second keeps them), both answer alike, and a write through one is read through the
// other. Skipped without a PostGIS server (see scripts/test-db.sh).
func TestTwoReplicasOnePostGISOneBucket(t *testing.T) {
	dbURL := pgtest.NewDB(t)
	srv := s3test.Start(t, "shared-grids")
	gridStore, osc := srv.Config("replicas")
	ctx := context.Background()
	st, err := store.Open(ctx, store.Config{DatabaseURL: dbURL, DataDir: t.TempDir(), GridStore: gridStore, ObjectStore: osc, Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	b, err := demobasin.Generate(demobasin.Options{CellDeg: 0.25})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := demobasin.Install(ctx, st, b); err != nil {
		t.Fatal(err)
	}
	grids, err := st.ListGrids(ctx, store.GridFilter{})
	if err != nil || len(grids) < 3 {
		t.Fatalf("installed grids %v, %v", grids, err)
	}
	st.Close()

	env := map[string]string{"RIDGEFLANK_S3_ACCESS_KEY_ID": srv.AccessKeyID, "RIDGEFLANK_S3_SECRET_ACCESS_KEY": srv.SecretAccessKey, "DATABASE_URL": dbURL}
	args := []string{"--grid-store", gridStore, "--s3-endpoint", srv.URL}
	var outA, outB syncBuffer
	a := startServeEnv(t, env, &outA, append(args, "--data", t.TempDir())...)
	bb := startServeEnv(t, env, &outB, append(args, "--data", t.TempDir())...)

	p := "/api/collections/quillon-basin-synthetic/position?coords=MULTIPOINT((-135%20-30),(-125%20-40))&parameter-name=residual_depth,observed_depth"
	ca, ba := get(t, a+p)
	cb, bbody := get(t, bb+p)
	if ca != 200 || cb != 200 {
		t.Fatalf("positions: %d %s / %d %s", ca, ba, cb, bbody)
	}
	ba, bbody = bytes.ReplaceAll(ba, []byte(a), nil), bytes.ReplaceAll(bbody, []byte(bb), nil)
	if !bytes.Equal(ba, bbody) {
		t.Fatalf("the replicas answer differently:\n%.400s\n%.400s", ba, bbody)
	}
	var cov struct {
		Ranges map[string]struct{ Values []*float64 } `json:"ranges"`
	}
	if err := json.Unmarshal(ba, &cov); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{"observed_depth", "residual_depth"} {
		if v := cov.Ranges[p].Values; len(v) != 2 || v[0] == nil || v[1] == nil {
			t.Fatalf("%s: values %v; want two numbers read from the bucket", p, v)
		}
	}
	var keys []string
	for _, g := range grids {
		keys = append(keys, g.Path)
	}
	for _, k := range keys {
		if c, _ := get(t, srv.URL+"/shared-grids/replicas/"+k); c != 403 {
			t.Fatalf("the test server answered %d to an unsigned request, want 403", c)
		}
	}
	// A write through one replica (with the token the other printed, stored in the shared
	// database) is read through the other.
	tok := ""
	for _, l := range strings.Split(outB.String(), "\n") {
		if strings.HasPrefix(strings.TrimSpace(l), "rft_") {
			tok = strings.TrimSpace(l)
		}
	}
	body := `{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[-145,-30],[-144,-30],[-144,-29],[-145,-30]]]},"properties":{"name":"written through replica A"}}`
	req, _ := http.NewRequest("POST", a+"/api/regions", strings.NewReader(body))
	req.Header.Set("Content-Type", "application/geo+json")
	req.Header.Set("Authorization", "Bearer "+tok)
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	if resp.StatusCode != 201 {
		t.Fatalf("POST /api/regions through A with B's token: %d", resp.StatusCode)
	}
	if c, list := get(t, bb+"/api/regions"); c != 200 || !bytes.Contains(list, []byte("written through replica A")) {
		t.Fatalf("replica B does not list the region written through A: %d %.300s", c, list)
	}
	for _, out := range []string{outA.String(), outB.String()} {
		if strings.Contains(out, srv.SecretAccessKey) {
			t.Errorf("a replica printed the object store's secret")
		}
	}
}
