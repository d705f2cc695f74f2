package sqlite_test

import (
	"context"
	"database/sql"
	"errors"
	"path/filepath"
	"testing"
	"time"

	"github.com/paulmach/orb"

	"ridgeflank/store"
	"ridgeflank/store/sqlite"
)

// A write blocked by another process's write lock for longer than the busy timeout fails with
// store.ErrUnavailable (retry later), not as an internal error, and stores nothing.
func TestLockedBeyondBusyTimeout(t *testing.T) {
	if testing.Short() {
		t.Skip("waits for the busy timeout")
	}
	dir := t.TempDir()
	ctx := context.Background()
	s, err := sqlite.Open(ctx, store.Config{DataDir: dir, Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	// Another writer (as another process would) holding the write lock.
	other, err := sql.Open("sqlite", sqlite.DSN(filepath.Join(dir, store.SQLiteFileName)))
	if err != nil {
		t.Fatal(err)
	}
	defer other.Close()
	tx, err := other.BeginTx(ctx, nil) // BEGIN IMMEDIATE (see sqlite.DSN)
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback()
	t0 := time.Now()
	_, err = s.CreateRegion(ctx, store.Region{Name: "blocked", Geometry: orb.MultiPolygon{{{{0, 0}, {1, 0}, {1, 1}, {0, 0}}}}})
	if !errors.Is(err, store.ErrUnavailable) {
		t.Fatalf("got %v, want store.ErrUnavailable", err)
	}
	if took := time.Since(t0); took < sqlite.BusyTimeout/2 {
		t.Errorf("failed after %v, before the busy timeout %v", took, sqlite.BusyTimeout)
	}
	tx.Rollback()
	if rs, err := s.ListRegions(ctx, store.RegionFilter{}); err != nil || len(rs) != 0 {
		t.Fatalf("regions after the failed write: %v, %v", rs, err)
	}
}
