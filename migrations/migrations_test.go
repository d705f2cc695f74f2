package migrations_test

import (
	"context"
	"database/sql"
	"io/fs"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	_ "github.com/jackc/pgx/v5/stdlib" // the "pgx" database/sql driver
	_ "modernc.org/sqlite"             // the "sqlite" database/sql driver

	"ridgeflank/migrations"
	"ridgeflank/store/pgtest"
)

// Both dialects must carry the same versions, so a schema version means the same thing
// whichever backend runs it.
func TestDialectsHaveTheSameVersions(t *testing.T) {
	names := map[migrations.Dialect][]string{}
	for _, d := range []migrations.Dialect{migrations.Postgres, migrations.SQLite} {
		fsys, err := migrations.FS(d)
		if err != nil {
			t.Fatal(err)
		}
		files, err := fs.Glob(fsys, "*.sql")
		if err != nil || len(files) == 0 {
			t.Fatalf("%s: no migrations (%v)", d, err)
		}
		for _, f := range files {
			b, _ := fs.ReadFile(fsys, f)
			if !strings.Contains(string(b), "-- +goose Up") || !strings.Contains(string(b), "-- +goose Down") {
				t.Errorf("%s/%s lacks an Up or a Down section", d, f)
			}
		}
		names[d] = files
	}
	if !slices.Equal(names[migrations.Postgres], names[migrations.SQLite]) {
		t.Fatalf("postgres %v vs sqlite %v", names[migrations.Postgres], names[migrations.SQLite])
	}
	if _, err := migrations.FS("oracle"); err == nil {
		t.Fatal("unknown dialect accepted")
	}
}

// upDownUp applies every migration, rolls all back, and applies them again.
func upDownUp(t *testing.T, d migrations.Dialect, db *sql.DB, tables func() []string) {
	ctx := context.Background()
	p, err := migrations.NewProvider(d, db)
	if err != nil {
		t.Fatal(err)
	}
	res, err := p.Up(ctx)
	if err != nil || len(res) == 0 {
		t.Fatalf("up: %v, %v", res, err)
	}
	got := tables()
	for _, want := range []string{"regions", "grids", "datasets", "tracks", "plans", "custom_models", "api_tokens", "store_meta"} {
		if !slices.Contains(got, want) {
			t.Fatalf("after up, table %s missing from %v", want, got)
		}
	}
	if pending, err := p.HasPending(ctx); err != nil || pending {
		t.Fatalf("HasPending after up = %v, %v", pending, err)
	}
	if _, err := p.DownTo(ctx, 0); err != nil {
		t.Fatalf("down: %v", err)
	}
	for _, tbl := range tables() {
		if tbl != migrations.TableName && !strings.HasPrefix(tbl, "spatial_ref_sys") {
			t.Fatalf("after down, table %s is left", tbl)
		}
	}
	if _, err := p.Up(ctx); err != nil {
		t.Fatalf("up again: %v", err)
	}
}

func TestSQLiteUpDownUp(t *testing.T) {
	db, err := sql.Open("sqlite", filepath.Join(t.TempDir(), "m.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	upDownUp(t, migrations.SQLite, db, func() []string {
		return queryStrings(t, db, `SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' AND name NOT LIKE 'regions_rtree_%'`)
	})
}

func TestPostgresUpDownUp(t *testing.T) {
	db, err := sql.Open("pgx", pgtest.NewDB(t))
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	upDownUp(t, migrations.Postgres, db, func() []string {
		return queryStrings(t, db, `SELECT table_name FROM information_schema.tables WHERE table_schema = 'public' AND table_type = 'BASE TABLE'`)
	})
}

func queryStrings(t *testing.T, db *sql.DB, q string) []string {
	t.Helper()
	rows, err := db.Query(q)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			t.Fatal(err)
		}
		out = append(out, s)
	}
	return out
}
