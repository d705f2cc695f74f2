package pgtest

import (
	"context"
	"runtime"
	"testing"
)

func TestWithDatabase(t *testing.T) {
	cases := []struct{ in, want string }{
		{"postgres://postgres@127.0.0.1:5432/postgres?sslmode=disable", "postgres://postgres@127.0.0.1:5432/x?sslmode=disable"},
		{"postgresql://u:p@h/db", "postgresql://u:p@h/x"},
		{"host=db.example user=u", "host=db.example user=u dbname=x"},
	}
	for _, c := range cases {
		got, err := WithDatabase(c.in, "x")
		if err != nil || got != c.want {
			t.Errorf("WithDatabase(%q) = %q, %v; want %q", c.in, got, err, c.want)
		}
	}
	if got := redact("postgres://u:secret@h/db"); got != "postgres://u:xxxxx@h/db" {
		t.Errorf("redact = %q", got)
	}
}

// recorder stands in for *testing.T to observe Skipf/Fatalf without ending the real test.
type recorder struct {
	testing.TB
	skipped, failed bool
}

func (r *recorder) Helper()              {}
func (r *recorder) Skipf(string, ...any) { r.skipped = true; runtime.Goexit() }
func (r *recorder) Fatalf(string, ...any) {
	r.failed = true
	runtime.Goexit()
}

func runNewDB(tb testing.TB) {
	done := make(chan struct{})
	go func() {
		defer close(done)
		NewDB(tb)
	}()
	<-done
}

// An unreachable server skips the test, unless CI is set: then it fails.
func TestUnreachableServer(t *testing.T) {
	t.Setenv("DATABASE_URL", "postgres://postgres@127.0.0.1:1/postgres?sslmode=disable&connect_timeout=2")
	t.Setenv("CI", "")
	r := &recorder{TB: t}
	runNewDB(r)
	if !r.skipped || r.failed {
		t.Fatalf("without CI: skipped=%v failed=%v; want a skip", r.skipped, r.failed)
	}
	t.Setenv("CI", "true")
	r = &recorder{TB: t}
	runNewDB(r)
	if r.skipped || !r.failed {
		t.Fatalf("with CI: skipped=%v failed=%v; want a failure", r.skipped, r.failed)
	}
}

func TestNewDBIsEmptyWithPostGIS(t *testing.T) {
	url := NewDB(t)
	if url == AdminURL() {
		t.Fatal("NewDB returned the admin database")
	}
	ctx := context.Background()
	c, err := connect(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close(ctx)
	var postgis, tables int
	if err := c.QueryRow(ctx, `SELECT count(*) FROM pg_extension WHERE extname = 'postgis'`).Scan(&postgis); err != nil {
		t.Fatal(err)
	}
	if err := c.QueryRow(ctx, `SELECT count(*) FROM information_schema.tables WHERE table_schema = 'public' AND table_type = 'BASE TABLE' AND table_name <> 'spatial_ref_sys'`).Scan(&tables); err != nil {
		t.Fatal(err)
	}
	if postgis != 1 || tables != 0 {
		t.Fatalf("new database: postgis extension %d, other tables %d; want 1 and 0", postgis, tables)
	}
}

// A private cluster answers, stops (connections then fail) and starts again with its data.
func TestClusterStopStart(t *testing.T) {
	c := NewCluster(t)
	ctx := context.Background()
	conn, err := connect(ctx, c.URL())
	if err != nil {
		t.Fatal(err)
	}
	if _, err := conn.Exec(ctx, `CREATE TABLE kept (v int); INSERT INTO kept VALUES (42)`); err != nil {
		t.Fatal(err)
	}
	conn.Close(ctx)
	if err := c.Stop(); err != nil {
		t.Fatal(err)
	}
	if c, err := connect(ctx, c.URL()); err == nil {
		c.Close(ctx)
		t.Fatal("connected to a stopped cluster")
	}
	if err := c.Start(); err != nil {
		t.Fatal(err)
	}
	conn, err = connect(ctx, c.URL())
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	var v, postgis int
	if err := conn.QueryRow(ctx, `SELECT v, (SELECT count(*) FROM pg_extension WHERE extname = 'postgis') FROM kept`).Scan(&v, &postgis); err != nil {
		t.Fatal(err)
	}
	if v != 42 || postgis != 1 {
		t.Fatalf("after restart: kept %d, postgis %d; want 42 and 1", v, postgis)
	}
}
