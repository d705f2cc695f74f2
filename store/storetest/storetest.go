package storetest

import (
	"context"
	"errors"
	"log/slog"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"ridgeflank/store"
	"ridgeflank/store/pgtest"
)

// Opener opens (or re-opens) one store: every call returns a new handle on the same database
// and grid directory. It must register the handle's Close with t.Cleanup (the suite may also
// close it earlier, so Close must tolerate a second call).
type Opener func(t *testing.T) store.Store

// Run runs the contract suite. fresh is called once per subtest and returns an Opener bound to
// a new, empty database and grid directory.
func Run(t *testing.T, fresh func(t *testing.T) Opener) {
	tests := []struct {
		name string
		fn   func(t *testing.T, open Opener)
	}{
		{"Health", testHealth},
		{"RegionCRUD", testRegionCRUD},
		{"RegionValidation", testRegionValidation},
		{"RegionQueries", testRegionQueries},
		{"RegionPaging", testRegionPaging},
		{"ConcurrentSameVersion", testConcurrentSameVersion},
		{"NoLostUpdate", testNoLostUpdate},
		{"GridImport", testGridImport},
		{"GridImportIdempotent", testGridImportIdempotent},
		{"GridImportIDConflict", testGridImportIDConflict},
		{"GridImportFailure", testGridImportFailure},
		{"GridCrashBetweenRenameAndCommit", testGridCrash},
		{"GridSweepWaitsForImports", testSweepLease},
		{"GridQueries", testGridQueries},
		{"Datasets", testDatasets},
		{"Tracks", testTracks},
		{"PlanCRUD", testPlanCRUD},
		{"PlanValidation", testPlanValidation},
		{"PlanPaging", testPlanPaging},
		{"PlanConcurrentSameVersion", testPlanConcurrentSameVersion},
		{"Models", testModels},
		{"Tokens", testTokens},
		{"TokenPlaintextNotStored", testTokenPlaintextNotStored},
		{"IDsNoStoreHolds", testIDsNoStoreHolds},
		{"Reopen", testReopen},
		{"ContextCancelled", testContextCancelled},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			tc.fn(t, fresh(t))
		})
	}
}

func ctxT(t *testing.T) context.Context {
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	t.Cleanup(cancel)
	return ctx
}

func wantErr(t *testing.T, what string, err, target error) {
	t.Helper()
	if !errors.Is(err, target) {
		t.Fatalf("%s: got error %v, want %v", what, err, target)
	}
}

func must[T any](t *testing.T, what string) func(v T, err error) T {
	return func(v T, err error) T {
		t.Helper()
		if err != nil {
			t.Fatalf("%s: %v", what, err)
		}
		return v
	}
}

func sameTime(a, b time.Time) bool {
	return a.Equal(b) && a.Location() == time.UTC && b.Location() == time.UTC
}

// gridDirFiles lists the content and temporary files of the grid directory, or the blobs of
// another grid store (an object store keeps no temporary files).
func gridDirFiles(t *testing.T, s store.Store) []string {
	t.Helper()
	gf, ok := s.Blobs().(*store.GridFiles)
	if !ok {
		keys, err := s.Blobs().List(ctxT(t))
		if err != nil {
			t.Fatalf("listing the grid store: %v", err)
		}
		return keys
	}
	entries, err := os.ReadDir(gf.Dir())
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, e := range entries {
		n := e.Name()
		if n == ".lock" || n == ".catalogue" {
			continue
		}
		out = append(out, n)
	}
	sort.Strings(out)
	return out
}

// gf returns the grid directory of a store that keeps its grid files in one.
func gf(t *testing.T, s store.Store) *store.GridFiles {
	t.Helper()
	g, ok := s.Blobs().(*store.GridFiles)
	if !ok {
		t.Fatalf("Blobs() is %T, want the grid directory", s.Blobs())
	}
	return g
}

func ids[T any](items []T, id func(T) string) []string {
	out := make([]string, 0, len(items))
	for _, it := range items {
		out = append(out, id(it))
	}
	return out
}

func sortedCopy(s []string) []string {
	c := append([]string(nil), s...)
	sort.Strings(c)
	return c
}

func testHealth(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	if err := s.Ping(ctx); err != nil {
		t.Fatalf("Ping: %v", err)
	}
	ok, err := s.MigrationsApplied(ctx)
	if err != nil || !ok {
		t.Fatalf("MigrationsApplied = %v, %v; want true (Open migrates by default)", ok, err)
	}
	st, err := s.MigrationStatus(ctx)
	if err != nil || len(st) == 0 {
		t.Fatalf("MigrationStatus = %v, %v", st, err)
	}
	for _, m := range st {
		if !m.Applied || m.AppliedAt.IsZero() || !strings.HasSuffix(m.Source, ".sql") {
			t.Errorf("migration %+v: want applied .sql file with a time", m)
		}
	}
	applied, err := s.Migrate(ctx)
	if err != nil || len(applied) != 0 {
		t.Errorf("second Migrate = %v, %v; want nothing to do", applied, err)
	}
	if b := s.Backend(); b != store.BackendSQLite && b != store.BackendPostGIS {
		t.Errorf("Backend() = %q", b)
	}
	if gf, ok := s.Blobs().(*store.GridFiles); ok {
		if _, err := os.Stat(filepath.Join(gf.Dir(), ".catalogue")); err != nil {
			t.Errorf("the sweep at Open should have claimed the grid directory: %v", err)
		}
	}
}

func testContextCancelled(t *testing.T, open Opener) {
	s := open(t)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := s.ListRegions(ctx, store.RegionFilter{}); err == nil {
		t.Error("ListRegions with a cancelled context succeeded; the context must reach the database")
	}
	if _, err := s.CreateRegion(ctx, store.Region{Name: "x", Geometry: box(0, 0, 1, 1)}); err == nil {
		t.Error("CreateRegion with a cancelled context succeeded")
	}
	if err := s.Ping(ctx); err == nil {
		t.Error("Ping with a cancelled context succeeded")
	}
}

// OpenStore opens a store of backend (store.BackendSQLite or store.BackendPostGIS) on dataDir,
// for tests of the packages above the store: PostGIS gets a fresh database cloned from the
// test template (pgtest.NewDB, which skips the test when no server is reachable). The store
// is closed when the test ends.
func OpenStore(t testing.TB, backend, dataDir string) store.Store {
	t.Helper()
	cfg := store.Config{DataDir: dataDir, Logger: slog.New(slog.DiscardHandler)}
	if backend == store.BackendPostGIS {
		cfg.DatabaseURL = pgtest.NewDB(t)
	}
	st, err := store.Open(context.Background(), cfg)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	return st
}
