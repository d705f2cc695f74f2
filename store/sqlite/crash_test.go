package sqlite_test

import (
	"bufio"
	"context"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/store"
	"ridgeflank/store/sqlite"
)

// crashDirEnv switches the test binary into the helper process of TestKilledWriter.
const crashDirEnv = "RIDGEFLANK_SQLITE_CRASH_HELPER_DIR"

const committedRegions = 40

func TestMain(m *testing.M) {
	if dir := os.Getenv(crashDirEnv); dir != "" {
		crashHelper(dir)
		os.Exit(3) // unreachable unless the helper fails
	}
	os.Exit(m.Run())
}

// writeThenHang commits committedRegions regions and a grid, then leaves behind everything an
// interrupted process can: a large uncommitted transaction (spilled into the WAL by a tiny page
// cache), a grid file renamed into place but never catalogued and a half-written temporary file.
// It returns (rolling back) when hang is closed; a nil hang waits for ever.
func writeThenHang(ctx context.Context, s *sqlite.Store, ready func(), hang <-chan struct{}) error {
	for i := range committedRegions {
		if _, err := s.CreateRegion(ctx, store.Region{Name: fmt.Sprintf("r%02d", i), Geometry: orb.MultiPolygon{{{{0, 0}, {1, 0}, {1, 1}, {0, 0}}}}}); err != nil {
			return err
		}
	}
	g := store.Grid{Name: "committed grid", Kind: store.KindAge, VerticalSense: store.VerticalNone, Units: "Ma",
		Footprint: orb.MultiPolygon{{{{0, 0}, {1, 0}, {1, 1}, {0, 0}}}}, ResolutionDeg: 1, Registration: store.Node}
	if _, _, err := s.ImportGrid(ctx, g, func(p string) error { return os.WriteFile(p, []byte("committed"), 0o644) }); err != nil {
		return err
	}
	release, err := s.Blobs().Hold(ctx)
	if err != nil {
		return err
	}
	defer release()
	if _, err := s.Blobs().Put(ctx, "", func(p string) error { return os.WriteFile(p, []byte("never catalogued"), 0o644) }); err != nil {
		return err
	}
	dir := s.Blobs().(*store.GridFiles).Dir()
	if err := os.WriteFile(filepath.Join(dir, ".tmp-halfway.tif"), []byte("half"), 0o644); err != nil {
		return err
	}
	conn, err := s.DB().Conn(ctx)
	if err != nil {
		return err
	}
	if _, err := conn.ExecContext(ctx, "PRAGMA cache_size = 4"); err != nil {
		return err
	}
	tx, err := conn.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	for i := range 300 {
		if _, err := tx.ExecContext(ctx, `INSERT INTO store_meta (key, value) VALUES (?, printf('%.*c', 4000, 'x'))`, fmt.Sprintf("uncommitted-%d", i)); err != nil {
			return err
		}
	}
	if _, err := tx.ExecContext(ctx, `DELETE FROM regions WHERE name = 'r00'`); err != nil {
		return err
	}
	defer tx.Rollback()
	ready()
	<-hang // killed or abandoned before commit
	return nil
}

func crashHelper(dir string) {
	ctx := context.Background()
	s, err := sqlite.Open(ctx, store.Config{DataDir: dir})
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(4)
	}
	err = writeThenHang(ctx, s, func() { fmt.Println("READY") }, nil)
	fmt.Fprintln(os.Stderr, err)
	os.Exit(5)
}

// checkIntact opens dir and checks that committed data survived and uncommitted data did not.
func checkIntact(t *testing.T, dir string, wantGridFiles int) {
	t.Helper()
	ctx := context.Background()
	s, err := sqlite.Open(ctx, store.Config{DataDir: dir, Logger: quiet})
	if err != nil {
		t.Fatalf("reopening after an unclean stop: %v", err)
	}
	defer s.Close()
	var ic string
	if err := s.DB().QueryRowContext(ctx, "PRAGMA integrity_check").Scan(&ic); err != nil || ic != "ok" {
		t.Fatalf("integrity_check = %q, %v", ic, err)
	}
	regions, err := s.ListRegions(ctx, store.RegionFilter{})
	if err != nil || len(regions) != committedRegions || regions[0].Name != "r00" {
		t.Fatalf("regions after reopen: %d (err %v); want all %d committed ones, r00 not deleted", len(regions), err, committedRegions)
	}
	// The R*Tree agrees with the table.
	bbox, err := s.ListRegions(ctx, store.RegionFilter{BBox: &orb.Bound{Min: orb.Point{-1, -1}, Max: orb.Point{2, 2}}})
	if err != nil || len(bbox) != committedRegions {
		t.Fatalf("bbox query after reopen: %d, %v", len(bbox), err)
	}
	var n int
	if err := s.DB().QueryRowContext(ctx, `SELECT count(*) FROM store_meta WHERE key LIKE 'uncommitted-%'`).Scan(&n); err != nil || n != 0 {
		t.Fatalf("%d uncommitted rows visible (err %v)", n, err)
	}
	grids, err := s.ListGrids(ctx, store.GridFilter{})
	if err != nil || len(grids) != 1 {
		t.Fatalf("grids after reopen: %v, %v", grids, err)
	}
	entries, _ := os.ReadDir(s.Blobs().(*store.GridFiles).Dir())
	var files []string
	for _, e := range entries {
		if !strings.HasPrefix(e.Name(), ".lock") && e.Name() != ".catalogue" {
			files = append(files, e.Name())
		}
	}
	if len(files) != wantGridFiles || (wantGridFiles == 1 && files[0] != grids[0].Path) {
		t.Fatalf("grid directory after reopen holds %v; want %d file(s)", files, wantGridFiles)
	}
}

// TestKilledWriter kills (SIGKILL) a process in the middle of a write transaction and an
// import, then reopens its data directory.
func TestKilledWriter(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a child process")
	}
	dir := t.TempDir()
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), crashDirEnv+"="+dir)
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	var stderr strings.Builder
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	line, err := bufio.NewReader(out).ReadString('\n')
	if err != nil || strings.TrimSpace(line) != "READY" {
		cmd.Process.Kill()
		cmd.Wait()
		t.Fatalf("helper did not get ready: %q %v; stderr: %s", line, err, stderr.String())
	}
	if err := cmd.Process.Kill(); err != nil {
		t.Fatal(err)
	}
	cmd.Wait()
	if _, err := os.Stat(filepath.Join(dir, store.SQLiteFileName+"-wal")); err != nil {
		t.Fatalf("expected a WAL file left by the killed writer: %v", err)
	}
	// The killed process's lease died with it, so the orphan and the temporary file go.
	checkIntact(t, dir, 1)
}

// TestCopyMidTransaction copies the database files (and grid directory) while a write
// transaction is open, as a crash or a naive file-level backup would, and opens the copy.
func TestCopyMidTransaction(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	dir := t.TempDir()
	s, err := sqlite.Open(ctx, store.Config{DataDir: dir, Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ready := make(chan struct{})
	hang := make(chan struct{})
	done := make(chan error, 1)
	go func() { done <- writeThenHang(ctx, s, func() { close(ready) }, hang) }()
	select {
	case <-ready:
	case err := <-done:
		t.Fatalf("writer failed: %v", err)
	}
	cp := t.TempDir()
	// The -shm index is not copied: after a crash it is rebuilt from the WAL.
	for _, name := range []string{store.SQLiteFileName, store.SQLiteFileName + "-wal"} {
		copyFile(t, filepath.Join(dir, name), filepath.Join(cp, name))
	}
	if err := os.MkdirAll(filepath.Join(cp, "grids"), 0o755); err != nil {
		t.Fatal(err)
	}
	entries, _ := os.ReadDir(filepath.Join(dir, "grids"))
	for _, e := range entries {
		if e.Name() != ".lock" {
			copyFile(t, filepath.Join(dir, "grids", e.Name()), filepath.Join(cp, "grids", e.Name()))
		}
	}
	checkIntact(t, cp, 1)
	close(hang)
	if err := <-done; err != nil {
		t.Fatal(err)
	}
}

func copyFile(t *testing.T, src, dst string) {
	t.Helper()
	in, err := os.Open(src)
	if os.IsNotExist(err) {
		return
	}
	if err != nil {
		t.Fatal(err)
	}
	defer in.Close()
	out, err := os.Create(dst)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := io.Copy(out, in); err != nil {
		t.Fatal(err)
	}
	out.Close()
}
