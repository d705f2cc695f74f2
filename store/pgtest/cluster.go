package pgtest

import (
	"context"
	"fmt"
	"net"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"
)

// Cluster is a private PostgreSQL server for one test: its own data directory under
// t.TempDir(), its own port on 127.0.0.1 and its own socket directory, so that a test may stop
// and start it (for fault tests) without touching the machine's shared server that other
// packages' tests use at the same time. It is stopped when the test ends.
//
// As root, the server's programs run as the OS user postgres (runuser), which owns the data
// directory; initdb refuses to run as root.
type Cluster struct {
	t       testing.TB
	bin     string // directory holding initdb, pg_ctl and postgres
	dir     string // owned by the server's user: data/, sock/, server.log
	port    int
	runAs   string // OS user to run the server's programs as ("" = the current user)
	running bool
}

// NewCluster creates a private cluster (initdb with trust authentication for local
// connections), starts it, and creates the database "ridgeflank" with the postgis extension.
// The test is skipped, with the reason, when no initdb is installed (see FindBinDir); any other
// failure fails it.
func NewCluster(t testing.TB) *Cluster {
	t.Helper()
	bin, err := FindBinDir()
	if err != nil {
		t.Skipf("pgtest: no private PostgreSQL cluster: %v", err)
	}
	c := &Cluster{t: t, bin: bin}
	base := t.TempDir()
	c.dir = filepath.Join(base, "pg")
	for _, d := range []string{c.dir, filepath.Join(c.dir, "sock")} {
		if err := os.MkdirAll(d, 0o700); err != nil {
			t.Fatalf("pgtest: %v", err)
		}
	}
	if os.Geteuid() == 0 {
		if err := c.handToPostgres(base); err != nil {
			t.Fatalf("pgtest: %v", err)
		}
	}
	if out, err := c.run(filepath.Join(bin, "initdb"), "-D", c.dataDir(), "-U", "postgres", "-A", "trust",
		"-E", "UTF8", "--locale=C", "--no-sync"); err != nil {
		t.Fatalf("pgtest: initdb: %v\n%s", err, out)
	}
	if c.port, err = freePort(); err != nil {
		t.Fatalf("pgtest: %v", err)
	}
	t.Cleanup(func() {
		if c.running {
			_ = c.Stop()
		}
	})
	if err := c.Start(); err != nil {
		t.Fatalf("pgtest: %v", err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	conn, err := connect(ctx, c.AdminURL())
	if err != nil {
		t.Fatalf("pgtest: connecting to the private cluster: %v", err)
	}
	defer conn.Close(context.Background())
	if _, err := conn.Exec(ctx, "CREATE DATABASE ridgeflank"); err != nil {
		t.Fatalf("pgtest: %v", err)
	}
	db, err := connect(ctx, c.URL())
	if err != nil {
		t.Fatalf("pgtest: %v", err)
	}
	defer db.Close(context.Background())
	if _, err := db.Exec(ctx, "CREATE EXTENSION postgis"); err != nil {
		t.Fatalf("pgtest: CREATE EXTENSION postgis in the private cluster (is the postgis package of %s installed?): %v", bin, err)
	}
	return c
}

// FindBinDir returns the directory of the newest installed PostgreSQL server programs that has
// initdb: /usr/lib/postgresql/<major>/bin (Debian's layout), else the directory of an initdb on
// PATH. It fails when there is none.
func FindBinDir() (string, error) {
	matches, _ := filepath.Glob("/usr/lib/postgresql/*/bin/initdb")
	sort.Slice(matches, func(i, j int) bool { return majorOf(matches[i]) > majorOf(matches[j]) })
	if len(matches) > 0 {
		return filepath.Dir(matches[0]), nil
	}
	if p, err := exec.LookPath("initdb"); err == nil {
		return filepath.Dir(p), nil
	}
	return "", fmt.Errorf("initdb is not installed (neither /usr/lib/postgresql/*/bin/initdb nor initdb on PATH; on Debian: apt-get install postgresql-15 postgresql-15-postgis-3)")
}

func majorOf(initdb string) int {
	n, _ := strconv.Atoi(filepath.Base(filepath.Dir(filepath.Dir(initdb))))
	return n
}

// Port is the cluster's TCP port on 127.0.0.1.
func (c *Cluster) Port() int { return c.port }

// AdminURL is the URL of the cluster's database "postgres" as the superuser postgres.
func (c *Cluster) AdminURL() string {
	return fmt.Sprintf("postgres://postgres@127.0.0.1:%d/postgres?sslmode=disable", c.port)
}

// URL is the URL of the database "ridgeflank" (with postgis) as the superuser postgres.
func (c *Cluster) URL() string {
	return fmt.Sprintf("postgres://postgres@127.0.0.1:%d/ridgeflank?sslmode=disable", c.port)
}

// Start starts the server (pg_ctl start, waiting until it accepts connections).
func (c *Cluster) Start() error {
	opts := fmt.Sprintf("-p %d -k %s -c listen_addresses=127.0.0.1", c.port, filepath.Join(c.dir, "sock"))
	out, err := c.run(filepath.Join(c.bin, "pg_ctl"), "start", "-D", c.dataDir(), "-w", "-t", "60",
		"-l", filepath.Join(c.dir, "server.log"), "-o", opts)
	if err != nil {
		return fmt.Errorf("pg_ctl start: %v\n%s\n%s", err, out, c.Log())
	}
	c.running = true
	return nil
}

// Stop stops the server at once (pg_ctl stop -m immediate: every backend ends without a
// checkpoint, as in a crash; the next start recovers from the WAL).
func (c *Cluster) Stop() error {
	out, err := c.run(filepath.Join(c.bin, "pg_ctl"), "stop", "-D", c.dataDir(), "-m", "immediate", "-w", "-t", "60")
	if err != nil {
		return fmt.Errorf("pg_ctl stop: %v\n%s", err, out)
	}
	c.running = false
	return nil
}

// Log returns the server's log so far (for failure messages).
func (c *Cluster) Log() string {
	b, _ := os.ReadFile(filepath.Join(c.dir, "server.log"))
	return string(b)
}

func (c *Cluster) dataDir() string { return filepath.Join(c.dir, "data") }

// handToPostgres lets the OS user postgres reach and own the cluster directory: the test's
// temporary directories are root's with mode 0700, so they get search permission (0711) only.
func (c *Cluster) handToPostgres(base string) error {
	u, err := user.Lookup("postgres")
	if err != nil {
		return fmt.Errorf("running as root needs the OS user postgres for the server: %w", err)
	}
	uid, _ := strconv.Atoi(u.Uid)
	gid, _ := strconv.Atoi(u.Gid)
	for d := base; d != "/" && d != "."; d = filepath.Dir(d) {
		st, err := os.Stat(d)
		if err != nil {
			return err
		}
		if st.Mode().Perm()&0o001 == 0 {
			if err := os.Chmod(d, st.Mode().Perm()|0o011); err != nil {
				return err
			}
		}
		if d == os.TempDir() {
			break
		}
	}
	err = filepath.Walk(c.dir, func(p string, _ os.FileInfo, err error) error {
		if err != nil {
			return err
		}
		return os.Chown(p, uid, gid)
	})
	if err != nil {
		return err
	}
	c.runAs = "postgres"
	return nil
}

func (c *Cluster) run(prog string, args ...string) (string, error) {
	var cmd *exec.Cmd
	if c.runAs != "" {
		cmd = exec.Command("runuser", append([]string{"-u", c.runAs, "--", prog}, args...)...)
	} else {
		cmd = exec.Command(prog, args...)
	}
	cmd.Dir = c.dir
	cmd.Env = append(os.Environ(), "LC_ALL=C")
	out, err := cmd.CombinedOutput()
	return strings.TrimSpace(string(out)), err
}

// freePort returns a TCP port on 127.0.0.1 that was free a moment ago.
func freePort() (int, error) {
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		return 0, err
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port, nil
}
