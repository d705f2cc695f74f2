package server

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"ridgeflank/store"
	"ridgeflank/store/pgtest"
)

// outcome is one answer seen by the load.
type outcome struct {
	method, path string
	status       int
	code         string // problem code, for problem answers
	retryAfter   string
	took         time.Duration
	regionID     string // a region whose creation was acknowledged (201)
	err          error  // the request failed without an answer
}

// load drives a small mixed load (list regions, list collections, create regions) from a few
// clients against base until stop is closed, and returns every outcome.
func load(base, token string, clients int, stop <-chan struct{}) []outcome {
	var mu sync.Mutex
	var all []outcome
	var wg sync.WaitGroup
	client := &http.Client{Timeout: 30 * time.Second}
	for c := range clients {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := 0; ; i++ {
				select {
				case <-stop:
					return
				default:
				}
				var req *http.Request
				switch i % 3 {
				case 0:
					req, _ = http.NewRequest("GET", base+"/api/regions?limit=5", nil)
				case 1:
					req, _ = http.NewRequest("GET", base+"/api/collections", nil)
				default:
					lon, lat := float64(c*10+i%10), float64(i%50)-25
					body := fmt.Sprintf(`{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[%g,%g],[%g,%g],[%g,%g],[%g,%g]]]},"properties":{"name":"load %d-%d"}}`,
						lon, lat, lon+1, lat, lon+1, lat+1, lon, lat, c, i)
					req, _ = http.NewRequest("POST", base+"/api/regions", strings.NewReader(body))
					req.Header.Set("Content-Type", MediaGeoJSON)
				}
				req.Header.Set("Authorization", "Bearer "+token)
				o := outcome{method: req.Method, path: req.URL.Path}
				t0 := time.Now()
				resp, err := client.Do(req)
				if err != nil {
					o.err, o.took = err, time.Since(t0)
				} else {
					raw, _ := io.ReadAll(resp.Body)
					resp.Body.Close()
					o.took, o.status, o.retryAfter = time.Since(t0), resp.StatusCode, resp.Header.Get("Retry-After")
					var m struct {
						Code string `json:"code"`
						ID   string `json:"id"`
					}
					_ = json.Unmarshal(raw, &m)
					o.code = m.Code
					if resp.StatusCode == http.StatusCreated {
						o.regionID = m.ID
					}
				}
				mu.Lock()
				all = append(all, o)
				mu.Unlock()
				time.Sleep(5 * time.Millisecond)
			}
		}()
	}
	wg.Wait()
	return all
}

// runLoad runs load for d.
func runLoad(base, token string, clients int, d time.Duration) []outcome {
	stop := make(chan struct{})
	time.AfterFunc(d, func() { close(stop) })
	return load(base, token, clients, stop)
}

func readyStatus(t *testing.T, base string) (int, string) {
	t.Helper()
	resp, err := http.Get(base + "/readyz")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	raw, _ := io.ReadAll(resp.Body)
	return resp.StatusCode, string(raw)
}

// waitReady polls /readyz until it answers want, for at most within.
func waitReady(t *testing.T, base string, want int, within time.Duration) time.Duration {
	t.Helper()
	t0 := time.Now()
	for {
		code, body := readyStatus(t, base)
		if code == want {
			return time.Since(t0)
		}
		if time.Since(t0) > within {
			t.Fatalf("/readyz still %d after %v, want %d: %s", code, within, want, body)
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// The PostGIS store going away and coming back under load: while the database is down the
// service says so (readiness false; 503 store-unavailable with Retry-After, fast, never 500),
// and when it is back the same service (no restart) is ready and answers again, with every
// write it acknowledged still stored. The database is a private cluster (pgtest.Cluster), so
// stopping it touches no other test.
func TestPostGISOutageUnderLoad(t *testing.T) {
	if testing.Short() {
		t.Skip("starts and stops a PostgreSQL server")
	}
	c := pgtest.NewCluster(t)
	ctx := context.Background()
	dir := t.TempDir()
	st, err := store.Open(ctx, store.Config{DatabaseURL: c.URL(), DataDir: dir, Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	_, editor, err := st.CreateToken(ctx, "load", store.RoleEditor)
	if err != nil {
		t.Fatal(err)
	}
	// A request deadline well above the bound asserted below: answers must come from failing
	// fast, not from running into the deadline.
	const requestTimeout = 10 * time.Second
	const fastBound = 2 * time.Second // "fails fast": common practice, no source
	h := New(Deps{Store: st, Version: "test", Limits: Limits{RequestTimeout: requestTimeout},
		Config: Config{RateLimitPerMinute: -1, UploadDir: filepath.Join(dir, "uploads"), ExportDir: filepath.Join(dir, "exports")}})
	ts := httptest.NewServer(h)
	t.Cleanup(ts.Close)
	const clients = 4

	var acknowledged []string
	collect := func(phase string, outs []outcome, allow func(o outcome) bool) (ok, unavailable int) {
		t.Helper()
		for _, o := range outs {
			if o.regionID != "" {
				acknowledged = append(acknowledged, o.regionID)
			}
			switch {
			case o.err != nil:
				t.Errorf("%s: %s %s: no answer: %v", phase, o.method, o.path, o.err)
			case !allow(o):
				t.Errorf("%s: %s %s answered %d %q (Retry-After %q) in %v", phase, o.method, o.path, o.status, o.code, o.retryAfter, o.took)
			case o.status < 300:
				ok++
			default:
				unavailable++
			}
		}
		return ok, unavailable
	}
	success := func(o outcome) bool { return o.status == 200 || o.status == 201 }
	storeDown := func(o outcome) bool {
		if o.took > fastBound {
			return false
		}
		if success(o) { // finished before the stop, or served without the database
			return true
		}
		secs, err := strconv.Atoi(o.retryAfter)
		return o.status == 503 && o.code == CodeStoreUnavailable && err == nil && secs > 0
	}

	// Healthy.
	waitReady(t, ts.URL, 200, 5*time.Second)
	if ok, _ := collect("before the outage", runLoad(ts.URL, editor, clients, time.Second), success); ok == 0 {
		t.Fatal("no request succeeded before the outage")
	}

	// Down: the load keeps running while the server stops and for a while after.
	stop := make(chan struct{})
	var during []outcome
	done := make(chan struct{})
	go func() { during = load(ts.URL, editor, clients, stop); close(done) }()
	time.Sleep(300 * time.Millisecond)
	if err := c.Stop(); err != nil {
		t.Fatal(err)
	}
	tookReady := waitReady(t, ts.URL, 503, 5*time.Second)
	_, body := readyStatus(t, ts.URL)
	if !strings.Contains(body, `"store":"unreachable`) {
		t.Errorf("/readyz while the database is down does not name the store: %s", body)
	}
	time.Sleep(1500 * time.Millisecond)
	close(stop)
	<-done
	_, down := collect("during the outage", during, storeDown)
	if down == 0 {
		t.Errorf("no request answered 503 store-unavailable during the outage (%d requests)", len(during))
	}
	var slowest time.Duration
	for _, o := range during {
		slowest = max(slowest, o.took)
	}
	t.Logf("outage: readiness false after %v; %d requests, %d answered 503, slowest %v", tookReady, len(during), down, slowest)

	// Back, without restarting the service.
	if err := c.Start(); err != nil {
		t.Fatal(err)
	}
	tookBack := waitReady(t, ts.URL, 200, 15*time.Second)
	// Pooled connections broken by the stop are dropped as they are found; after that every
	// request succeeds.
	deadline := time.Now().Add(10 * time.Second)
	for streak := 0; streak < 20; {
		outs := runLoad(ts.URL, editor, 1, 50*time.Millisecond)
		for _, o := range outs {
			if o.regionID != "" {
				acknowledged = append(acknowledged, o.regionID)
			}
			if success(o) {
				streak++
			} else {
				streak = 0
			}
		}
		if time.Now().After(deadline) {
			t.Fatalf("queries do not succeed 10 s after the database is back (last: %+v)", outs)
		}
	}
	ok, _ := collect("after the outage", runLoad(ts.URL, editor, clients, time.Second), success)
	t.Logf("recovery: readiness true %v after the start; %d requests succeeded after it", tookBack, ok)

	// No acknowledged write is lost.
	if len(acknowledged) == 0 {
		t.Fatal("no write was acknowledged")
	}
	for _, id := range acknowledged {
		if _, err := st.GetRegion(ctx, id); err != nil {
			t.Errorf("acknowledged region %s: %v", id, err)
		}
	}
	t.Logf("%d acknowledged writes all stored", len(acknowledged))
}
