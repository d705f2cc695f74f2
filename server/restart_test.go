package server

import (
	"bytes"
	"context"
	"encoding/json"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"testing"
	"time"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/jobs"
	"ridgeflank/jobs/queue"
	"ridgeflank/store"
	"ridgeflank/store/storetest"
)

// An upload accepted (202) by a server whose process then stops before the
// import ran is imported by the next process: the job and the streamed file
// are both durable.
func TestAcceptedUploadSurvivesRestart(t *testing.T) {
	for _, backend := range []string{"sqlite", "postgis"} {
		t.Run(backend, func(t *testing.T) {
			ctx := context.Background()
			dir := t.TempDir()
			st := storetest.OpenStore(t, backend, dir)
			_, tok, err := st.CreateToken(ctx, "t", store.RoleEditor)
			if err != nil {
				t.Fatal(err)
			}
			queue := func(h jobs.Handlers, workers int) *queue.Queue {
				q, err := queue.Open(ctx, st, h, queue.Options{Workers: workers, PollInterval: 100 * time.Millisecond})
				if err != nil {
					t.Fatal(err)
				}
				t.Cleanup(func() { q.Close() })
				if err := q.Migrate(ctx); err != nil {
					t.Fatal(err)
				}
				return q
			}

			// First process: accepts the upload but runs no jobs (it "dies").
			q1 := queue(jobs.Handlers{}, -1)
			h1 := New(Deps{Store: st, Jobs: q1, Config: Config{UploadDir: filepath.Join(dir, "uploads"), RateLimitPerMinute: -1}})
			g := geo.NewGrid(8, 6, 10.05, 5.95, 0.1, 0.1, geo.CellCentre)
			for i := range g.Data {
				g.Data[i] = float32(i)
			}
			path := filepath.Join(t.TempDir(), "a.tif")
			if err := gdal.WriteCOG(path, g, gdal.Meta{Units: "Ma"}); err != nil {
				t.Fatal(err)
			}
			raw, _ := os.ReadFile(path)
			var body bytes.Buffer
			mw := multipart.NewWriter(&body)
			mw.WriteField("kind", "age")
			mw.WriteField("id", "survivor")
			fw, _ := mw.CreateFormFile("file", "a.tif")
			fw.Write(raw)
			mw.Close()
			req := httptest.NewRequest("POST", "/api/grids", &body)
			req.Header.Set("Content-Type", mw.FormDataContentType())
			req.Header.Set("Authorization", "Bearer "+tok)
			rec := httptest.NewRecorder()
			h1.ServeHTTP(rec, req)
			if rec.Code != http.StatusAccepted {
				t.Fatalf("upload: %d %s", rec.Code, rec.Body)
			}
			if _, err := st.GetGrid(ctx, "survivor"); err == nil {
				t.Fatal("imported before any worker ran")
			}
			var accepted struct {
				ID int64 `json:"id"`
			}
			if err := json.Unmarshal(rec.Body.Bytes(), &accepted); err != nil || accepted.ID == 0 {
				t.Fatalf("202 body %s", rec.Body)
			}

			// Second process: runs the queue and finishes the import.
			q2 := queue(jobs.Handlers{Import: ImportWorker(st, nil)}, 1)
			if err := q2.Start(ctx); err != nil {
				t.Fatal(err)
			}
			defer q2.Stop(context.Background())
			deadline := time.Now().Add(30 * time.Second)
			for {
				js, err := q2.Get(ctx, accepted.ID)
				if err != nil {
					t.Fatal(err)
				}
				if js.State == jobs.StateSucceeded {
					break
				}
				if time.Now().After(deadline) {
					t.Fatalf("the accepted upload was not imported after the restart: %+v", js)
				}
				time.Sleep(100 * time.Millisecond)
			}
			if gr, err := st.GetGrid(ctx, "survivor"); err != nil || gr.Kind != store.KindAge {
				t.Errorf("imported grid %+v, %v", gr, err)
			}
			left, _ := os.ReadDir(filepath.Join(dir, "uploads"))
			if len(left) != 0 {
				t.Errorf("upload files left behind: %v", left)
			}
		})
	}
}
