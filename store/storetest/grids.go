package storetest

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"ridgeflank/store"
)

// SHA-256("abc") from FIPS 180-2, Appendix B.1 (the same vector is in FIPS 180-4's examples).
const abcSHA256 = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"

func writeBytes(b []byte) func(string) error {
	return func(tmp string) error { return os.WriteFile(tmp, b, 0o644) }
}

func sha(b []byte) string {
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:])
}

func ageMeta(name string) store.Grid {
	return store.Grid{
		Name: name, Kind: store.KindAge, Units: "Ma", VerticalSense: store.VerticalNone,
		Footprint: box(-40, 10, -20, 30), ResolutionDeg: 0.1, Registration: store.CellCentre,
		Provenance: "Quillon Basin demo generator (SYNTHETIC)", Licence: "CC0-1.0",
	}
}

func gridMeta(name string, kind store.GridKind) store.Grid {
	g := ageMeta(name)
	g.Kind = kind
	switch kind {
	case store.KindDepth:
		g.VerticalSense, g.Units = store.DepthPositiveDown, "m"
	case store.KindElevation:
		g.VerticalSense, g.Units = store.ElevationPositiveUp, "m"
	case store.KindSedimentThickness:
		g.Units = "m"
	case store.KindCrustalThickness:
		g.Units = "km"
	}
	return g
}

func sameGrid(t *testing.T, what string, got, want store.Grid) {
	t.Helper()
	gf, wf := got.Footprint, want.Footprint
	got.Footprint, want.Footprint = nil, nil
	gc, wc := got.CreatedAt, want.CreatedAt
	got.CreatedAt, want.CreatedAt = time.Time{}, time.Time{}
	if fmt.Sprint(got) != fmt.Sprint(want) || !sameTime(gc, wc) || fmt.Sprint(gf) != fmt.Sprint(wf) {
		t.Fatalf("%s:\n got %+v\nwant %+v", what, got, want)
	}
}

func readBlob(t *testing.T, s store.Store, key string) []byte {
	t.Helper()
	f, err := s.Blobs().Open(ctxT(t), key)
	if err != nil {
		t.Fatalf("opening blob %s: %v", key, err)
	}
	defer f.Close()
	b, err := io.ReadAll(f)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func testGridImport(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	content := []byte("abc")
	g, created, err := s.ImportGrid(ctx, ageMeta("Quillon Basin age (SYNTHETIC)"), writeBytes(content))
	if err != nil || !created {
		t.Fatalf("ImportGrid = %v, %v", created, err)
	}
	if g.ContentHash != abcSHA256 || g.SizeBytes != 3 || g.Path != abcSHA256+".tif" || !strings.HasPrefix(g.ID, store.PrefixGrid) || g.CreatedAt.IsZero() {
		t.Fatalf("imported grid %+v: want hash %s, size 3, path <hash>.tif", g, abcSHA256)
	}
	sameGrid(t, "GetGrid", must[store.Grid](t, "GetGrid")(s.GetGrid(ctx, g.ID)), g)
	sameGrid(t, "GetGridByHash", must[store.Grid](t, "GetGridByHash")(s.GetGridByHash(ctx, g.ContentHash)), g)
	if b := readBlob(t, s, g.Path); string(b) != "abc" {
		t.Fatalf("stored file holds %q", b)
	}
	p, err := s.Blobs().Path(g.Path)
	if err != nil {
		t.Fatal(err)
	}
	if _, local := s.Blobs().(*store.GridFiles); local {
		if b, err := os.ReadFile(p); err != nil || string(b) != "abc" {
			t.Fatalf("Blobs().Path file: %q, %v", b, err)
		}
	} else if !strings.HasSuffix(p, "/"+g.Path) {
		t.Fatalf("Blobs().Path = %q, want a path ending in the key %s", p, g.Path)
	}
	if files := gridDirFiles(t, s); !slices.Equal(files, []string{g.Path}) {
		t.Fatalf("grid directory holds %v, want only %s", files, g.Path)
	}
	// A ready file through CopyFile.
	src := filepath.Join(t.TempDir(), "ready.tif")
	if err := os.WriteFile(src, []byte("ready-made COG bytes"), 0o644); err != nil {
		t.Fatal(err)
	}
	g2, created, err := s.ImportGrid(ctx, gridMeta("depth", store.KindDepth), store.CopyFile(src))
	if err != nil || !created || g2.ContentHash != sha([]byte("ready-made COG bytes")) {
		t.Fatalf("ImportGrid(CopyFile) = %+v, %v, %v", g2, created, err)
	}
	_, err = s.GetGrid(ctx, "gr_nope")
	wantErr(t, "GetGrid unknown", err, store.ErrNotFound)
	_, err = s.GetGridByHash(ctx, sha([]byte("nothing")))
	wantErr(t, "GetGridByHash unknown", err, store.ErrNotFound)
	_, err = s.Blobs().Open(ctx, "../../etc/passwd")
	wantErr(t, "Open outside the directory", err, store.ErrInvalid)

	// Delete removes row and file.
	if err := s.DeleteGrid(ctx, g.ID); err != nil {
		t.Fatalf("DeleteGrid: %v", err)
	}
	_, err = s.GetGrid(ctx, g.ID)
	wantErr(t, "GetGrid deleted", err, store.ErrNotFound)
	if files := gridDirFiles(t, s); !slices.Equal(files, []string{g2.Path}) {
		t.Fatalf("after delete the grid directory holds %v, want %v", files, []string{g2.Path})
	}
	wantErr(t, "DeleteGrid twice", s.DeleteGrid(ctx, g.ID), store.ErrNotFound)
}

func testGridImportIdempotent(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	a := []byte("grid content A")
	g1, created, err := s.ImportGrid(ctx, ageMeta("first"), writeBytes(a))
	if err != nil || !created {
		t.Fatalf("first import: %v, %v", created, err)
	}
	g2, created, err := s.ImportGrid(ctx, ageMeta("second name, same bytes"), writeBytes(a))
	if err != nil || created {
		t.Fatalf("re-import: created=%v err=%v, want existing grid", created, err)
	}
	sameGrid(t, "re-import returns the existing grid", g2, g1)
	// With the hash known in advance the writer is not even called.
	meta := ageMeta("third")
	meta.ContentHash = g1.ContentHash
	g3, created, err := s.ImportGrid(ctx, meta, func(string) error {
		t.Error("writer called although the content hash is catalogued")
		return nil
	})
	if err != nil || created || g3.ID != g1.ID {
		t.Fatalf("import by known hash: %+v, %v, %v", g3, created, err)
	}
	// A declared hash that does not match the bytes is refused and leaves nothing.
	meta = ageMeta("liar")
	meta.ContentHash = sha([]byte("something else"))
	_, _, err = s.ImportGrid(ctx, meta, writeBytes([]byte("not that")))
	wantErr(t, "hash mismatch", err, store.ErrInvalid)
	if files := gridDirFiles(t, s); !slices.Equal(files, []string{g1.Path}) {
		t.Fatalf("grid directory holds %v, want only %s", files, g1.Path)
	}
	if all := must[[]store.Grid](t, "ListGrids")(s.ListGrids(ctx, store.GridFilter{})); len(all) != 1 {
		t.Fatalf("%d grids catalogued, want 1", len(all))
	}

	// Concurrent imports of the same new content: one row, one file, everyone gets its id.
	b := []byte("grid content B")
	const n = 4
	var wg sync.WaitGroup
	res := make([]store.Grid, n)
	made := make([]bool, n)
	errs := make([]error, n)
	for i := range n {
		wg.Add(1)
		go func() {
			defer wg.Done()
			res[i], made[i], errs[i] = s.ImportGrid(ctx, gridMeta(fmt.Sprintf("B%d", i), store.KindDepth), writeBytes(b))
		}()
	}
	wg.Wait()
	createdCount := 0
	for i := range n {
		if errs[i] != nil {
			t.Fatalf("concurrent import %d: %v", i, errs[i])
		}
		if res[i].ID != res[0].ID {
			t.Fatalf("concurrent imports returned different grids: %s and %s", res[i].ID, res[0].ID)
		}
		if made[i] {
			createdCount++
		}
	}
	if createdCount != 1 {
		t.Fatalf("%d concurrent imports report created, want 1", createdCount)
	}
	want := sortedCopy([]string{g1.Path, sha(b) + ".tif"})
	if files := gridDirFiles(t, s); !slices.Equal(files, want) {
		t.Fatalf("grid directory holds %v, want %v", files, want)
	}
}

// testGridImportIDConflict: an explicit id held by a grid of other content is refused with
// ErrConflict, leaving the stored grid and its file as they were and no file of the refused
// one; the same content with the same id again returns the stored grid (a retried import);
// the same content under another id returns the stored grid, whose id tells the caller.
func testGridImportIDConflict(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	a, b := []byte("grid content A"), []byte("grid content B")
	meta := ageMeta("fixed id")
	meta.ID = "fixed"
	g, created, err := s.ImportGrid(ctx, meta, writeBytes(a))
	if err != nil || !created || g.ID != "fixed" {
		t.Fatalf("first import: %+v, %v, %v", g, created, err)
	}
	_, created, err = s.ImportGrid(ctx, meta, writeBytes(b))
	wantErr(t, "other content under a taken id", err, store.ErrConflict)
	if created {
		t.Fatal("a refused import reports created")
	}
	sameGrid(t, "the stored grid after the refused import", must[store.Grid](t, "GetGrid")(s.GetGrid(ctx, "fixed")), g)
	if files := gridDirFiles(t, s); !slices.Equal(files, []string{g.Path}) {
		t.Fatalf("grid directory holds %v, want only %s", files, g.Path)
	}
	again, created, err := s.ImportGrid(ctx, meta, writeBytes(a))
	if err != nil || created || again.ID != "fixed" {
		t.Fatalf("retried import: %+v, %v, %v", again, created, err)
	}
	other := ageMeta("other id")
	other.ID = "other"
	ex, created, err := s.ImportGrid(ctx, other, writeBytes(a))
	if err != nil || created || ex.ID != "fixed" {
		t.Fatalf("same content under another id: %+v, %v, %v; want the stored grid", ex, created, err)
	}
	if all := must[[]store.Grid](t, "ListGrids")(s.ListGrids(ctx, store.GridFilter{})); len(all) != 1 {
		t.Fatalf("%d grids catalogued, want 1", len(all))
	}
}

func testGridImportFailure(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	nothingLeft := func(t *testing.T) {
		t.Helper()
		if files := gridDirFiles(t, s); len(files) != 0 {
			t.Fatalf("grid directory holds %v after a failed import", files)
		}
		if all := must[[]store.Grid](t, "ListGrids")(s.ListGrids(ctx, store.GridFilter{})); len(all) != 0 {
			t.Fatalf("%d grids catalogued after a failed import", len(all))
		}
	}
	boom := errors.New("conversion failed half-way")
	t.Run("writer fails mid-write", func(t *testing.T) {
		_, _, err := s.ImportGrid(ctx, ageMeta("broken"), func(tmp string) error {
			f, err := os.Create(tmp)
			if err != nil {
				return err
			}
			f.Write([]byte("half a COG"))
			f.Close()
			os.WriteFile(tmp+".aux.xml", []byte("<side file/>"), 0o644)
			return boom
		})
		if !errors.Is(err, boom) {
			t.Fatalf("got %v, want the writer's error", err)
		}
		nothingLeft(t)
	})
	t.Run("disk full mid-write", func(t *testing.T) {
		// write(2) fails with ENOSPC once the file system is full (POSIX.1-2017, write()).
		g := ageMeta("full disk")
		g.ID = "full-disk-age"
		_, _, err := s.ImportGrid(ctx, g, func(tmp string) error {
			f, err := os.Create(tmp)
			if err != nil {
				return err
			}
			defer f.Close()
			f.Write([]byte("the first blocks of a COG"))
			return &os.PathError{Op: "write", Path: tmp, Err: syscall.ENOSPC}
		})
		wantErr(t, "ENOSPC", err, store.ErrInsufficientStorage)
		if errors.Is(err, store.ErrUnavailable) {
			t.Fatalf("a full disk reported as an unreachable database: %v", err)
		}
		nothingLeft(t)
		_, err = s.CreateDataset(ctx, store.Dataset{ID: "on-full-disk", Name: "x", AgeGridID: g.ID})
		if err == nil {
			t.Fatal("a dataset was created on a grid whose write failed")
		}
		if ds := must[[]store.Dataset](t, "ListDatasets")(s.ListDatasets(ctx, store.Page{})); len(ds) != 0 {
			t.Fatalf("%d datasets stored", len(ds))
		}
	})
	t.Run("writer writes nothing", func(t *testing.T) {
		_, _, err := s.ImportGrid(ctx, ageMeta("empty"), func(string) error { return nil })
		wantErr(t, "no file", err, store.ErrInvalid)
		nothingLeft(t)
	})
	t.Run("invalid metadata is refused before writing", func(t *testing.T) {
		for _, g := range []store.Grid{
			func() store.Grid { g := ageMeta("k"); g.Kind = "bathtub"; return g }(),
			func() store.Grid {
				g := gridMeta("d", store.KindDepth)
				g.VerticalSense = store.ElevationPositiveUp
				return g
			}(),
			func() store.Grid { g := ageMeta("r"); g.ResolutionDeg = 0; return g }(),
			func() store.Grid { g := ageMeta("reg"); g.Registration = "corner"; return g }(),
			func() store.Grid { g := ageMeta("fp"); g.Footprint = nil; return g }(),
			func() store.Grid { g := ageMeta(""); return g }(),
			func() store.Grid { g := ageMeta("h"); g.ContentHash = "ABC"; return g }(),
		} {
			_, _, err := s.ImportGrid(ctx, g, func(string) error {
				t.Errorf("writer called for invalid metadata %+v", g)
				return nil
			})
			wantErr(t, fmt.Sprintf("import %q", g.Name), err, store.ErrInvalid)
		}
		_, _, err := s.ImportGrid(ctx, ageMeta("nil writer"), nil)
		wantErr(t, "nil writer", err, store.ErrInvalid)
		nothingLeft(t)
	})
	t.Run("cancelled context", func(t *testing.T) {
		cctx, cancel := context.WithCancel(ctx)
		_, _, err := s.ImportGrid(cctx, ageMeta("cancelled"), func(tmp string) error {
			cancel()
			return os.WriteFile(tmp, []byte("written, then cancelled"), 0o644)
		})
		if err == nil {
			t.Fatal("import succeeded after its context was cancelled")
		}
		nothingLeft(t)
	})
	t.Run("catalogue insert fails after the file is in place", func(t *testing.T) {
		meta := ageMeta("A")
		meta.ID = "age-1"
		a, _, err := s.ImportGrid(ctx, meta, writeBytes([]byte("A")))
		if err != nil {
			t.Fatal(err)
		}
		meta.Name = "B with a taken id"
		_, _, err = s.ImportGrid(ctx, meta, writeBytes([]byte("B")))
		wantErr(t, "duplicate grid id", err, store.ErrConflict)
		if files := gridDirFiles(t, s); !slices.Equal(files, []string{a.Path}) {
			t.Fatalf("grid directory holds %v, want only %s (B's file must be swept)", files, a.Path)
		}
		if err := s.DeleteGrid(ctx, a.ID); err != nil {
			t.Fatal(err)
		}
		nothingLeft(t)
	})
}

// testGridCrash simulates a crash after the file was renamed into place but before the
// catalogue row was committed (and a crash during a write, leaving a temporary file): both are
// removed at the next open, and catalogued files are kept.
func testGridCrash(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	kept, _, err := s.ImportGrid(ctx, ageMeta("kept"), writeBytes([]byte("catalogued")))
	if err != nil {
		t.Fatal(err)
	}
	orphan, err := s.Blobs().Put(ctx, "", writeBytes([]byte("renamed but never catalogued")))
	if err != nil {
		t.Fatal(err)
	}
	setUp := 2
	if _, local := s.Blobs().(*store.GridFiles); local {
		dir := gf(t, s).Dir()
		tmp := filepath.Join(dir, ".tmp-interrupted.tif")
		// an interrupted write, GDAL's side files of a COG being written when the process died
		// (name.ovr.tmp), and geo/gdal's atomic write's temporary file (found by jobs/queue's
		// kill test)
		for _, side := range []string{tmp, tmp + ".ovr.tmp", filepath.Join(dir, "0123abcd.tif.msk.ovr.tmp"),
			filepath.Join(dir, "..tmp-interrupted.tif.tmp-1234-1.tif")} {
			if err := os.WriteFile(side, []byte("half"), 0o644); err != nil {
				t.Fatal(err)
			}
			setUp++
		}
	}
	if files := gridDirFiles(t, s); len(files) != setUp {
		t.Fatalf("set-up: grid directory holds %v", files)
	}
	// Reopen without closing (the first handle is abandoned, as after a kill).
	s2 := open(t)
	if files := gridDirFiles(t, s2); !slices.Equal(files, []string{kept.Path}) {
		t.Fatalf("after reopen the grid directory holds %v, want only %s (orphan %s and the temporary file swept)", files, kept.Path, orphan.Key)
	}
	if b := readBlob(t, s2, kept.Path); string(b) != "catalogued" {
		t.Fatalf("catalogued file damaged: %q", b)
	}
	sameGrid(t, "catalogued grid after reopen", must[store.Grid](t, "GetGrid")(s2.GetGrid(ctx, kept.ID)), kept)
}

func testSweepLease(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	release, err := s.Blobs().Hold(ctx)
	if err != nil {
		t.Fatal(err)
	}
	orphan, err := s.Blobs().Put(ctx, "", writeBytes([]byte("import in progress")))
	if err != nil {
		t.Fatal(err)
	}
	removed, err := s.Sweep(ctx)
	if err != nil || len(removed) != 0 {
		t.Fatalf("Sweep during an import removed %v (err %v); it must wait", removed, err)
	}
	if files := gridDirFiles(t, s); !slices.Equal(files, []string{orphan.Key}) {
		t.Fatalf("grid directory holds %v", files)
	}
	release()
	removed, err = s.Sweep(ctx)
	if err != nil || !slices.Equal(removed, []string{orphan.Key}) {
		t.Fatalf("Sweep after the lease = %v, %v; want [%s]", removed, err, orphan.Key)
	}
}

func testGridQueries(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	imp := func(name string, kind store.GridKind, fp func(*store.Grid)) store.Grid {
		g := gridMeta(name, kind)
		fp(&g)
		out, _, err := s.ImportGrid(ctx, g, writeBytes([]byte(name)))
		if err != nil {
			t.Fatal(err)
		}
		return out
	}
	atl := imp("atlantic age", store.KindAge, func(g *store.Grid) { g.Footprint = box(-40, 10, -20, 30) })
	pac := imp("pacific depth", store.KindDepth, func(g *store.Grid) {
		g.Footprint = regionFixture[1].geom // split at the antimeridian
	})
	glob := imp("global sediment", store.KindSedimentThickness, func(g *store.Grid) {
		g.Footprint = box(-180, -90, 180, 90)
		g.Registration = store.Node
	})
	cases := []struct {
		name string
		f    store.GridFilter
		want []store.Grid
	}{
		{"all", store.GridFilter{}, []store.Grid{atl, pac, glob}},
		{"kind", store.GridFilter{Kind: store.KindAge}, []store.Grid{atl}},
		{"bbox across antimeridian", store.GridFilter{BBox: bnd(175, -5, -175, 5)}, []store.Grid{pac, glob}},
		{"bbox atlantic", store.GridFilter{BBox: bnd(-35, 15, -25, 25)}, []store.Grid{atl, glob}},
		{"bbox and kind", store.GridFilter{BBox: bnd(-35, 15, -25, 25), Kind: store.KindSedimentThickness}, []store.Grid{glob}},
		{"paging", store.GridFilter{Page: store.Page{Limit: 1, Offset: 1}}, []store.Grid{pac}},
		{"paging with bbox", store.GridFilter{BBox: bnd(-180, -90, 180, 90), Page: store.Page{Limit: 1, Offset: 2}}, []store.Grid{glob}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := must[[]store.Grid](t, "ListGrids")(s.ListGrids(ctx, c.f))
			if len(got) != len(c.want) {
				t.Fatalf("got %v, want %v", ids(got, func(g store.Grid) string { return g.Name }), ids(c.want, func(g store.Grid) string { return g.Name }))
			}
			for i := range got {
				sameGrid(t, c.name, got[i], c.want[i])
			}
		})
	}
	_, err := s.ListGrids(ctx, store.GridFilter{Kind: "bathtub"})
	wantErr(t, "unknown kind", err, store.ErrInvalid)
}
