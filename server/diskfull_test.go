package server

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"ridgeflank/store"
	"ridgeflank/store/storetest"
)

func (q *recordingJobs) queued() int {
	q.mu.Lock()
	defer q.mu.Unlock()
	return len(q.imports)
}

// A grid directory short of free space: /readyz says not ready and why, grid uploads answer 507
// insufficient-storage with nothing stored or queued, and both recover when space is back. The
// free space comes from an injected function (no real full disk is needed).
func TestGridDirectoryLowOnSpace(t *testing.T) {
	dir := t.TempDir()
	st := storetest.OpenStore(t, store.BackendSQLite, dir)
	ctx := context.Background()
	_, editor, err := st.CreateToken(ctx, "editor", store.RoleEditor)
	if err != nil {
		t.Fatal(err)
	}
	var free atomic.Int64
	free.Store(10 << 30)
	var askedDir atomic.Value
	q := &recordingJobs{}
	uploads := filepath.Join(dir, "uploads")
	h := New(Deps{Store: st, Version: "test", Jobs: q,
		FreeBytes: func(d string) (int64, error) { askedDir.Store(d); return free.Load(), nil },
		Config:    Config{RateLimitPerMinute: -1, UploadDir: uploads, ExportDir: filepath.Join(dir, "exports")}})
	ts := httptest.NewServer(h)
	t.Cleanup(ts.Close)

	ready := func(want int) map[string]any {
		t.Helper()
		deadline := time.Now().Add(3 * time.Second) // answers are reused for a second
		for {
			resp, err := http.Get(ts.URL + "/readyz")
			if err != nil {
				t.Fatal(err)
			}
			var doc map[string]any
			err = json.NewDecoder(resp.Body).Decode(&doc)
			resp.Body.Close()
			if err != nil {
				t.Fatal(err)
			}
			if resp.StatusCode == want {
				return doc["checks"].(map[string]any)
			}
			if time.Now().After(deadline) {
				t.Fatalf("/readyz %d, want %d: %v", resp.StatusCode, want, doc)
			}
			time.Sleep(50 * time.Millisecond)
		}
	}
	upload := func(n int) *http.Response {
		t.Helper()
		var body bytes.Buffer
		mw := multipart.NewWriter(&body)
		mw.WriteField("kind", "age")
		fw, _ := mw.CreateFormFile("file", "age.tif")
		fw.Write(bytes.Repeat([]byte{0x2a}, n))
		mw.Close()
		req, _ := http.NewRequest("POST", ts.URL+"/api/grids", &body)
		req.Header.Set("Content-Type", mw.FormDataContentType())
		req.Header.Set("Authorization", "Bearer "+editor)
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		return resp
	}
	want507 := func(resp *http.Response) {
		t.Helper()
		raw, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		if resp.StatusCode != http.StatusInsufficientStorage || resp.Header.Get("Content-Type") != "application/problem+json" {
			t.Fatalf("upload: %d %s, want 507 problem+json: %s", resp.StatusCode, resp.Header.Get("Content-Type"), raw)
		}
		var p Problem
		if err := json.Unmarshal(raw, &p); err != nil {
			t.Fatal(err)
		}
		if p.Code != CodeInsufficientSpace || p.LimitName != "min_free_grid_bytes" || p.Limit == nil || *p.Limit != DefaultMinFreeGridBytes {
			t.Fatalf("problem %s", raw)
		}
		if n := q.queued(); n != 0 {
			t.Fatalf("%d imports queued", n)
		}
		if left, _ := os.ReadDir(uploads); len(left) != 0 {
			t.Fatalf("upload directory holds %d files", len(left))
		}
		if gs, err := st.ListGrids(ctx, store.GridFilter{}); err != nil || len(gs) != 0 {
			t.Fatalf("grids %v, %v", gs, err)
		}
	}

	checks := ready(200)
	if !strings.HasPrefix(checks["grid_storage"].(string), "ok (10240 MiB free") {
		t.Errorf("grid_storage %q", checks["grid_storage"])
	}
	if d, _ := askedDir.Load().(string); d != st.Blobs().(interface{ Dir() string }).Dir() {
		t.Errorf("free space asked of %q, not of the grid directory", d)
	}

	// 100 MiB left, under the default reserve of 256 MiB.
	free.Store(100 << 20)
	checks = ready(503)
	if got := checks["grid_storage"].(string); got != "100 MiB free in the grid directory, below the reserve of 256 MiB (min_free_grid_bytes)" {
		t.Errorf("grid_storage %q", got)
	}
	if checks["store"] != "ok (sqlite)" {
		t.Errorf("store check %q: only the disk is short", checks["store"])
	}
	want507(upload(1000))

	// Above the reserve, but not by as much as the upload's length.
	free.Store(DefaultMinFreeGridBytes + 500)
	ready(200)
	want507(upload(1000))

	// Space is back: the upload is taken.
	free.Store(10 << 30)
	ready(200)
	resp := upload(1000)
	resp.Body.Close()
	if resp.StatusCode != http.StatusAccepted || q.queued() != 1 {
		t.Fatalf("upload with space: %d, %d imports queued", resp.StatusCode, q.queued())
	}
}

// Store outages and full disks map to their problems even through other wrappers and a
// deadline that ran out meanwhile.
func TestStoreFaultProblems(t *testing.T) {
	down := fmt.Errorf("listing regions: %w", fmt.Errorf("%w: %w", store.ErrUnavailable, context.DeadlineExceeded))
	p := asProblem(down)
	if p.Status != 503 || p.Code != CodeStoreUnavailable || p.retryAfter != StoreRetryAfter {
		t.Errorf("unavailable: %d %s retry %v", p.Status, p.Code, p.retryAfter)
	}
	rec := httptest.NewRecorder()
	writeProblem(rec, httptest.NewRequest("GET", "/api/regions", nil), p)
	if got := rec.Header().Get("Retry-After"); got != "5" { // RFC 9110 §10.2.3: delay-seconds
		t.Errorf("Retry-After %q", got)
	}
	full := fmt.Errorf("writing grid file: %w", store.NoSpace(&os.PathError{Op: "write", Path: "x", Err: syscall.ENOSPC}))
	if p := asProblem(full); p.Status != 507 || p.Code != CodeInsufficientSpace {
		t.Errorf("ENOSPC: %d %s", p.Status, p.Code)
	}
	if p := asProblem(context.DeadlineExceeded); p.Code != CodeTimeout || p.retryAfter != 0 {
		t.Errorf("a plain deadline: %s retry %v", p.Code, p.retryAfter)
	}
}

// A 503 or 507 the service means to give is a warning in the log; any other server fault an
// error.
func TestFaultLogLevels(t *testing.T) {
	cases := []struct {
		name  string
		err   error
		level string
	}{
		{"store unavailable", fmt.Errorf("x: %w", store.ErrUnavailable), "level=WARN"},
		{"disk full", store.NoSpace(&os.PathError{Op: "write", Path: "x", Err: syscall.ENOSPC}), "level=WARN"},
		{"a fault", errors.New("something broke"), "level=ERROR"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var logs bytes.Buffer
			s := &server{log: slog.New(slog.NewTextHandler(&logs, nil))}
			rec := httptest.NewRecorder()
			s.h(func(http.ResponseWriter, *http.Request) error { return tc.err })(rec, httptest.NewRequest("GET", "/api/regions", nil))
			if rec.Code < 500 {
				t.Fatalf("status %d", rec.Code)
			}
			if !strings.Contains(logs.String(), tc.level) {
				t.Fatalf("want %s, logged %q", tc.level, logs.String())
			}
		})
	}
}
