package store_test

import (
	"bufio"
	"context"
	"fmt"
	"log/slog"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/paulmach/orb"

	"ridgeflank/store"
	"ridgeflank/store/pgtest"
	_ "ridgeflank/store/postgis" // the backends the test opens
	_ "ridgeflank/store/sqlite"
)

// killWriterEnv makes the test binary a region writer (TestMain-free: the writer is this test
// run again with the variable set): it opens the store named by the other variables, writes
// regions one after another and prints each id once CreateRegion has returned, until killed.
const killWriterEnv = "RIDGEFLANK_TEST_REGION_WRITER"

// A process killed with SIGKILL while writing regions loses none it acknowledged and leaves
// the store readable, with no half-written region (every region read back whole), on the
// embedded store (SQLite in WAL mode) and on PostGIS. The writer acknowledges a region by
// printing its id after CreateRegion returned; the parent kills it after about 40
// acknowledgements, mid-stream, then reopens the store.
func TestKillDuringRegionWrites(t *testing.T) {
	if os.Getenv(killWriterEnv) != "" {
		regionWriter(t)
		return
	}
	if testing.Short() {
		t.Skip("starts child processes: not in -short")
	}
	for _, backend := range []string{store.BackendSQLite, store.BackendPostGIS} {
		t.Run(backend, func(t *testing.T) {
			cfg := store.Config{DataDir: t.TempDir(), Logger: slog.New(slog.DiscardHandler)}
			if backend == store.BackendPostGIS {
				cfg.DatabaseURL = pgtest.NewDB(t)
			}
			cmd := exec.Command(os.Args[0], "-test.run", "^TestKillDuringRegionWrites$", "-test.v")
			cmd.Env = append(os.Environ(), killWriterEnv+"=1", "RIDGEFLANK_TEST_DATA_DIR="+cfg.DataDir, "RIDGEFLANK_TEST_DATABASE_URL="+cfg.DatabaseURL)
			out, err := cmd.StdoutPipe()
			if err != nil {
				t.Fatal(err)
			}
			cmd.Stderr = os.Stderr
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			var acked []string
			sc := bufio.NewScanner(out)
			deadline := time.Now().Add(60 * time.Second)
			for sc.Scan() && len(acked) < 40 && time.Now().Before(deadline) {
				if id, ok := strings.CutPrefix(sc.Text(), "acked "); ok {
					acked = append(acked, id)
				}
			}
			if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
				t.Fatal(err)
			}
			for sc.Scan() { // acknowledgements printed before the kill landed
				if id, ok := strings.CutPrefix(sc.Text(), "acked "); ok {
					acked = append(acked, id)
				}
			}
			_ = cmd.Wait()
			if len(acked) < 10 {
				t.Fatalf("the writer acknowledged only %d regions before the deadline", len(acked))
			}
			st, err := store.Open(context.Background(), cfg)
			if err != nil {
				t.Fatalf("reopening after the kill: %v", err)
			}
			defer st.Close()
			ctx := context.Background()
			for _, id := range acked {
				r, err := st.GetRegion(ctx, id)
				if err != nil {
					t.Fatalf("acknowledged region %s lost: %v", id, err)
				}
				if len(r.Geometry) != 1 || len(r.Geometry[0][0]) != 5 || len(r.Tags) != 2 {
					t.Fatalf("region %s read back incomplete: %+v", id, r)
				}
			}
			all, err := st.ListRegions(ctx, store.RegionFilter{})
			if err != nil {
				t.Fatal(err)
			}
			for _, r := range all {
				if len(r.Geometry) != 1 || len(r.Tags) != 2 {
					t.Fatalf("region %s (not acknowledged, committed at the kill) is incomplete: %+v", r.ID, r)
				}
			}
			t.Logf("%d acknowledged, %d stored after SIGKILL", len(acked), len(all))
		})
	}
}

// regionWriter is the child process of TestKillDuringRegionWrites.
func regionWriter(t *testing.T) {
	cfg := store.Config{DataDir: os.Getenv("RIDGEFLANK_TEST_DATA_DIR"), DatabaseURL: os.Getenv("RIDGEFLANK_TEST_DATABASE_URL"),
		Logger: slog.New(slog.DiscardHandler)}
	st, err := store.Open(context.Background(), cfg)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriter(os.Stdout)
	for i := 0; ; i++ {
		x := float64(i%300) - 150
		ring := orb.Ring{{x, -10}, {x + 0.5, -10}, {x + 0.5, -9.5}, {x, -9.5}, {x, -10}}
		r, err := st.CreateRegion(context.Background(), store.Region{Name: fmt.Sprintf("kill test %d (SYNTHETIC)", i),
			Tags: []string{"kill-test", filepath.Base(cfg.DataDir)}, Geometry: orb.MultiPolygon{{ring}}})
		if err != nil {
			t.Fatal(err)
		}
		fmt.Fprintf(w, "acked %s\n", r.ID)
		w.Flush()
	}
}
