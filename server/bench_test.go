package server

import (
	"fmt"
	"net/http"
	"net/http/httptest"
	"testing"
	"time"

	"github.com/go-chi/chi/v5"

	"ridgeflank/demobasin"
)

// BenchmarkPosition measures position queries (one point, residual depth,
// through the whole middleware stack, in process) and, in the same run, a
// bare chi handler writing a small JSON body; it reports both rates and
// their ratio.
func BenchmarkPosition(b *testing.B) {
	e := newEnv(b, "sqlite", Config{})
	h := e.handler
	url := fmt.Sprintf("/api/collections/%s/position?coords=POINT(%g%%20%g)&parameter-name=residual_depth",
		e.dataset, demobasin.SwellCentreLon+1, demobasin.SwellCentreLat)
	req := httptest.NewRequest("GET", url, nil)
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, req) // warm the grid cache
	if rec.Code != 200 {
		b.Fatalf("position: %d %s", rec.Code, rec.Body)
	}
	bare := chi.NewRouter()
	bare.Get("/api/collections/{datasetId}/position", func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "application/json")
		_, _ = w.Write([]byte(`{"ok":true}` + "\n"))
	})
	b.ReportAllocs()
	b.ResetTimer()
	start := time.Now()
	for b.Loop() {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest("GET", url, nil))
		if rec.Code != 200 {
			b.Fatal(rec.Code)
		}
	}
	posDur := time.Since(start)
	b.StopTimer()
	n := b.N
	start = time.Now()
	for range n {
		rec := httptest.NewRecorder()
		bare.ServeHTTP(rec, httptest.NewRequest("GET", url, nil))
	}
	bareDur := time.Since(start)
	posQPS := float64(n) / posDur.Seconds()
	bareQPS := float64(n) / bareDur.Seconds()
	b.ReportMetric(posQPS, "position_req/s")
	b.ReportMetric(bareQPS, "bare_chi_req/s")
	b.ReportMetric(posQPS/bareQPS, "position/bare")
}

// BenchmarkResidualTile measures rendering one 256×256 residual-depth tile
// (zoom 6 over the demo basin: window, residual evaluation with the GDH1
// lookup table, colour mapping, PNG encoding), bypassing the ETag, with no
// tile cache (every request renders). BenchmarkResidualTileCached asks the
// same tile of a server keeping rendered tiles (the default).
func BenchmarkResidualTile(b *testing.B) { benchResidualTile(b, -1) }

// BenchmarkResidualTileCached is BenchmarkResidualTile answered from the tile
// cache after the first request.
func BenchmarkResidualTileCached(b *testing.B) { benchResidualTile(b, 0) }

func benchResidualTile(b *testing.B, tileCacheBytes int64) {
	e := newEnv(b, "sqlite", Config{TileCacheBytes: tileCacheBytes})
	url := fmt.Sprintf("/tiles/%s/residual_depth/6/6/36.png", e.dataset)
	rec := httptest.NewRecorder()
	e.handler.ServeHTTP(rec, httptest.NewRequest("GET", url, nil))
	if rec.Code != 200 || rec.Body.Len() < 1000 {
		b.Fatalf("tile: %d, %d bytes", rec.Code, rec.Body.Len())
	}
	b.ReportAllocs()
	for b.Loop() {
		rec := httptest.NewRecorder()
		e.handler.ServeHTTP(rec, httptest.NewRequest("GET", url, nil))
		if rec.Code != 200 {
			b.Fatal(rec.Code)
		}
	}
}
