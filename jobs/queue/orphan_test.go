package queue

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/jobs"
	"ridgeflank/server"
	"ridgeflank/store"
	"ridgeflank/store/pgtest"
)

const (
	orphanHelperEnv = "RIDGEFLANK_TEST_ORPHAN_DIR"
	orphanDBEnv     = "RIDGEFLANK_TEST_ORPHAN_DB" // PostGIS URL; empty for the embedded store
)

// TestOrphanHelperProcess is not a test: run by TestKilledImportRescuedAtStart as a child
// process, it serves the store in $RIDGEFLANK_TEST_ORPHAN_DIR and runs its import job until the
// COG is being written, then marks the moment and waits to be killed.
func TestOrphanHelperProcess(t *testing.T) {
	dir := os.Getenv(orphanHelperEnv)
	if dir == "" {
		t.Skip("helper process only")
	}
	ctx := context.Background()
	st, err := store.Open(ctx, store.Config{DataDir: dir, DatabaseURL: os.Getenv(orphanDBEnv), Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	imp := server.ImportWorker(st, nil)
	h := jobs.Handlers{Import: func(ctx context.Context, a jobs.ImportArgs, progress jobs.Progress) (any, error) {
		return imp(ctx, a, func(f float64, msg string) {
			progress(f, msg)
			fmt.Printf("progress %.3f %s\n", f, msg)
			// Inside GDAL's writing of the COG (ingest.Import: 0.6 + 0.39 × its progress): the
			// progress watcher blocks here, and Finish waits for it, so nothing is renamed.
			if f > 0.6 && f < 1 {
				os.WriteFile(filepath.Join(dir, "writing"), nil, 0o644)
				select {} // killed here
			}
		})
	}}
	q, err := Open(ctx, st, h, Options{Workers: 1, PollInterval: 100 * time.Millisecond, HeartbeatEvery: 100 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	if err := q.Start(ctx); err != nil {
		t.Fatal(err)
	}
	time.Sleep(2 * time.Minute)
	t.Fatal("the helper was not killed")
}

// A process killed (SIGKILL) while an import job writes its COG leaves the job "running";
// the next start on the embedded store puts it back in the queue at once instead of after
// jobs.RescueAfter (35 min): the job is then redone and succeeds, no half-imported grid was
// ever visible, and no temporary file is left in the grid or upload directory.
//
// On PostGIS (several replicas may share the queue) the job is rescued once the killed
// process's heartbeat is older than Options.OwnerGone (here 1 s), by the next process's
// heartbeat loop, not at its start only.
func TestKilledImportRescuedAtStart(t *testing.T) {
	if testing.Short() {
		t.Skip("runs a child process")
	}
	for _, backend := range []string{store.BackendSQLite, store.BackendPostGIS} {
		t.Run(backend, func(t *testing.T) { killedImport(t, backend) })
	}
}

func killedImport(t *testing.T, backend string) {
	ctx := context.Background()
	dbURL := ""
	if backend == store.BackendPostGIS {
		dbURL = pgtest.NewDB(t)
	}
	dir := t.TempDir()
	tmp := filepath.Join(dir, "tmp")
	uploads := filepath.Join(dir, "uploads")
	for _, d := range []string{tmp, uploads} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	// A grid whose COG takes GDAL well over the 200 ms between progress reports to write
	// (4000 × 2000 cells of little-compressible values): the helper is killed while GDAL
	// writes the temporary file, before it is renamed and catalogued.
	g := geo.NewGrid(4000, 2000, 0.0125, 49.9875, 0.025, 0.025, geo.CellCentre)
	for i := range g.Data {
		g.Data[i] = float32((i*7919)%100003) / 1000
	}
	src := filepath.Join(uploads, "upload-1.tif")
	if err := gdal.WriteCOG(src, g, gdal.Meta{Units: "Ma"}); err != nil {
		t.Fatal(err)
	}
	open := func() store.Store {
		st, err := store.Open(ctx, store.Config{DataDir: dir, DatabaseURL: dbURL, Logger: slog.New(slog.DiscardHandler)})
		if err != nil {
			t.Fatal(err)
		}
		return st
	}
	st := open()
	q0, err := Open(ctx, st, jobs.Handlers{}, Options{Workers: -1})
	if err != nil {
		t.Fatal(err)
	}
	if err := q0.Migrate(ctx); err != nil {
		t.Fatal(err)
	}
	id, err := q0.EnqueueImport(ctx, jobs.ImportArgs{GridID: "killed-age", Path: src, Filename: "age.tif", Quantity: "age", Units: "Ma"})
	if err != nil {
		t.Fatal(err)
	}
	q0.Close()
	st.Close()

	cmd := exec.Command(os.Args[0], "-test.run=^TestOrphanHelperProcess$", "-test.count=1")
	cmd.Env = append(os.Environ(), orphanHelperEnv+"="+dir, orphanDBEnv+"="+dbURL, "TMPDIR="+tmp)
	logf, _ := os.Create(filepath.Join(dir, "helper.log"))
	defer func() {
		if t.Failed() {
			b, _ := os.ReadFile(filepath.Join(dir, "helper.log"))
			t.Logf("helper:\n%s", b)
		}
	}()
	cmd.Stdout, cmd.Stderr = logf, logf
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(60 * time.Second)
	for {
		if _, err := os.Stat(filepath.Join(dir, "writing")); err == nil {
			break
		}
		if time.Now().After(deadline) {
			cmd.Process.Kill()
			t.Fatal("the helper never reached the COG step")
		}
		time.Sleep(20 * time.Millisecond)
	}
	if err := cmd.Process.Kill(); err != nil { // SIGKILL: no deferred clean-up runs
		t.Fatal(err)
	}
	_ = cmd.Wait()

	// Restart: the store sweeps its grid directory, the queue rescues the job at Start.
	st = open()
	defer st.Close()
	if _, err := st.GetGrid(ctx, "killed-age"); !errors.Is(err, store.ErrNotFound) {
		t.Fatalf("a half-imported grid is visible after the kill: %v", err)
	}
	q, err := Open(ctx, st, jobs.Handlers{Import: server.ImportWorker(st, nil)}, Options{Workers: 1, PollInterval: 100 * time.Millisecond,
		HeartbeatEvery: 100 * time.Millisecond, OwnerGone: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	defer q.Close()
	before, err := q.Get(ctx, id)
	if err != nil || before.State != jobs.StateRunning {
		t.Fatalf("before the restart the job is %q (%v), want running (the defect this test covers)", before.State, err)
	}
	if err := q.Start(ctx); err != nil {
		t.Fatal(err)
	}
	defer q.Stop(ctx)
	start := time.Now()
	done := waitState(t, q, id, jobs.StateSucceeded)
	if time.Since(start) > 15*time.Second {
		t.Errorf("the job took %s to be redone", time.Since(start))
	}
	if len(done.Errors) == 0 || !strings.Contains(done.Errors[0], OrphanMessage) {
		t.Errorf("the rescued job's errors %q do not say why it was redone", done.Errors)
	}
	got, err := st.GetGrid(ctx, "killed-age")
	if err != nil {
		t.Fatal(err)
	}
	if got.ContentHash == "" {
		t.Errorf("grid %+v", got)
	}
	// No temporary file left: grid directory (the store's sweep), uploads (the import's own).
	for _, d := range []string{filepath.Join(dir, "grids"), uploads} {
		ents, _ := os.ReadDir(d)
		for _, e := range ents {
			n := e.Name()
			if strings.Contains(n, "tmp") || strings.HasPrefix(n, "upload-") {
				t.Errorf("left in %s: %s", d, n)
			}
		}
	}
}

// On a shared PostGIS queue a job running in a live process is left alone by another process's
// rescue, however long it runs past Options.OwnerGone: its process keeps beating.
func TestLiveOwnersJobsNotRescued(t *testing.T) {
	ctx := context.Background()
	st := testStore(t, store.BackendPostGIS)
	release := make(chan struct{})
	started := make(chan struct{}, 1)
	h := jobs.Handlers{Export: func(ctx context.Context, a jobs.ExportArgs, p jobs.Progress) (any, error) {
		started <- struct{}{}
		<-release
		return "done", nil
	}}
	opts := Options{Workers: 1, PollInterval: 100 * time.Millisecond, HeartbeatEvery: 100 * time.Millisecond, OwnerGone: time.Second}
	q1 := testQueue(t, st, h, 0)
	q1o, err := Open(ctx, st, h, opts)
	if err != nil {
		t.Fatal(err)
	}
	q1.Close()
	q1 = q1o
	if err := q1.Start(ctx); err != nil {
		t.Fatal(err)
	}
	defer q1.Stop(ctx)
	id, err := q1.EnqueueExport(ctx, jobs.ExportArgs{Request: []byte(`{}`), Path: "x"})
	if err != nil {
		t.Fatal(err)
	}
	<-started
	q2, err := Open(ctx, st, jobs.Handlers{}, opts) // a second replica, idle
	if err != nil {
		t.Fatal(err)
	}
	if err := q2.Start(ctx); err != nil {
		t.Fatal(err)
	}
	defer q2.Stop(ctx)
	time.Sleep(2500 * time.Millisecond) // 2.5 × OwnerGone
	st1, err := q2.Get(ctx, id)
	if err != nil || st1.State != jobs.StateRunning || len(st1.Errors) != 0 {
		t.Fatalf("the live process's job after 2.5 × OwnerGone: %+v %v", st1, err)
	}
	close(release)
	waitState(t, q1, id, jobs.StateSucceeded)
}
