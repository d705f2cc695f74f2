package gridimport

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/store"
)

// fullDisk is a Blobs whose file system fills up during a write: the writer's file is cut to
// half its length and the write fails with ENOSPC, as write(2) does on a full file system
// (POSIX.1-2017, write()).
type fullDisk struct{ store.Blobs }

func (f fullDisk) Put(ctx context.Context, sha256Hex string, write func(string) error) (store.BlobInfo, error) {
	return f.Blobs.Put(ctx, sha256Hex, func(tmp string) error {
		if err := write(tmp); err != nil {
			return err
		}
		fi, err := os.Stat(tmp)
		if err != nil {
			return err
		}
		if err := os.Truncate(tmp, fi.Size()/2); err != nil {
			return err
		}
		return &os.PathError{Op: "write", Path: tmp, Err: syscall.ENOSPC}
	})
}

// A grid write that fails for want of space leaves no file (partial or temporary) in the grid
// directory and no catalogue row, and says why (store.ErrInsufficientStorage).
func TestFullDiskMidWrite(t *testing.T) {
	dir := t.TempDir()
	files, err := store.NewGridFiles(dir)
	if err != nil {
		t.Fatal(err)
	}
	inserted := 0
	cat := Catalogue{
		ByHash: func(context.Context, string) (store.Grid, error) { return store.Grid{}, store.ErrNotFound },
		Insert: func(_ context.Context, g store.Grid) (store.Grid, error) { inserted++; return g, nil },
		Sweep:  func(context.Context) ([]string, error) { return nil, nil },
	}
	g := store.Grid{Name: "age", Kind: store.KindAge, Units: "Ma", VerticalSense: store.VerticalNone,
		Footprint: orb.MultiPolygon{orb.Bound{Min: orb.Point{-40, 10}, Max: orb.Point{-20, 30}}.ToPolygon()}, ResolutionDeg: 0.1,
		Registration: store.CellCentre, Provenance: "SYNTHETIC", Licence: "CC0-1.0"}
	content := []byte(strings.Repeat("a grid file of some length ", 1000))
	_, _, err = Import(context.Background(), fullDisk{files}, cat, g, func(tmp string) error {
		return os.WriteFile(tmp, content, 0o644)
	})
	if !errors.Is(err, store.ErrInsufficientStorage) || !errors.Is(err, syscall.ENOSPC) {
		t.Fatalf("got %v, want store.ErrInsufficientStorage wrapping ENOSPC", err)
	}
	if inserted != 0 {
		t.Fatalf("%d catalogue rows inserted after a failed write", inserted)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if n := e.Name(); n != ".lock" && n != ".catalogue" {
			t.Errorf("grid directory holds %s after the failed write", filepath.Join(dir, n))
		}
	}

	// The same store then takes the grid once space is back.
	_, created, err := Import(context.Background(), files, cat, g, func(tmp string) error {
		return os.WriteFile(tmp, content, 0o644)
	})
	if err != nil || !created || inserted != 1 {
		t.Fatalf("import after the disk was freed: created %v, rows %d, err %v", created, inserted, err)
	}
}
