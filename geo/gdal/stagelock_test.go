package gdal

import (
	"os"
	"os/exec"
	"path/filepath"
	"syscall"
	"testing"
	"time"

	"ridgeflank/geo"
)

// stageChildEnv makes the test binary a process that starts a COGStream in the named directory,
// writes one block, prints "staged" and waits to be killed.
const stageChildEnv = "RIDGEFLANK_TEST_STAGE_CHILD"

func TestMain(m *testing.M) {
	if dir := os.Getenv(stageChildEnv); dir != "" {
		g := geo.Grid{NX: 64, NY: 32, DX: 0.1, DY: 0.1, West: 0.05, North: 10}
		st, err := NewCOGStream(g, StreamOptions{StageDir: dir})
		if err != nil {
			os.Stderr.WriteString(err.Error())
			os.Exit(3)
		}
		if err := st.WriteRows(0, make([]float32, min(st.BlockRows(), g.NY)*g.NX)); err != nil {
			os.Stderr.WriteString(err.Error())
			os.Exit(3)
		}
		os.Stdout.WriteString("staged\n")
		time.Sleep(time.Minute)
		os.Exit(0)
	}
	os.Exit(m.Run())
}

func stageFiles(t *testing.T, dir string) []string {
	t.Helper()
	m, err := filepath.Glob(filepath.Join(dir, "ridgeflank-stage-*"))
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// A staging file stays while its stream is open (in this process or another) and goes once its
// writer is gone, killed with SIGKILL (no clean-up code runs).
func TestSweepStaging(t *testing.T) {
	dir := t.TempDir()
	g := geo.Grid{NX: 64, NY: 32, DX: 0.1, DY: 0.1, West: 0.05, North: 10}

	t.Run("open stream in this process is kept", func(t *testing.T) {
		st, err := NewCOGStream(g, StreamOptions{StageDir: dir})
		if err != nil {
			t.Fatal(err)
		}
		defer st.Close()
		if n, err := SweepStaging(dir); err != nil || n != 0 {
			t.Fatalf("sweep during a stream: removed %d, err %v", n, err)
		}
		if len(stageFiles(t, dir)) < 2 {
			t.Fatalf("staging file or its lock missing: %v", stageFiles(t, dir))
		}
		st.Close()
		if left := stageFiles(t, dir); len(left) != 0 {
			t.Fatalf("Close left %v", left)
		}
	})

	t.Run("stream of a killed process is removed", func(t *testing.T) {
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), stageChildEnv+"="+dir)
		out, err := cmd.StdoutPipe()
		if err != nil {
			t.Fatal(err)
		}
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		buf := make([]byte, 7)
		if _, err := out.Read(buf); err != nil || string(buf) != "staged\n" {
			cmd.Process.Kill()
			t.Fatalf("child: %q %v", buf, err)
		}
		if n, err := SweepStaging(dir); err != nil || n != 0 {
			t.Fatalf("sweep while the child writes: removed %d, err %v", n, err)
		}
		if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
			t.Fatal(err)
		}
		cmd.Wait()
		if len(stageFiles(t, dir)) == 0 {
			t.Fatal("the killed child left nothing to sweep: the test proves nothing")
		}
		if n, err := SweepStaging(dir); err != nil || n != 1 {
			t.Fatalf("sweep after SIGKILL: removed %d, err %v", n, err)
		}
		if left := stageFiles(t, dir); len(left) != 0 {
			t.Fatalf("left after the sweep: %v", left)
		}
	})

	t.Run("a new stream sweeps what a dead writer left beside it", func(t *testing.T) {
		dead := filepath.Join(dir, "ridgeflank-stage-999.tif")
		for _, p := range []string{dead, dead + ".lock", dead + ".aux.xml"} {
			if err := os.WriteFile(p, []byte("x"), 0o600); err != nil {
				t.Fatal(err)
			}
		}
		st, err := NewCOGStream(g, StreamOptions{StageDir: dir})
		if err != nil {
			t.Fatal(err)
		}
		defer st.Close()
		for _, p := range []string{dead, dead + ".lock", dead + ".aux.xml"} {
			if _, err := os.Stat(p); err == nil {
				t.Errorf("%s left by a dead writer is still there", filepath.Base(p))
			}
		}
	})

	t.Run("lockless file: kept when recent, removed after a day", func(t *testing.T) {
		p := filepath.Join(dir, "ridgeflank-stage-123.tif")
		if err := os.WriteFile(p, []byte("x"), 0o600); err != nil {
			t.Fatal(err)
		}
		if n, _ := SweepStaging(dir); n != 0 {
			t.Fatal("a fresh lockless staging file was removed")
		}
		old := time.Now().Add(-25 * time.Hour)
		os.Chtimes(p, old, old)
		if n, err := SweepStaging(dir); err != nil || n != 1 {
			t.Fatalf("old lockless file: removed %d, err %v", n, err)
		}
	})

	t.Run("other files are not touched", func(t *testing.T) {
		p := filepath.Join(dir, "unrelated.tif")
		os.WriteFile(p, []byte("x"), 0o600)
		old := time.Now().Add(-48 * time.Hour)
		os.Chtimes(p, old, old)
		SweepStaging(dir)
		if _, err := os.Stat(p); err != nil {
			t.Fatal("SweepStaging removed a file that is not its own")
		}
	})
}
